/**
 * Trend statistics checked against outside references:
 * - SciPy (Debian python3-scipy via /usr/bin/python3): `kendalltau` (tau-b, and
 *   its asymptotic z, which gives Var(S) with the tie correction), `theilslopes`
 *   (Sen's slope and its interval with rounded ranks), `norm.ppf`;
 * - statsmodels (Debian python3-statsmodels): `multipletests(method='fdr_bh')`,
 *   and `acf` in the Hamed–Rao (1998) correction factor;
 * - worked examples with their sources named beside each check.
 * All reference calls go to one Python process for the whole file.
 */
import { spawnSync } from 'node:child_process';
import { beforeAll, describe, expect, it } from 'vitest';
import {
  benjaminiHochberg, hamedRao, mannKendall, normalQuantile, parseMonths, parseSeriesCsv, seasonalKendall, seasonalTrendOfSeries, seasonMonths,
  senPivot, senSlope, trendOfSeries, twoSidedP, yearlySeries,
} from '../../workers/core/trend/index.js';
import { isInputError } from '../../workers/core/errors.js';
import { mulberry32 } from '../../workers/core/prng.js';
import { pythonModulesAvailable } from '../support/services.js';

const PYTHON = '/usr/bin/python3';
const HAVE_SCIPY = await pythonModulesAvailable(['scipy.stats', 'numpy'], 'trend-stats against SciPy');
const HAVE_STATSMODELS = await pythonModulesAvailable(['statsmodels.stats.multitest', 'statsmodels.tsa.stattools'], 'trend-stats against statsmodels');

const years = (n: number, first = 2001): number[] => Array.from({ length: n }, (_, i) => first + i);

// ---------------------------------------------------------------------------
// Random series for the library comparisons (seeded; some with ties, some with gaps).
const rand = mulberry32(19680101);
interface Case { t: number[]; x: number[] }
const CASES: Case[] = [];
for (let c = 0; c < 40; c++) {
  const n = 4 + Math.floor(rand() * 27); // 4..30
  const slope = (rand() - 0.5) * 0.2;
  const ties = c % 3 === 0; // every third series rounded to 0.1 K: ties
  const t: number[] = [];
  const x: number[] = [];
  let year = 1990;
  for (let i = 0; i < n; i++) {
    year += c % 4 === 1 && rand() < 0.2 ? 2 : 1; // every fourth series has missing years
    t.push(year);
    const v = 300 + slope * (year - 1990) + (rand() - 0.5) * 0.8 + (c % 5 === 2 ? 0.3 * Math.sin(i) : 0);
    x.push(ties ? Math.round(v * 10) / 10 : v);
  }
  CASES.push({ t, x });
}
// Autocorrelated series for Hamed–Rao (AR(1)-like, a few lags significant).
const HR_CASES: Case[] = [];
for (let c = 0; c < 12; c++) {
  const n = 12 + c * 3;
  let e = 0;
  const t = years(n, 1990);
  const x = t.map((_, i) => {
    e = 0.7 * e + (rand() - 0.5);
    return 0.03 * i + e;
  });
  HR_CASES.push({ t, x });
}
HR_CASES.push({ t: years(20, 2000), x: [1, 2, 3, 2, 3, 4, 5, 4, 5, 6, 7, 6, 7, 8, 9, 8, 9, 10, 11, 10] });
const FDR_SETS: number[][] = [
  [0.01, 0.04, 0.03, 0.5, 0.001, 0.2],
  Array.from({ length: 17 }, () => rand() ** 2),
  [0.05, 0.05, 0.05, 0.05],
  [1e-12, 0.9, 0.049, 0.051],
];
const PPF = [0.5, 0.9, 0.95, 0.975, 0.995, 0.9995, 0.001];

const REFERENCE = String.raw`
import json, sys
import numpy as np
from scipy import stats
req = json.load(sys.stdin)
out = {"kendall": [], "theil": [], "ppf": [], "fdr": [], "hr": []}
for c in req["cases"]:
    t = np.array(c["t"], float); x = np.array(c["x"], float)
    r = stats.kendalltau(t, x, method="asymptotic")
    out["kendall"].append({"tau": float(r[0]), "p": float(r[1])})
    s = stats.theilslopes(x, t, alpha=0.95)
    out["theil"].append([float(s[0]), float(s[2]), float(s[3]), float(s[1]), float(np.median(t)), float(np.median(x))])
out["ppf"] = [float(stats.norm.ppf(p)) for p in req["ppf"]]
try:
    from statsmodels.stats.multitest import multipletests
    from statsmodels.tsa.stattools import acf
    out["fdr"] = [[float(v) for v in multipletests(ps, method="fdr_bh")[1]] for ps in req["fdr"]]
    for c in req["hr"]:
        t = np.array(c["t"], float); x = np.array(c["x"], float); n = len(x)
        slope = stats.theilslopes(x, t)[0]
        ranks = stats.rankdata(x - slope * t)
        r = acf(ranks, nlags=n - 1, fft=False)
        bound = stats.norm.ppf(0.975) / np.sqrt(n)
        k = np.arange(1, n)
        keep = np.abs(r[1:]) > bound
        factor = 1 + 2.0 / (n * (n - 1) * (n - 2)) * np.sum(((n - k) * (n - k - 1) * (n - k - 2) * r[1:])[keep])
        out["hr"].append({"factor": float(factor), "lags": [int(v) for v in k[keep]]})
except ImportError:
    out["fdr"] = None; out["hr"] = None
json.dump(out, sys.stdout)
`;

interface Reference {
  kendall: { tau: number; p: number }[];
  theil: [number, number, number, number, number, number][];
  ppf: number[];
  fdr: number[][] | null;
  hr: { factor: number; lags: number[] }[] | null;
}

let ref: Reference;
beforeAll(() => {
  if (!HAVE_SCIPY) return;
  const r = spawnSync(PYTHON, ['-c', REFERENCE], {
    input: JSON.stringify({ cases: CASES, ppf: PPF, fdr: FDR_SETS, hr: HR_CASES }),
    encoding: 'utf8',
    maxBuffer: 16 << 20,
  });
  if (r.status !== 0) throw new Error(`SciPy reference script failed: ${r.stderr}`);
  ref = JSON.parse(r.stdout) as Reference;
});

if (!HAVE_SCIPY) {
  console.log('trend-stats: SciPy comparisons not run: /usr/bin/python3 with scipy (python3-scipy) is missing');
} else {
  describe('against SciPy (reference library)', () => {
    it('Kendall tau-b equals scipy.stats.kendalltau on 40 series (ties, gaps)', () => {
      CASES.forEach((c, i) => expect(mannKendall(c.x).tau).toBeCloseTo(ref.kendall[i].tau, 12));
    });
    it('Var(S) with the tie correction equals S² / z² of kendalltau\'s asymptotic z, and p without continuity correction equals its p', () => {
      // SciPy's asymptotic z = S / sqrt(Var) (no continuity correction); with distinct times
      // its variance reduces to the Mann–Kendall tie-corrected Var(S).
      CASES.forEach((c, i) => {
        const mk = mannKendall(c.x);
        const zScipy = mk.s / Math.sqrt(mk.varS);
        expect(twoSidedP(zScipy)).toBeCloseTo(ref.kendall[i].p, 12);
      });
    });
    it('Sen slope and its 95 % interval (rounded ranks) equal scipy.stats.theilslopes on 40 series', () => {
      CASES.forEach((c, i) => {
        const mk = mannKendall(c.x);
        const s = senSlope(c.t, c.x, mk.varS, { alpha: 0.05, ciRanks: 'rounded' });
        const [slope, lo, hi] = ref.theil[i];
        expect(s.slope).toBeCloseTo(slope, 12);
        expect(s.lower).toBeCloseTo(lo, 12);
        expect(s.upper).toBeCloseTo(hi, 12);
      });
    });
    it('the Sen line through its pivot (median year, median value) has scipy.stats.theilslopes\' intercept on 40 series', () => {
      // SciPy's theilslopes intercept is median(y) - slope * median(x) (its documentation, method='separate'
      // default; Conover 1980): the line through the pivot must give that value at x = 0
      CASES.forEach((c, i) => {
        const r = trendOfSeries(c.t, c.x, { alpha: 0.05 });
        const [slope, , , intercept, medianT, medianX] = ref.theil[i];
        // the pivot is numpy.median of the years and of the values
        expect(r.pivot_year).toBe(medianT);
        expect(r.pivot_value).toBeCloseTo(medianX, 12);
        expect(senPivot(c.t, c.x)).toEqual({ time: r.pivot_year, value: r.pivot_value });
        const atZero = r.pivot_value! - r.slope_per_year! * r.pivot_year!;
        // intercepts are ~-1e2..1e2 K from a pivot ~2000 years away: compare at 1e-9 relative to the slope term
        expect(Math.abs(atZero - intercept)).toBeLessThan(1e-9 * Math.max(1, Math.abs(slope * r.pivot_year!)));
      });
    });
    it('normal quantile equals scipy.stats.norm.ppf', () => {
      PPF.forEach((p, i) => expect(normalQuantile(p)).toBeCloseTo(ref.ppf[i], 12));
    });
  });
}

if (!HAVE_STATSMODELS) {
  console.log('trend-stats: statsmodels comparisons not run: /usr/bin/python3 with statsmodels (python3-statsmodels) is missing');
} else {
  describe('against statsmodels (reference library)', () => {
    it('Benjamini–Hochberg q equals multipletests(method="fdr_bh")', () => {
      FDR_SETS.forEach((ps, i) => {
        const q = benjaminiHochberg(ps);
        ref.fdr![i].forEach((v, j) => expect(q[j]).toBeCloseTo(v, 14));
      });
    });
    it('Hamed–Rao factor and kept lags equal the formula on statsmodels acf of the detrended ranks (13 series)', () => {
      HR_CASES.forEach((c, i) => {
        const mk = mannKendall(c.x);
        const sen = senSlope(c.t, c.x, mk.varS);
        const hr = hamedRao(c.t, c.x, mk.s, mk.varS, sen.slope, 0.05);
        expect(hr.lagsKept).toEqual(ref.hr![i].lags);
        expect(hr.factor).toBeCloseTo(ref.hr![i].factor, 10);
        expect(hr.varSCorrected).toBeCloseTo(mk.varS * ref.hr![i].factor, 8);
      });
      // At least one series must have lags kept, or the comparison proves little.
      expect(ref.hr!.some((h) => h.lags.length > 0)).toBe(true);
    });
  });
}

describe('worked examples', () => {
  it('x = 1..5: S 10, Var 16.667, Z 2.2045, p 0.027486; Sen 1 [1, 1]', () => {
    // Derived from Gilbert 1987 eqs. 16.3–16.5 by hand: S = C(5,2) = 10, Var = 5·4·15/18, Z = 9/√16.667.
    const r = trendOfSeries(years(5), [1, 2, 3, 4, 5]);
    expect(r.s).toBe(10);
    expect(r.var_s).toBeCloseTo(50 / 3, 12);
    expect(r.z).toBeCloseTo(9 / Math.sqrt(50 / 3), 12);
    expect(r.p).toBeCloseTo(0.027486, 6); // normal tail at 2.2045 (standard normal table, Abramowitz & Stegun 26.2)
    expect([r.slope_per_year, r.slope_ci_lower, r.slope_ci_upper]).toEqual([1, 1, 1]);
    expect(r.tau).toBe(1);
  });

  it('ten values, no ties: S 5, Var 125, Z 0.35777, p 0.72051, Sen slope 0.04', () => {
    // A published documentation example of an open-source trend library (from memory):
    // z 0.35777, p 0.72051, slope 0.04.
    const r = trendOfSeries(years(10), [4.81, 4.17, 4.41, 3.59, 5.87, 3.83, 6.03, 4.89, 4.32, 4.69]);
    expect(r.s).toBe(5);
    expect(r.var_s).toBe(125);
    expect(r.z).toBeCloseTo(0.35777, 5);
    expect(r.p).toBeCloseTo(0.72051, 5);
    expect(r.slope_per_year).toBeCloseTo(0.04, 12);
    expect(r.direction).toBe('none');
  });

  it('two tie pairs: Var(S) 123 (tie-corrected), interval ranks 12 and 34 rounded, 11.63 and 34.37 interpolated', () => {
    // Derived from Gilbert 1987 eq. 16.4 (10·9·25 = 2250, two tie groups of 2 take 2·(2·1·9) = 36; 2214/18 = 123)
    // and the interval ranks M1 = (45 − 1.96·√123)/2 = 11.63, M2 + 1 = 34.37 (Gilbert 1987 ch. 16).
    const x = [10, 12, 12, 15, 11, 14, 16, 16, 18, 20];
    const r = trendOfSeries(years(10), x);
    expect(r.s).toBe(35);
    expect(r.var_s).toBe((10 * 9 * 25 - 2 * (2 * 1 * 9)) / 18);
    expect(r.slope_per_year).toBe(1);
    expect(r.slope_ci_lower).toBeCloseTo(2 / 3, 12); // 12th of the 45 ordered slopes
    expect(r.slope_ci_upper).toBeCloseTo(5 / 3, 12); // 34th
    const i = trendOfSeries(years(10), x, { ciRanks: 'interpolate' });
    expect(i.slope_ci_lower).toBeCloseTo(0.642098, 6); // between the 11th (0.6) and 12th (2/3) at 11.63
    expect(i.slope_ci_upper).toBeCloseTo(5 / 3, 12);
  });

  it('Seasonal Kendall: S and Var(S) are sums over seasons, slope the median of within-season slopes', () => {
    // Hirsch, Slack & Smith 1982: S_k = Σ S_g, Var = Σ Var_g. Season 1 [1.0,1.5,2.1,1.8,2.6]: S 8; season 2
    // [3.0,2.8,3.5,3.9,3.7]: S 6 (counted by hand); Var 2 × 50/3; Z = 13/√(100/3) = 2.2517.
    const obs = [
      ...[1.0, 1.5, 2.1, 1.8, 2.6].map((value, i) => ({ year: 2010 + i, season: 1, value })),
      ...[3.0, 2.8, 3.5, 3.9, 3.7].map((value, i) => ({ year: 2010 + i, season: 2, value })),
    ];
    const r = seasonalKendall(obs)!;
    expect(r.s).toBe(14);
    expect(r.varS).toBeCloseTo(100 / 3, 12);
    expect(r.z).toBeCloseTo(13 / Math.sqrt(100 / 3), 12);
    expect(r.pairs).toBe(20);
    expect(r.slope).toBeCloseTo(0.3, 12); // median of the 20 within-season slopes, sorted by hand: 0.3 and 0.3
    // Each season's S agrees with the one-series test.
    expect(mannKendall([1.0, 1.5, 2.1, 1.8, 2.6]).s + mannKendall([3.0, 2.8, 3.5, 3.9, 3.7]).s).toBe(14);

    // The same hand-counted example in the result shape of a yearly trend (no tau, no interval),
    // and the guards a yearly trend has: fewer than 4 years, a constant series.
    const t = seasonalTrendOfSeries(obs);
    expect(t).toMatchObject({ n: 10, s: 14, tau: null, slope_ci_lower: null, slope_ci_upper: null, direction: 'increasing', years_used: '2010-2014', note: null });
    expect(t.var_s).toBeCloseTo(100 / 3, 12);
    expect(t.slope_per_decade).toBeCloseTo(3, 12);
    expect(t.p).toBeCloseTo(2 * (1 - 0.98783), 4); // Φ(2.2517) = 0.98783 (standard normal table, common practice, no source)
    expect(seasonalTrendOfSeries(obs.filter((o) => o.year < 2013))).toMatchObject({ s: null, p: null, note: expect.stringMatching(/^only 3 years/) });
    expect(seasonalTrendOfSeries(obs.map((o) => ({ ...o, value: 1 })))).toMatchObject({ n: 10, s: null, note: 'the series is constant: no trend can be estimated' });
  });

  it('Benjamini–Hochberg on a hand-worked set', () => {
    // Benjamini & Hochberg 1995 step-up: sorted 0.01, 0.03, 0.04 → 3·0.01/1, min(3·0.03/2, 0.04), 3·0.04/3.
    expect(benjaminiHochberg([0.01, 0.04, 0.03, null])).toEqual([0.03, 0.04, 0.04, null]);
  });
});

describe('edge cases', () => {
  it('a missing year in the middle is left out, not filled: n counts the years with a value', () => {
    const withGap = trendOfSeries([2001, 2002, 2003, 2004, 2005, 2006], [1, 2, null, 4, 5, 6]);
    const dropped = trendOfSeries([2001, 2002, 2004, 2005, 2006], [1, 2, 4, 5, 6]);
    expect(withGap).toEqual(dropped);
    expect(withGap.n).toBe(5);
    expect(withGap.years_used).toBe('2001-2002,2004-2006');
    // Slopes use the real year gaps: 1 K/yr exactly (all pairwise slopes are 1).
    expect(withGap.slope_per_year).toBe(1);
    expect(withGap.slope_per_decade).toBe(10);
  });

  it('n = 3 gives n and a note, every other field null; n = 4 gives numbers', () => {
    const r3 = trendOfSeries(years(3), [1, 2, 3]);
    expect(r3.n).toBe(3);
    expect(r3.note).toMatch(/only 3 years .* at least 4/);
    for (const k of ['s', 'var_s', 'z', 'p', 'tau', 'slope_per_year', 'slope_per_decade', 'slope_ci_lower', 'slope_ci_upper', 'direction'] as const) {
      expect(r3[k]).toBeNull();
    }
    const r4 = trendOfSeries(years(4), [1, 3, 2, 4]);
    expect(r4.n).toBe(4);
    expect(r4.s).toBe(4); // pairs: +,+,+,-,+,+ = 4 (counted by hand)
    expect(r4.var_s).toBeCloseTo((4 * 3 * 13) / 18, 12); // Gilbert 1987 eq. 16.4, no ties
    expect(r4.note).toBeNull();
  });

  it('a constant series says so and gives no numbers', () => {
    const r = trendOfSeries(years(8), [2, 2, 2, 2, 2, 2, 2, 2], { serialCorrection: 'hamed-rao' });
    expect(r.n).toBe(8);
    expect(r.note).toMatch(/constant/);
    expect([r.s, r.z, r.p, r.slope_per_year, r.z_corrected, r.p_corrected]).toEqual([null, null, null, null, null, null]);
  });

  it('all values missing: n 0 and a note', () => {
    const r = trendOfSeries(years(6), [null, null, null, null, null, null]);
    expect(r.n).toBe(0);
    expect(r.note).toMatch(/no year has a value/);
    expect(r.slope_per_year).toBeNull();
  });

  it('ties in values: Var(S) drops by the tie term (Gilbert 1987 eq. 16.4)', () => {
    const r = mannKendall([1, 1, 1, 2, 3, 3]);
    // groups of 3 and 2: [6·5·17 − 3·2·11 − 2·1·9]/18 = (510 − 66 − 18)/18
    expect(r.varS).toBeCloseTo((510 - 66 - 18) / 18, 12);
  });

  it('the interval ranks are clamped to the slopes there are (n = 4, wide interval)', () => {
    const r = trendOfSeries(years(4), [1, 3, 2, 4]);
    // C = 1.96·√8.667 = 5.77, N' = 6: M1 = 0.11 → rank 0 → 1 (clamped), M2 + 1 = 6.89 → 7 → 6 (clamped).
    expect(r.slope_ci_lower).toBe(-1); // smallest pairwise slope (3 → 2)
    expect(r.slope_ci_upper).toBe(2); // largest (1 → 3)
  });

  it('Hamed–Rao adds z_corrected and p_corrected; the verdict follows p_corrected', () => {
    const x = [1, 2, 3, 2, 3, 4, 5, 4, 5, 6, 7, 6, 7, 8, 9, 8, 9, 10, 11, 10];
    const r = trendOfSeries(years(20), x, { serialCorrection: 'hamed-rao' });
    expect(r.z).toBeCloseTo(170 / Math.sqrt(941), 10); // S 171, Var 941 (hand count with the tie term)
    expect(r.z_corrected).toBeLessThan(r.z as number);
    expect(r.p_corrected).toBeGreaterThan(r.p as number);
    expect(r.direction).toBe('increasing');
    expect('z_corrected' in trendOfSeries(years(20), x)).toBe(false);
  });
});

describe('seasons and series files', () => {
  it('summer is June–August in the north and December–February (counted in the year of its January) in the south', () => {
    // Meteorological seasons: common practice, no source.
    expect(seasonMonths('summer', 'north')).toEqual({ months: [6, 7, 8], wrapFromMonth: null, label: 'Jun-Aug' });
    expect(seasonMonths('summer', 'south')).toEqual({ months: [12, 1, 2], wrapFromMonth: 12, label: 'Dec-Feb' });
    expect(parseMonths('6,7,8').months).toEqual([6, 7, 8]);
    expect(parseMonths('11-2')).toMatchObject({ months: [11, 12, 1, 2], wrapFromMonth: 11 });
    expect(() => parseMonths('6-13')).toThrow(/--months must be/);
  });

  it('a date file: December joins the next year for Dec–Feb; years below --min-dates are dropped and listed', () => {
    const text = 'date,value\n2019-12-05,1\n2020-01-10,3\n2020-02-01,NA\n2020-06-01,99\n2020-12-20,5\n2021-01-02,\n';
    const parsed = parseSeriesCsv(text, 'winter.csv', parseMonths('12-2'));
    expect(parsed.periods).toEqual([{ year: 2020, dates: 2, value: 2 }, { year: 2021, dates: 1, value: 5 }]);
    const ys = yearlySeries(parsed.periods, 2);
    expect(ys.years).toEqual([2020]);
    expect(ys.tooFew).toEqual([{ year: 2021, dates: 1 }]);
  });

  it('bad series files are refused with the file name and line', () => {
    const all = parseMonths('1-12');
    const err = (text: string): string => {
      try {
        parseSeriesCsv(text, 'series.csv', all);
      } catch (e) {
        expect(isInputError(e)).toBe(true);
        return (e as Error).message;
      }
      throw new Error('no error');
    };
    expect(err('')).toMatch(/^series\.csv: the file is empty/);
    expect(err('yr,val\n2019,1\n')).toMatch(/^series\.csv: line 1: the header must be/);
    expect(err('year,value\n2019,abc\n')).toMatch(/^series\.csv: line 2: value "abc" is not a number/);
    expect(err('year,value\n2019,1\n2019,2\n')).toMatch(/line 3: year 2019 appears twice/);
    expect(err('date,value\n2019-02-30,1\n')).toMatch(/line 2: "2019-02-30" is not a date/);
    expect(err('year,value\n2019,1,2\n')).toMatch(/line 2: expected 2 fields/);
  });
});
