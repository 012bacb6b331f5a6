/**
 * The trend of one yearly series: Mann–Kendall, optional Hamed–Rao
 * correction, Sen's slope with its interval, per year and per decade.
 * Units follow the series: Kelvin for LST and SUHI (slopes in K per year /
 * per decade), K⁻¹ for ATI.
 */
import { hamedRao } from './hamedRao.js';
import { mannKendall } from './mannKendall.js';
import { senPivot, senSlope, type CiRanks } from './senSlope.js';
import { seasonalKendall, type SeasonalObservation } from './seasonalKendall.js';

/** Fewest years a trend is computed from. Below this the result carries a note and nulls. */
export const MIN_TREND_YEARS = 4;

export type Direction = 'increasing' | 'decreasing' | 'none';
export type SerialCorrection = 'none' | 'hamed-rao';

export interface TrendOptions {
  /** Significance level of `direction` and of the slope interval (1 − alpha). Default 0.05. */
  alpha?: number;
  serialCorrection?: SerialCorrection;
  ciRanks?: CiRanks;
}

/** One series' result with the public (snake_case) field names; null where undefined. */
export interface TrendResult {
  n: number;
  s: number | null;
  var_s: number | null;
  z: number | null;
  p: number | null;
  tau: number | null;
  slope_per_year: number | null;
  slope_per_decade: number | null;
  /** Interval of the slope per year at 1 − alpha. */
  slope_ci_lower: number | null;
  slope_ci_upper: number | null;
  /**
   * Point the Sen line passes through (median year, median value; Conover 1980):
   * value(y) = pivot_value + slope_per_year · (y − pivot_year). The interval slopes
   * through the same point draw the band.
   */
  pivot_year: number | null;
  pivot_value: number | null;
  direction: Direction | null;
  z_corrected?: number | null;
  p_corrected?: number | null;
  /** Years that had a value, e.g. "2019-2021,2023". */
  years_used: string;
  /** Why fields are null, when they are. */
  note: string | null;
}

/** "2019-2021,2023" from sorted years (`separator` between the runs). */
export function yearRanges(years: readonly number[], separator = ','): string {
  const parts: string[] = [];
  let i = 0;
  while (i < years.length) {
    let j = i;
    while (j + 1 < years.length && years[j + 1] === years[j] + 1) j++;
    parts.push(j === i ? String(years[i]) : `${years[i]}-${years[j]}`);
    i = j + 1;
  }
  return parts.join(separator);
}

/** Verdict from a p-value and S at level alpha. */
export function directionOf(s: number | null, p: number | null, alpha: number): Direction | null {
  if (s === null || p === null) return null;
  if (p > alpha || s === 0) return 'none';
  return s > 0 ? 'increasing' : 'decreasing';
}

function empty(n: number, yearsUsed: string, note: string, corrected: boolean): TrendResult {
  const r: TrendResult = {
    n, s: null, var_s: null, z: null, p: null, tau: null, slope_per_year: null, slope_per_decade: null,
    slope_ci_lower: null, slope_ci_upper: null, pivot_year: null, pivot_value: null, direction: null, years_used: yearsUsed, note,
  };
  if (corrected) { r.z_corrected = null; r.p_corrected = null; }
  return r;
}

/**
 * Trend of a yearly series. `years` are distinct integers; `values[i]` belongs
 * to `years[i]`, null (or NaN) where the year is missing — missing years are
 * left out, never filled in.
 *
 * @example trendOfSeries([2019, 2020, 2021, 2022, 2023], [1, 2, 3, 4, 5]).slope_per_year // 1
 */
export function trendOfSeries(years: readonly number[], values: readonly (number | null)[], options: TrendOptions = {}): TrendResult {
  if (years.length !== values.length) throw new Error('trendOfSeries: years and values differ in length');
  const alpha = options.alpha ?? 0.05;
  const corrected = options.serialCorrection === 'hamed-rao';
  // Years with a value, in time order, as typed arrays (no per-year objects).
  let n = 0;
  for (let i = 0; i < values.length; i++) { const v = values[i]; if (v !== null && Number.isFinite(v)) n++; }
  const order = Array.from({ length: values.length }, (_, i) => i);
  let sortedInput = true;
  for (let i = 1; i < years.length; i++) if (years[i] <= years[i - 1]) { sortedInput = false; break; }
  if (!sortedInput) order.sort((a, b) => years[a] - years[b]);
  const t = new Float64Array(n);
  const x = new Float64Array(n);
  let k = 0;
  for (const i of order) {
    const v = values[i];
    if (v !== null && Number.isFinite(v)) { t[k] = years[i]; x[k] = v; k++; }
  }
  for (let i = 1; i < n; i++) {
    if (t[i] === t[i - 1]) throw new Error(`trendOfSeries: year ${t[i]} appears twice`);
  }
  const used = yearRanges(Array.from(t));
  if (n === 0) return empty(0, used, 'no year has a value', corrected);
  if (n < MIN_TREND_YEARS) return empty(n, used, `only ${n} year${n === 1 ? '' : 's'} with a value; a trend needs at least ${MIN_TREND_YEARS}`, corrected);
  let constant = true;
  for (let i = 1; i < n; i++) if (x[i] !== x[0]) { constant = false; break; }
  if (constant) return empty(n, used, 'the series is constant: no trend can be estimated', corrected);
  const mk = mannKendall(x);
  const sen = senSlope(t, x, mk.varS, { alpha, ciRanks: options.ciRanks });
  const pivot = senPivot(t, x);
  const r: TrendResult = {
    n, s: mk.s, var_s: mk.varS, z: mk.z, p: mk.p, tau: mk.tau,
    slope_per_year: sen.slope, slope_per_decade: sen.slope * 10,
    slope_ci_lower: sen.lower, slope_ci_upper: sen.upper,
    pivot_year: pivot.time, pivot_value: pivot.value,
    direction: directionOf(mk.s, mk.p, alpha),
    years_used: used, note: null,
  };
  if (corrected) {
    const hr = hamedRao(t, x, mk.s, mk.varS, sen.slope, alpha);
    r.z_corrected = hr.zCorrected;
    r.p_corrected = hr.pCorrected;
    r.direction = directionOf(mk.s, hr.pCorrected, alpha);
  }
  return r;
}

/**
 * Seasonal Kendall trend (Hirsch, Slack & Smith 1982) of observations keyed by
 * year and season (e.g. month), in the same result shape as
 * {@link trendOfSeries}: S, Var(S), Z and p summed over the seasons, and the
 * median of the within-season slopes. It gives no tau, no slope interval and no pivot.
 * Fewer than 4 years, no season with values in two years, or a constant series
 * give `n`, a `note` and nulls.
 */
export function seasonalTrendOfSeries(observations: readonly SeasonalObservation[], alpha = 0.05): TrendResult {
  const years = [...new Set(observations.map((o) => o.year))].sort((a, b) => a - b);
  const used = yearRanges(years);
  if (years.length < MIN_TREND_YEARS) {
    return empty(observations.length, used, `only ${years.length} years with a monthly value; a trend needs at least ${MIN_TREND_YEARS}`, false);
  }
  const sk = seasonalKendall(observations);
  if (!sk) return empty(observations.length, used, 'no month has values in two years', false);
  if (observations.every((o) => o.value === observations[0].value)) return empty(sk.n, used, 'the series is constant: no trend can be estimated', false);
  return {
    n: sk.n, s: sk.s, var_s: sk.varS, z: sk.z, p: sk.p, tau: null,
    slope_per_year: sk.slope, slope_per_decade: sk.slope * 10, slope_ci_lower: null, slope_ci_upper: null,
    pivot_year: null, pivot_value: null,
    direction: directionOf(sk.s, sk.p, alpha), years_used: used, note: null,
  };
}
