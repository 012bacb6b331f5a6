import { describe, expect, test } from 'vitest';
import { IntegerAccumulator, runQuantiles } from '../../workers/core/zonal/index.js';
import { unitRunQuantiles } from '../../workers/core/zonal/quantile.js';

/**
 * Histograms that share one buffer and scan only the bins they touched
 * (trackRange) must give the statistics of a full 2^16-bin scan bit for bit,
 * and the NumPy figures of zonal-accumulators.test.ts.
 */

/** MINSTD generator (Park & Miller 1988), as in zonal-accumulators.test.ts. */
function minstd(seed: number, n: number): number[] {
  const out: number[] = [];
  let x = seed;
  for (let i = 0; i < n; i++) {
    x = (x * 48271) % 2147483647;
    out.push(x);
  }
  return out;
}

// Reference: numpy 1.24.2 (Debian, /usr/bin/python3) at authoring time, same data as
// zonal-accumulators.test.ts: d = np.array([14000 + (y % 2000) for y in minstd(777, 2001)])
// d.mean() 15003.5652173913, d.std() 575.158533102366, np.percentile(d, [10, 50, 90]) [14189, 15013, 15805]
const dns = minstd(777, 2001).map((y) => 14000 + (y % 2000));

describe('range-tracked histograms in a shared buffer', () => {
  test('direct increments + widen give NumPy mean / std / percentiles and equal a full scan exactly', () => {
    const pool = new Uint32Array(3 * 65536);
    const tracked = new IntegerAccumulator({ bits: 16, signed: false }, { counts: pool.subarray(65536, 131072), trackRange: true });
    const full = new IntegerAccumulator({ bits: 16, signed: false });
    // a neighbour in the same buffer must not leak into this histogram
    const neighbour = new IntegerAccumulator({ bits: 16, signed: false }, { counts: pool.subarray(0, 65536), trackRange: true });
    neighbour.add(60000);
    // a hot loop's way: bump counts, then report the bins it touched in two batches
    for (const [from, to] of [[0, 1000], [1000, dns.length]]) {
      let lo = Infinity, hi = -Infinity;
      for (const d of dns.slice(from, to)) { tracked.counts[d]++; lo = Math.min(lo, d); hi = Math.max(hi, d); }
      tracked.widen(lo, hi);
    }
    for (const d of dns) full.add(d);
    const a = tracked.summarize()!;
    expect(a.mean).toBeCloseTo(15003.5652173913, 9); // numpy mean
    expect(a.std).toBeCloseTo(575.158533102366, 9); // numpy std, ddof 0
    expect([a.p10, a.median, a.p90]).toEqual([14189, 15013, 15805]); // numpy percentile (linear)
    for (const [scale, offset] of [[1, 0], [0.00341802, 149], [-0.01, 400]]) {
      expect(tracked.summarize(scale, offset)).toEqual(full.summarize(scale, offset));
    }
    expect(tracked.count).toBe(2001);
    expect(tracked.quantiles([0.25, 0.75])).toEqual(full.quantiles([0.25, 0.75]));
    expect(neighbour.count).toBe(1);
    expect(neighbour.summarize()!.min).toBe(60000);
  });

  test('an untouched tracked histogram summarises to null; reset clears only its own range', () => {
    const pool = new Uint32Array(2 * 256);
    const a = new IntegerAccumulator({ bits: 8, signed: true }, { counts: pool.subarray(0, 256), trackRange: true });
    const b = new IntegerAccumulator({ bits: 8, signed: true }, { counts: pool.subarray(256), trackRange: true });
    expect(a.summarize()).toBeNull();
    a.add(-128); a.add(127); b.add(5);
    expect(a.summarize()!.min).toBe(-128); // bin 0 and bin 255: the whole signed range
    expect(a.summarize()!.max).toBe(127);
    a.reset();
    expect(a.summarize()).toBeNull();
    expect(b.count).toBe(1);
    expect(() => new IntegerAccumulator({ bits: 16, signed: false }, { counts: new Uint32Array(10) })).toThrow(/10 bins/);
  });
});

describe('runQuantiles settles several probabilities in one walk', () => {
  test('unit weights: type 7 of x = 1..10 in any order of ps (Hyndman & Fan 1996; numpy.percentile linear)', () => {
    const v = Float64Array.from({ length: 10 }, (_, i) => i + 1), one = new Float64Array(10).fill(1);
    // numpy.percentile(np.arange(1, 11), [90, 25, 50, 0, 100]) -> 9.1, 3.25, 5.5, 1, 10
    const q = runQuantiles(v, one, one, 10, [0.9, 0.25, 0.5, 0, 1]);
    expect(q[0]).toBeCloseTo(9.1, 12);
    expect(q.slice(1)).toEqual([3.25, 5.5, 1, 10]);
    expect(runQuantiles(v, one, one, 10, [NaN, 0.25])).toEqual([10, 3.25]); // NaN never settles: the last value, as before
  });

  /**
   * The definition in quantile.ts's comment, one probability at a time (derived from
   * A_j = S_(j-1) + w_j / 2, B_j = S_j - w_j / 2, t = A_1 + p (B_m - A_1)).
   */
  function reference(values: Float64Array, counts: Float64Array, weights: Float64Array, m: number, p: number): number {
    if (m === 1) return values[0];
    const half1 = weights[0] / counts[0] / 2;
    let total = 0;
    for (let j = 0; j < m; j++) total += weights[j];
    const t = p * (total - weights[m - 1] / counts[m - 1] / 2 - half1);
    let before = 0, prevB = 0;
    for (let j = 0; j < m; j++) {
      const half = weights[j] / counts[j] / 2;
      const A = before - half1 + half, S = before + weights[j], B = S - half - half1;
      if (t < A && j > 0) {
        const f = (t - prevB) / (A - prevB), d = values[j] - values[j - 1];
        return f >= 0.5 ? values[j] - d * (1 - f) : values[j - 1] + d * f; // NumPy's _lerp (from memory)
      }
      if (t <= B) return values[j];
      before = S;
      prevB = B;
    }
    return values[m - 1];
  }

  test('weighted runs: a batch of probabilities give the value of the definition for each, bit for bit', () => {
    let x = 99;
    const next = () => (x = (x * 48271) % 2147483647) / 2147483647; // MINSTD (Park & Miller 1988)
    for (let c = 0; c < 50; c++) {
      const m = 1 + Math.floor(next() * 30);
      const values = Float64Array.from({ length: m }, (_, j) => j * 0.5 + 280);
      const counts = Float64Array.from({ length: m }, () => 1 + Math.floor(next() * 5));
      const weights = counts.map((n) => n * (0.05 + next()));
      const ps = [next(), 0.9, 0.1, next(), 0.5, 0.5, 0, 1];
      const batch = runQuantiles(values, counts, weights, m, ps);
      ps.forEach((p, i) => expect(Object.is(batch[i], reference(values, counts, weights, m, p)), `case ${c}, p ${p}`).toBe(true));
    }
  });

  test('the whole-number walk for unit weights: NumPy type 7, and runQuantiles bit for bit', () => {
    // ties [3,1,4,1,5,9,2,6,5,3,5] as runs: numpy 1.24 np.percentile -> p10 1, p25 2.5, p50 4, p90 6 (as in zonal-accumulators.test.ts)
    const v = Float64Array.of(1, 2, 3, 4, 5, 6, 9), c = Uint32Array.of(2, 1, 2, 1, 3, 1, 1);
    expect(unitRunQuantiles(v, c, 7, [0.1, 0.25, 0.5, 0.9])).toEqual([1, 2.5, 4, 6]);
    let x = 4242;
    const next = () => (x = (x * 48271) % 2147483647) / 2147483647; // MINSTD (Park & Miller 1988)
    for (let k = 0; k < 200; k++) {
      const m = Math.floor(next() * 40);
      const values = Float64Array.from({ length: m }, (_, j) => 149 + (40000 + 3 * j) * 0.00341802);
      const counts = Uint32Array.from({ length: m }, () => 1 + Math.floor(next() * (next() < 0.5 ? 3 : 5000)));
      const asFloat = Float64Array.from(counts);
      const ps = [0.1, 0.5, 0.9, next(), 0, 1, NaN];
      const a = unitRunQuantiles(values, counts, m, ps), b = runQuantiles(values, asFloat, asFloat, m, ps);
      a.forEach((q, i) => expect(Object.is(q, b[i]), `case ${k}, p ${ps[i]}: ${q} vs ${b[i]}`).toBe(true));
    }
  });
});
