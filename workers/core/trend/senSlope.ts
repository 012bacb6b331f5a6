/**
 * Sen's slope and its confidence interval.
 *
 * Sen, P.K. 1968, "Estimates of the regression coefficient based on Kendall's
 * tau", JASA 63:1379–1389: the slope is the median of the N' pairwise slopes
 * (x_j − x_i)/(t_j − t_i), t_j > t_i.
 * Interval from the normal approximation, as set out in Gilbert, R.O. 1987,
 * Statistical Methods for Environmental Pollution Monitoring, ch. 16
 * (section "Sen's nonparametric estimator of slope", equation numbers 16.7–16.8 from memory):
 *   C_α = z_{1−α/2} · √Var(S),  M1 = (N' − C_α)/2,  M2 = (N' + C_α)/2;
 *   lower limit = the M1-th largest of the ordered slopes, upper = the (M2+1)-th.
 * 'rounded': M1 and M2+1 rounded to the nearest integer (halves to even), as
 * SciPy's `theilslopes` does; 'interpolate': linear interpolation between the
 * order statistics around the fractional ranks. Ranks are clamped to 1..N'.
 */
import { normalQuantile } from './normal.js';
import { roundHalfEven, sortedMedian } from './ranks.js';

export type CiRanks = 'rounded' | 'interpolate';

export interface SenSlopeResult {
  /** Slope per unit of time (per year when times are years). */
  slope: number;
  lower: number;
  upper: number;
  /** Number of pairwise slopes N'. */
  pairs: number;
}

/** All pairwise slopes (times strictly increasing), sorted ascending. */
export function pairwiseSlopes(times: ArrayLike<number>, values: ArrayLike<number>): Float64Array {
  const n = values.length;
  const out = new Float64Array((n * (n - 1)) / 2);
  let k = 0;
  for (let i = 0; i < n - 1; i++) {
    for (let j = i + 1; j < n; j++) out[k++] = (values[j] - values[i]) / (times[j] - times[i]);
  }
  return out.sort();
}

/** Order statistic at a 1-based, possibly fractional rank, clamped to 1..N. */
function orderStatistic(sorted: Float64Array, rank: number, mode: CiRanks): number {
  const n = sorted.length;
  const r = Math.min(n, Math.max(1, mode === 'rounded' ? roundHalfEven(rank) : rank));
  const lo = Math.floor(r);
  const frac = r - lo;
  if (frac === 0 || lo >= n) return sorted[lo - 1];
  return sorted[lo - 1] + frac * (sorted[lo] - sorted[lo - 1]);
}

/**
 * Sen's slope of values against strictly increasing times, with the
 * (1 − alpha) interval from Var(S) (the Mann–Kendall variance of the same series).
 *
 * @example senSlope([1, 2, 3, 4, 5], [1, 2, 3, 4, 5], 16.667) // { slope: 1, lower: 1, upper: 1, pairs: 10 }
 */
export function senSlope(
  times: ArrayLike<number>,
  values: ArrayLike<number>,
  varS: number,
  options: { alpha?: number; ciRanks?: CiRanks } = {},
): SenSlopeResult {
  const slopes = pairwiseSlopes(times, values);
  return senFromSlopes(slopes, varS, options);
}

/** Sen's slope and interval from already sorted pairwise slopes. */
export function senFromSlopes(slopes: Float64Array, varS: number, options: { alpha?: number; ciRanks?: CiRanks } = {}): SenSlopeResult {
  const alpha = options.alpha ?? 0.05;
  const mode = options.ciRanks ?? 'rounded';
  const pairs = slopes.length;
  const slope = sortedMedian(slopes);
  const c = normalQuantile(1 - alpha / 2) * Math.sqrt(varS);
  const m1 = (pairs - c) / 2;
  const m2 = (pairs + c) / 2;
  return { slope, lower: orderStatistic(slopes, m1, mode), upper: orderStatistic(slopes, m2 + 1, mode), pairs };
}
