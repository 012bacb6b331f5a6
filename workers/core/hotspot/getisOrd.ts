/**
 * Getis–Ord Gi* local statistic as a standard normal deviate.
 *
 * Getis, A. & Ord, J.K. 1992, "The analysis of spatial association by use of
 * distance statistics", Geographical Analysis 24:189–206; the standardised form
 * of Ord, J.K. & Getis, A. 1995, "Local spatial autocorrelation statistics:
 * distributional issues and an application", Geographical Analysis 27:286–306
 * (eq. 14, from memory):
 *
 *   Gi* = [Σ_j w_ij x_j − x̄ W_i] / ( s · √( (n S1_i − W_i²) / (n − 1) ) )
 *   W_i = Σ_j w_ij,  S1_i = Σ_j w_ij²,  x̄ = Σ x / n,  s² = Σ x² / n − x̄²
 *
 * Weights: binary, and the district itself is included (w_ii = 1), so a
 * district without neighbours still has a defined Gi* (its own value against the mean).
 * p is two-sided from the standard normal.
 */
import { twoSidedP } from '../trend/normal.js';

export interface GiStarResult {
  /** null where Gi* is undefined: constant values, or a district whose neighbourhood is every district. */
  z: (number | null)[];
  p: (number | null)[];
}

/**
 * @param values one value per district
 * @param neighbourLists neighbours of each district (self excluded: it is added here)
 * @example giStar([10, 12, 20, 22, 11], [[1], [0, 2], [1, 3], [2, 4], [3]]).z[2] // 1.4756
 */
export function giStar(values: readonly number[], neighbourLists: readonly (readonly number[])[]): GiStarResult {
  const n = values.length;
  let sum = 0, sum2 = 0;
  for (const x of values) { sum += x; sum2 += x * x; }
  const mean = sum / n;
  let ss = 0;
  for (const x of values) ss += (x - mean) ** 2;
  const s = Math.sqrt(ss / n);
  const z: (number | null)[] = new Array(n);
  const p: (number | null)[] = new Array(n);
  for (let i = 0; i < n; i++) {
    const list = neighbourLists[i];
    let lag = values[i];
    for (const j of list) lag += values[j];
    const w = list.length + 1; // binary weights with self: W_i = S1_i
    const denom = s * Math.sqrt((n * w - w * w) / (n - 1));
    const zi = (lag - mean * w) / denom;
    z[i] = Number.isFinite(zi) && denom > 0 ? zi : null;
    p[i] = z[i] === null ? null : twoSidedP(zi);
  }
  return { z, p };
}
