/**
 * Seasonal Kendall test and seasonal Kendall slope.
 *
 * Hirsch, R.M., Slack, J.R. & Smith, R.A. 1982, "Techniques of trend analysis
 * for monthly water quality data", Water Resources Research 18:107–121
 * (also Gilbert 1987, ch. 17): a Mann–Kendall S and Var(S) per season
 * (month) over the years, summed; Z with the continuity correction from the
 * sums; the slope is the median of all within-season pairwise slopes
 * (x_{j,g} − x_{i,g})/(year_j − year_i). Seasons are taken as independent
 * (no covariance terms between seasons).
 */
import { continuityZ, mannKendallS, mannKendallVariance } from './mannKendall.js';
import { twoSidedP } from './normal.js';
import { tieGroupSizes, sortedMedian } from './ranks.js';

export interface SeasonalObservation {
  year: number;
  /** Season key (e.g. month 1–12). */
  season: number;
  value: number;
}

export interface SeasonalKendallResult {
  /** Observations used. */
  n: number;
  seasons: number;
  s: number;
  varS: number;
  z: number;
  p: number;
  /** Median of the within-season slopes, per year. */
  slope: number;
  /** Within-season pairs the slope is the median of. */
  pairs: number;
}

/**
 * @example seasonalKendall([{ year: 2019, season: 6, value: 1 }, ...])
 * @returns null when no season has two years
 */
export function seasonalKendall(observations: readonly SeasonalObservation[]): SeasonalKendallResult | null {
  const bySeason = new Map<number, SeasonalObservation[]>();
  for (const o of observations) {
    if (!Number.isFinite(o.value)) continue;
    const list = bySeason.get(o.season);
    if (list) list.push(o);
    else bySeason.set(o.season, [o]);
  }
  let s = 0, varS = 0, n = 0, seasons = 0;
  const slopes: number[] = [];
  for (const list of bySeason.values()) {
    list.sort((a, b) => a.year - b.year);
    for (let i = 1; i < list.length; i++) {
      if (list[i].year === list[i - 1].year) throw new Error(`season ${list[i].season} has two values in ${list[i].year}`);
    }
    if (list.length < 2) continue;
    seasons++;
    const values = list.map((o) => o.value);
    n += values.length;
    s += mannKendallS(values);
    varS += mannKendallVariance(values.length, tieGroupSizes(values));
    for (let i = 0; i < list.length - 1; i++) {
      for (let j = i + 1; j < list.length; j++) slopes.push((list[j].value - list[i].value) / (list[j].year - list[i].year));
    }
  }
  if (seasons === 0) return null;
  const z = continuityZ(s, varS);
  const sorted = Float64Array.from(slopes).sort();
  return { n, seasons, s, varS, z, p: twoSidedP(z), slope: sortedMedian(sorted), pairs: sorted.length };
}
