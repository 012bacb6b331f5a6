/**
 * Exact statistics of integer DNs (8- or 16-bit) from a full histogram: no
 * value is stored, so the cost per cell is one increment and the result does
 * not depend on the order cells arrive in.
 */
import { runQuantiles } from './quantile.js';
import type { ValueSummary } from './types.js';

/** The integer sample types a histogram covers. */
export interface IntegerKind {
  bits: 8 | 16;
  signed: boolean;
}

/**
 * Histogram accumulator for integer DNs.
 *
 * Bin of DN v is `v + bias` (bias 0 for unsigned, 2^(bits-1) for signed).
 * Hot loops may increment `counts` (and `weights`) directly by bin.
 *
 * @example
 * const acc = new IntegerAccumulator({ bits: 16, signed: false });
 * acc.add(15000); acc.add(15010);
 * acc.summarize(0.02, 0)!.mean // 300.1 K (MODIS LST scale 0.02)
 */
export class IntegerAccumulator {
  readonly bins: number;
  readonly bias: number;
  /** Cells per bin (a raster holds at most 2^31 cells, so 32 bits never overflow). */
  readonly counts: Uint32Array;
  /** Weight sum per bin, or null when unweighted. */
  readonly weights: Float64Array | null;

  constructor(kind: IntegerKind, options: { weighted?: boolean } = {}) {
    if (kind.bits !== 8 && kind.bits !== 16) throw new Error(`histogram accumulator covers 8- and 16-bit DNs, not ${kind.bits}-bit`);
    this.bins = 2 ** kind.bits;
    this.bias = kind.signed ? this.bins / 2 : 0;
    this.counts = new Uint32Array(this.bins);
    this.weights = options.weighted ? new Float64Array(this.bins) : null;
  }

  /** Smallest and largest DN the histogram holds. */
  get range(): [number, number] {
    return [-this.bias, this.bins - 1 - this.bias];
  }

  /** Adds one DN (weight 1). Throws for a DN outside the sample type. */
  add(dn: number): void {
    const b = dn + this.bias;
    if (!Number.isInteger(b) || b < 0 || b >= this.bins) throw new Error(`DN ${dn} is outside the ${this.bins}-bin histogram`);
    this.counts[b]++;
    if (this.weights !== null) this.weights[b] += 1;
  }

  /** Adds one DN with a weight > 0 (e.g. its coverage fraction). */
  addWeighted(dn: number, weight: number): void {
    const b = dn + this.bias;
    if (!Number.isInteger(b) || b < 0 || b >= this.bins) throw new Error(`DN ${dn} is outside the ${this.bins}-bin histogram`);
    if (this.weights === null) throw new Error('this accumulator was made without weights');
    if (!(weight > 0)) return;
    this.counts[b]++;
    this.weights[b] += weight;
  }

  /** Number of DNs added. */
  get count(): number {
    let n = 0;
    for (let b = 0; b < this.bins; b++) n += this.counts[b];
    return n;
  }

  /** Empties the histogram for reuse. */
  reset(): void {
    this.counts.fill(0);
    this.weights?.fill(0);
  }

  /**
   * Statistics of value = DN * scale + offset (e.g. Kelvin), or null when
   * nothing was added.
   *
   * Mean and variance come from the DN histogram by two passes over the bins
   * (the mean first, then squared deviations with the correction term of
   * Chan, Golub & LeVeque 1983), in DN, then scaled: mean * scale + offset,
   * std * |scale|. All equal DNs give std exactly 0. Quantiles are type 7
   * (weighted: see runQuantiles) taken in the order of the scaled values, so
   * a negative scale reverses the bin order.
   */
  summarize(scale = 1, offset = 0): ValueSummary | null {
    const { counts, bias, bins } = this;
    const weights = this.weights ?? counts;
    let first = -1, last = -1, n = 0, W = 0, sum = 0;
    for (let b = 0; b < bins; b++) {
      const c = counts[b];
      if (c === 0) continue;
      if (first < 0) first = b;
      last = b;
      n += c;
      W += weights[b];
      sum += weights[b] * (b - bias); // exact for unit weights below 2^53
    }
    if (n === 0) return null;
    const meanDn = sum / W;
    let dev = 0, dev2 = 0;
    for (let b = first; b <= last; b++) {
      const w = weights[b];
      if (counts[b] === 0) continue;
      const d = b - bias - meanDn;
      dev += w * d;
      dev2 += w * d * d;
    }
    const varDn = Math.max(0, (dev2 - (dev * dev) / W) / W);

    // Runs in ascending order of the scaled value.
    let m = 0;
    for (let b = first; b <= last; b++) if (counts[b] > 0) m++;
    const values = new Float64Array(m), runCounts = new Float64Array(m), runWeights = new Float64Array(m);
    let j = scale < 0 ? m - 1 : 0;
    const step = scale < 0 ? -1 : 1;
    for (let b = first; b <= last; b++) {
      if (counts[b] === 0) continue;
      values[j] = (b - bias) * scale + offset;
      runCounts[j] = counts[b];
      runWeights[j] = weights[b];
      j += step;
    }
    const [p10, median, p90] = runQuantiles(values, runCounts, runWeights, m, [0.1, 0.5, 0.9]);
    return {
      count: n,
      weightSum: W,
      mean: meanDn * scale + offset,
      std: Math.sqrt(varDn) * Math.abs(scale),
      min: values[0],
      max: values[m - 1],
      p10, median, p90,
    };
  }

  /** Quantiles of DN * scale + offset at probabilities ps (type 7; weighted generalisation when weighted). */
  quantiles(ps: readonly number[], scale = 1, offset = 0): number[] {
    const { counts, bias, bins } = this;
    const weights = this.weights ?? counts;
    const values: number[] = [], c: number[] = [], w: number[] = [];
    for (let b = 0; b < bins; b++) {
      if (counts[b] === 0) continue;
      values.push((b - bias) * scale + offset); c.push(counts[b]); w.push(weights[b]);
    }
    if (scale < 0) { values.reverse(); c.reverse(); w.reverse(); }
    return runQuantiles(values, c, w, values.length, ps);
  }
}
