import { describe, expect, test } from 'vitest';
import { FloatAccumulator, IntegerAccumulator, runQuantiles, type7Sorted } from '../../workers/core/zonal/index.js';

/** MINSTD generator (Park & Miller 1988), reproduced in Python for the reference values below. */
function minstd(seed: number, n: number): number[] {
  const out: number[] = [];
  let x = seed;
  for (let i = 0; i < n; i++) {
    x = (x * 48271) % 2147483647;
    out.push(x);
  }
  return out;
}

// Reference values: numpy 1.24.2 (Debian), computed with /usr/bin/python3 at authoring time:
//   def minstd(seed, n): x = seed; out = []
//       for _ in range(n): x = (x * 48271) % 2147483647; out.append(x)
//       return out
//   f = np.array([280 + (x % 100000) / 2500 for x in minstd(12345, 500)])
//   f.mean(), f.std(), np.percentile(f, [10, 50, 90]), f.min(), f.max()
//   d = np.array([14000 + (y % 2000) for y in minstd(777, 2001)])
//   d.mean(), d.std(), np.percentile(d, [10, 50, 90]); same for d * 0.02 and d * -0.01 + 400
const floats = minstd(12345, 500).map((x) => 280 + (x % 100000) / 2500);
const dns = minstd(777, 2001).map((y) => 14000 + (y % 2000));

describe('type-7 quantiles', () => {
  test('x = 1..10 -> 3.25 / 5.5 / 9.1 (derived from Hyndman & Fan 1996 type 7, h = (n - 1) p + 1; numpy.percentile linear)', () => {
    const x = Float64Array.from({ length: 10 }, (_, i) => i + 1);
    expect(type7Sorted(x, 10, 0.25)).toBe(3.25);
    expect(type7Sorted(x, 10, 0.5)).toBe(5.5);
    expect(type7Sorted(x, 10, 0.9)).toBeCloseTo(9.1, 12);
    const f = new FloatAccumulator();
    const h = new IntegerAccumulator({ bits: 16, signed: false });
    for (let i = 10; i >= 1; i--) { f.add(i); h.add(i); }
    expect(f.quantiles([0.25, 0.5, 0.9])).toEqual(h.quantiles([0.25, 0.5, 0.9]));
    expect(h.quantiles([0.25, 0.5, 0.9])[2]).toBeCloseTo(9.1, 12);
  });

  test('ties: [3,1,4,1,5,9,2,6,5,3,5] -> p10 1, p25 2.5, p50 4, p90 6 (numpy 1.24 np.percentile)', () => {
    const t = [3, 1, 4, 1, 5, 9, 2, 6, 5, 3, 5];
    const f = new FloatAccumulator();
    const h = new IntegerAccumulator({ bits: 8, signed: false });
    for (const v of t) { f.add(v); h.add(v); }
    expect(f.quantiles([0.1, 0.25, 0.5, 0.9])).toEqual([1, 2.5, 4, 6]);
    expect(h.quantiles([0.1, 0.25, 0.5, 0.9])).toEqual([1, 2.5, 4, 6]);
    const s = f.summarize()!;
    expect(s.mean).toBeCloseTo(4.0, 12); // numpy mean
    expect(s.std).toBeCloseTo(2.256304299271065, 12); // numpy std, ddof 0
  });

  test('500 pseudo-random floats match numpy mean / std (ddof 0) / percentiles', () => {
    const acc = new FloatAccumulator({ capacity: 16 }); // grows past capacity
    for (const v of floats) acc.add(v);
    const s = acc.summarize()!;
    expect(s.count).toBe(500);
    expect(s.mean).toBeCloseTo(299.922524, 10);
    expect(s.std).toBeCloseTo(11.0338869469496, 10);
    expect(s.p10).toBeCloseTo(284.17024, 10);
    expect(s.median).toBeCloseTo(300.046, 10);
    expect(s.p90).toBeCloseTo(314.96292, 10);
    expect(s.min).toBe(280.3076);
    expect(s.max).toBe(319.96);
  });

  test('2001 pseudo-random DNs match numpy, with positive and negative scale', () => {
    const acc = new IntegerAccumulator({ bits: 16, signed: false });
    for (const d of dns) acc.add(d);
    const raw = acc.summarize()!;
    expect(raw.mean).toBeCloseTo(15003.5652173913, 9);
    expect(raw.std).toBeCloseTo(575.158533102366, 9);
    expect([raw.p10, raw.median, raw.p90]).toEqual([14189, 15013, 15805]);
    const k = acc.summarize(0.02, 0)!;
    expect(k.mean).toBeCloseTo(300.071304347826, 10);
    expect(k.std).toBeCloseTo(11.5031706620473, 10);
    expect(k.p10).toBeCloseTo(283.78, 10);
    expect(k.median).toBeCloseTo(300.26, 10);
    expect(k.p90).toBeCloseTo(316.1, 10);
    const r = acc.summarize(-0.01, 400)!; // negative scale reverses the order
    expect(r.mean).toBeCloseTo(249.964347826087, 10);
    expect(r.std).toBeCloseTo(5.75158533102366, 10);
    expect(r.p10).toBeCloseTo(241.95, 10);
    expect(r.median).toBeCloseTo(249.87, 10);
    expect(r.p90).toBeCloseTo(258.11, 10);
    expect(r.min).toBeCloseTo(240.01, 10);
    expect(r.max).toBeCloseTo(260.0, 10);
  });
});

describe('integer and float paths agree', () => {
  for (const [scale, offset] of [[0.02, 0], [-0.01, 400], [0.00341802, 149]] as const) {
    test(`scale ${scale}, offset ${offset}`, () => {
      // Common practice, no source: the histogram and the value buffer are two
      // algorithms for one statistic; quantiles take identical arithmetic, so they match exactly.
      const h = new IntegerAccumulator({ bits: 16, signed: false });
      const f = new FloatAccumulator();
      for (const d of dns) { h.add(d); f.add(d * scale + offset); }
      const a = h.summarize(scale, offset)!, b = f.summarize()!;
      expect(a.count).toBe(b.count);
      expect(a.mean).toBeCloseTo(b.mean, 10);
      expect(a.std).toBeCloseTo(b.std, 10);
      expect([a.min, a.max, a.p10, a.median, a.p90]).toEqual([b.min, b.max, b.p10, b.median, b.p90]);
    });
  }

  test('signed 16-bit and 8-bit histograms', () => {
    const h = new IntegerAccumulator({ bits: 16, signed: true });
    const h8 = new IntegerAccumulator({ bits: 8, signed: true });
    const f = new FloatAccumulator();
    for (const y of minstd(99, 300)) {
      const v = (y % 250) - 125;
      h.add(v * 200); h8.add(v); f.add(v);
    }
    const a = h.summarize(1 / 200)!, b = h8.summarize()!, c = f.summarize()!;
    expect(a.median).toBe(c.median);
    expect(b.median).toBe(c.median);
    expect(b.p90).toBe(c.p90);
    expect(a.mean).toBeCloseTo(c.mean, 12);
    expect(b.std).toBeCloseTo(c.std, 12);
    expect(h8.range).toEqual([-128, 127]);
    expect(() => h8.add(128)).toThrow();
  });
});

describe('weighted statistics (coverage fractions)', () => {
  test('coverages 0.5, 0, 1, 0.25 on values 1..4 -> weight 1.75, mean 2.571 (derived from mean = sum c x / sum c)', () => {
    // Coverage-weighted zonal statistics: count = sum c_i, mean = sum c_i x_i / sum c_i
    // (common practice, no source); 4.5 / 1.75 = 2.571 (derived).
    const w = [0.5, 0, 1, 0.25];
    const f = new FloatAccumulator({ weighted: true });
    const h = new IntegerAccumulator({ bits: 8, signed: false }, { weighted: true });
    for (let i = 0; i < 4; i++) { f.addWeighted(i + 1, w[i]); h.addWeighted(i + 1, w[i]); }
    for (const s of [f.summarize()!, h.summarize()!]) {
      expect(s.count).toBe(3); // the zero-weight cell is not a cell of the zone
      expect(s.weightSum).toBe(1.75);
      expect(s.mean).toBeCloseTo(4.5 / 1.75, 12);
      // min/max ignore weights: any covered cell counts for the extremes (common practice, no source)
      expect(s.min).toBe(1);
      expect(s.max).toBe(4);
      // weighted population std: sqrt(sum w (x - m)^2 / sum w), derived from the definition
      const m = 4.5 / 1.75;
      expect(s.std).toBeCloseTo(Math.sqrt((0.5 * (1 - m) ** 2 + (3 - m) ** 2 + 0.25 * (4 - m) ** 2) / 1.75), 12);
    }
  });

  test('all weights 1 give type 7 exactly', () => {
    const f = new FloatAccumulator({ weighted: true });
    const h = new IntegerAccumulator({ bits: 16, signed: false }, { weighted: true });
    const plain = new FloatAccumulator();
    for (const d of dns) { f.addWeighted(d * 0.02, 1); h.addWeighted(d, 1); plain.add(d * 0.02); }
    const ps = [0, 0.1, 0.25, 0.5, 0.77, 0.9, 1];
    const want = plain.quantiles(ps);
    expect(f.quantiles(ps)).toEqual(want);
    expect(h.quantiles(ps, 0.02, 0)).toEqual(want);
    const t = new FloatAccumulator({ weighted: true });
    for (const v of [3, 1, 4, 1, 5, 9, 2, 6, 5, 3, 5]) t.addWeighted(v, 1);
    expect(t.quantiles([0.1, 0.25, 0.5, 0.9])).toEqual([1, 2.5, 4, 6]); // numpy, as above
  });

  test('weighted quantiles of [1,2,3] with weights [1,2,1] (derived from the definition in quantile.ts)', () => {
    // Weight midpoints 0.5, 2, 3.5 -> axis 0, 1.5, 3: p 0.25 -> t 0.75 -> 1.5; p 0.5 -> 2; p 0.9 -> t 2.7 -> 2.8.
    const q = runQuantiles([1, 2, 3], [1, 1, 1], [1, 2, 1], 3, [0.25, 0.5, 0.9]);
    expect(q[0]).toBeCloseTo(1.5, 12);
    expect(q[1]).toBe(2);
    expect(q[2]).toBeCloseTo(2.8, 12);
    // Symmetry: negated values at 1 - p.
    const r = runQuantiles([-3, -2, -1], [1, 1, 1], [1, 2, 1], 3, [0.75, 0.5, 0.1]);
    expect(r.map((v) => -v)).toEqual(q.map((v) => expect.closeTo(v, 12)));
  });

  test('weighted integer and float paths agree, and the order of tied cells does not matter', () => {
    const h = new IntegerAccumulator({ bits: 16, signed: false }, { weighted: true });
    const f = new FloatAccumulator({ weighted: true });
    const g = new FloatAccumulator({ weighted: true });
    const ws = minstd(4242, dns.length).map((x) => (x % 1000) / 1000 + 0.001);
    dns.forEach((d, i) => { h.addWeighted(d % 50, ws[i]); f.addWeighted((d % 50) * 0.5 + 250, ws[i]); });
    for (let i = dns.length - 1; i >= 0; i--) g.addWeighted((dns[i] % 50) * 0.5 + 250, ws[i]);
    const a = h.summarize(0.5, 250)!, b = f.summarize()!, c = g.summarize()!;
    expect(a.mean).toBeCloseTo(b.mean, 10);
    expect(a.std).toBeCloseTo(b.std, 10);
    expect(a.p10).toBeCloseTo(b.p10, 10);
    expect(a.median).toBeCloseTo(b.median, 10);
    expect(a.p90).toBeCloseTo(b.p90, 10);
    expect(c.p10).toBeCloseTo(b.p10, 10);
    expect(c.p90).toBeCloseTo(b.p90, 10);
  });
});

describe('histogram exactness', () => {
  test('30 million equal DNs of 65535 give std exactly 0 and the exact mean', () => {
    // Common practice, no source: a constant sample has zero variance; the
    // histogram sums 30e6 * 65535 = 1.96605e12 < 2^53 exactly.
    const acc = new IntegerAccumulator({ bits: 16, signed: false });
    for (let i = 0; i < 30_000_000; i++) acc.counts[65535]++;
    const s = acc.summarize(0.02, 0)!;
    expect(s.count).toBe(30_000_000);
    expect(s.std).toBe(0);
    expect(s.mean).toBe(65535 * 0.02); // 1310.7 K: MODIS DN 65535 (derived from LST = DN * 0.02, LP DAAC MOD11A1 V6.1 file attributes)
    expect(s.median).toBe(65535 * 0.02);
    expect(s.min).toBe(s.max);
  });

  test('empty accumulators summarise to null', () => {
    expect(new FloatAccumulator().summarize()).toBeNull();
    expect(new IntegerAccumulator({ bits: 16, signed: true }).summarize()).toBeNull();
  });

  test('reset empties an accumulator for reuse', () => {
    const f = new FloatAccumulator();
    f.add(5); f.reset(); f.add(7);
    expect(f.summarize()!.mean).toBe(7);
    const h = new IntegerAccumulator({ bits: 8, signed: false });
    h.add(5); h.reset(); h.add(7);
    expect(h.summarize()!.mean).toBe(7);
  });
});
