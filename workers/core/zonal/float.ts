/**
 * Statistics of floating-point values (or integers wider than 16 bits): the
 * values are kept in a growable Float64Array (reused across resets) and
 * sorted once for quantiles.
 */
import { runQuantiles, type7Sorted } from './quantile.js';
import type { ValueSummary } from './types.js';

/**
 * Buffer accumulator for values (already in their final unit, e.g. Kelvin).
 *
 * @example
 * const acc = new FloatAccumulator();
 * for (let i = 1; i <= 10; i++) acc.add(i);
 * acc.summarize()!.p90 // 9.1 (type 7)
 */
export class FloatAccumulator {
  private values: Float64Array;
  private weights: Float64Array | null;
  private n = 0;

  /**
   * @param options.capacity expected number of values (the buffer grows past it)
   * @param options.weighted keep a weight per value (coverage fractions)
   */
  constructor(options: { capacity?: number; weighted?: boolean } = {}) {
    const cap = Math.max(16, Math.floor(options.capacity ?? 1024));
    this.values = new Float64Array(cap);
    this.weights = options.weighted ? new Float64Array(cap) : null;
  }

  get count(): number {
    return this.n;
  }

  private grow(): void {
    const cap = this.values.length * 2;
    const v = new Float64Array(cap);
    v.set(this.values.subarray(0, this.n));
    this.values = v;
    if (this.weights !== null) {
      const w = new Float64Array(cap);
      w.set(this.weights.subarray(0, this.n));
      this.weights = w;
    }
  }

  /** Adds one value (weight 1). */
  add(value: number): void {
    if (this.n === this.values.length) this.grow();
    this.values[this.n] = value;
    if (this.weights !== null) this.weights[this.n] = 1;
    this.n++;
  }

  /** Adds one value with a weight > 0 (zero or negative weights are ignored). */
  addWeighted(value: number, weight: number): void {
    if (this.weights === null) throw new Error('this accumulator was made without weights');
    if (!(weight > 0)) return;
    if (this.n === this.values.length) this.grow();
    this.values[this.n] = value;
    this.weights[this.n] = weight;
    this.n++;
  }

  /** Forgets the values, keeping the buffers. */
  reset(): void {
    this.n = 0;
  }

  /**
   * Mean, population std (ddof 0), min, max and type-7 quantiles, or null
   * when empty. Moments by two passes: a compensated sum for the mean
   * (Neumaier 1974, ZAMM 54:39-51, citation from memory), then squared deviations
   * with the correction term of Chan, Golub & LeVeque (1983, "Algorithms for computing
   * the sample variance: analysis and recommendations", Am. Stat. 37:242-247, citation
   * from memory). Weighted: mean = sum(w x) / sum(w), var = sum(w (x - mean)^2) / sum(w)
   * (the definitions; common practice, no source); quantiles by runQuantiles.
   * Sorts the buffer in place (values added later are still counted).
   */
  summarize(): ValueSummary | null {
    const n = this.n;
    if (n === 0) return null;
    const x = this.values;
    const w = this.weights;
    // Pass 1: compensated sums.
    let s = 0, comp = 0, W = 0, wComp = 0;
    for (let i = 0; i < n; i++) {
      const wi = w === null ? 1 : w[i];
      const term = wi * x[i];
      const t = s + term;
      comp += Math.abs(s) >= Math.abs(term) ? (s - t) + term : (term - t) + s;
      s = t;
      const tw = W + wi;
      wComp += Math.abs(W) >= Math.abs(wi) ? (W - tw) + wi : (wi - tw) + W;
      W = tw;
    }
    W += wComp;
    const mean = (s + comp) / W;
    // Pass 2: deviations.
    let dev = 0, dev2 = 0, min = Infinity, max = -Infinity;
    for (let i = 0; i < n; i++) {
      const v = x[i];
      const wi = w === null ? 1 : w[i];
      const d = v - mean;
      dev += wi * d;
      dev2 += wi * d * d;
      if (v < min) min = v;
      if (v > max) max = v;
    }
    const variance = Math.max(0, (dev2 - (dev * dev) / W) / W);
    let p10: number, median: number, p90: number;
    if (w === null) {
      const sorted = x.subarray(0, n).sort();
      p10 = type7Sorted(sorted, n, 0.1);
      median = type7Sorted(sorted, n, 0.5);
      p90 = type7Sorted(sorted, n, 0.9);
    } else {
      [p10, median, p90] = this.weightedQuantiles([0.1, 0.5, 0.9]);
    }
    return { count: n, weightSum: W, mean, std: Math.sqrt(variance), min, max, p10, median, p90 };
  }

  /** Quantiles at probabilities ps: type 7, or its weighted generalisation (runQuantiles) when weighted. */
  quantiles(ps: readonly number[]): number[] {
    if (this.weights === null) {
      const sorted = this.values.subarray(0, this.n).sort();
      return ps.map((p) => type7Sorted(sorted, this.n, p));
    }
    return this.weightedQuantiles(ps);
  }

  private weightedQuantiles(ps: readonly number[]): number[] {
    const n = this.n, x = this.values, w = this.weights!;
    const order = new Uint32Array(n);
    for (let i = 0; i < n; i++) order[i] = i;
    order.sort((a, b) => x[a] - x[b]);
    // Collapse ties into runs (value, cells, weight sum).
    const values = new Float64Array(n), counts = new Float64Array(n), sums = new Float64Array(n);
    let m = 0;
    for (let k = 0; k < n; k++) {
      const i = order[k];
      if (m > 0 && values[m - 1] === x[i]) {
        counts[m - 1]++;
        sums[m - 1] += w[i];
      } else {
        values[m] = x[i]; counts[m] = 1; sums[m] = w[i]; m++;
      }
    }
    return runQuantiles(values, counts, sums, m, ps);
  }
}

