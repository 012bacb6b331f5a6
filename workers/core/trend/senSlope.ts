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

/** All pairwise slopes (times strictly increasing), unsorted. */
export function pairwiseSlopes(times: ArrayLike<number>, values: ArrayLike<number>): Float64Array {
  const n = values.length;
  const out = new Float64Array((n * (n - 1)) / 2);
  let k = 0;
  for (let i = 0; i < n - 1; i++) {
    const ti = times[i], xi = values[i];
    for (let j = i + 1; j < n; j++) out[k++] = (values[j] - xi) / (times[j] - ti);
  }
  return out;
}

/**
 * Rearrange `a` so that a[k] is the value a full ascending sort would put
 * there, smaller-or-equal values before it and larger-or-equal after it
 * (Hoare's selection, "Find", 1961); O(N) on average, no allocation.
 */
export function selectInPlace(a: Float64Array, k: number, lo = 0, hi = a.length - 1): number {
  while (hi > lo) {
    // median of three as pivot
    const mid = (lo + hi) >>> 1;
    let x = a[lo], y = a[mid], z = a[hi];
    const pivot = x < y ? (y < z ? y : x < z ? z : x) : x < z ? x : y < z ? z : y;
    let i = lo, j = hi;
    while (i <= j) {
      while (a[i] < pivot) i++;
      while (a[j] > pivot) j--;
      if (i <= j) { x = a[i]; a[i] = a[j]; a[j] = x; i++; j--; }
    }
    if (k <= j) hi = j;
    else if (k >= i) lo = i;
    else break;
  }
  return a[k];
}

/** The 1-based order statistic r of `a` (partially reordering it). */
function orderAt(a: Float64Array, r: number): number {
  return selectInPlace(a, r - 1);
}

/** Order statistic at a 1-based, possibly fractional rank, clamped to 1..N. */
function orderStatistic(a: Float64Array, rank: number, mode: CiRanks): number {
  const n = a.length;
  const r = Math.min(n, Math.max(1, mode === 'rounded' ? roundHalfEven(rank) : rank));
  const lo = Math.floor(r);
  const frac = r - lo;
  if (frac === 0 || lo >= n) return orderAt(a, lo);
  const below = orderAt(a, lo);
  return below + frac * (orderAt(a, lo + 1) - below);
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

/**
 * Sen's slope and interval from the pairwise slopes (in any order; the array
 * is reordered in place by selection rather than sorted).
 */
export function senFromSlopes(slopes: Float64Array, varS: number, options: { alpha?: number; ciRanks?: CiRanks } = {}): SenSlopeResult {
  const alpha = options.alpha ?? 0.05;
  const mode = options.ciRanks ?? 'rounded';
  const pairs = slopes.length;
  const h = pairs >> 1;
  const slope = pairs % 2 === 1 ? orderAt(slopes, h + 1) : (orderAt(slopes, h) + orderAt(slopes, h + 1)) / 2;
  const c = normalQuantile(1 - alpha / 2) * Math.sqrt(varS);
  const m1 = (pairs - c) / 2;
  const m2 = (pairs + c) / 2;
  return { slope, lower: orderStatistic(slopes, m1, mode), upper: orderStatistic(slopes, m2 + 1, mode), pairs };
}

/** The point a Sen line passes through: the median time and the median value. */
export interface SenPivot {
  time: number;
  value: number;
}

/**
 * The pivot of the Sen line: (median of the times, median of the values), so
 * the line is value(t) = pivot.value + slope · (t − pivot.time) and the band
 * uses the interval slopes through the same point. Conover, W.J. 1980,
 * Practical Nonparametric Statistics, 2nd ed., section 5.5 (intercept
 * a = median(y) − b · median(x); section number from memory).
 *
 * @example senPivot([2001, 2002, 2003, 2004], [1, 4, 2, 3]) // { time: 2002.5, value: 2.5 }
 */
export function senPivot(times: ArrayLike<number>, values: ArrayLike<number>): SenPivot {
  const t = Float64Array.from(times).sort();
  const x = Float64Array.from(values).sort();
  return { time: sortedMedian(t), value: sortedMedian(x) };
}
