/**
 * Mann–Kendall trend test on one series.
 *
 * Mann, H.B. 1945, "Nonparametric tests against trend", Econometrica 13:245–259;
 * Kendall, M.G. 1975, Rank Correlation Methods, 4th ed., Griffin;
 * formulas as set out in Gilbert, R.O. 1987, Statistical Methods for
 * Environmental Pollution Monitoring, Van Nostrand Reinhold, ch. 16
 * (equation numbers 16.3–16.5 from memory):
 *
 *   S      = Σ_{i<j} sign(x_j − x_i)                                   (Gilbert eq. 16.3)
 *   Var(S) = [n(n−1)(2n+5) − Σ_p t_p(t_p−1)(2t_p+5)] / 18              (eq. 16.4, t_p = size of tie group p)
 *   Z      = (S−1)/√Var(S) if S > 0;  0 if S = 0;  (S+1)/√Var(S) if S < 0   (eq. 16.5, continuity correction)
 *   p      = 2·(1 − Φ(|Z|))                                           (two-sided)
 *
 * Kendall's tau reported is tau-b between time and value (Kendall 1945,
 * "The treatment of ties in ranking problems", Biometrika 33:239–251):
 *   tau_b = S / √((n0 − n1)(n0 − n2)), n0 = n(n−1)/2, n1 = Σ u(u−1)/2 over ties in time
 *   (none: times are distinct), n2 = Σ t(t−1)/2 over ties in value.
 */
import { twoSidedP } from './normal.js';
import { tieGroupSizes } from './ranks.js';

export interface MannKendallResult {
  n: number;
  s: number;
  varS: number;
  z: number;
  p: number;
  /** Kendall's tau-b between time and value. */
  tau: number;
}

/** S of a series given in time order. */
export function mannKendallS(values: ArrayLike<number>): number {
  let s = 0;
  const n = values.length;
  for (let i = 0; i < n - 1; i++) {
    const xi = values[i];
    for (let j = i + 1; j < n; j++) {
      const d = values[j] - xi;
      s += d > 0 ? 1 : d < 0 ? -1 : 0;
    }
  }
  return s;
}

/** Var(S) under no trend with the tie correction (Gilbert 1987 eq. 16.4). */
export function mannKendallVariance(n: number, tieSizes: readonly number[]): number {
  let ties = 0;
  for (const t of tieSizes) ties += t * (t - 1) * (2 * t + 5);
  return (n * (n - 1) * (2 * n + 5) - ties) / 18;
}

/** Z with the continuity correction (Gilbert 1987 eq. 16.5); 0 when Var(S) is 0. */
export function continuityZ(s: number, varS: number): number {
  if (!(varS > 0)) return 0;
  if (s > 0) return (s - 1) / Math.sqrt(varS);
  if (s < 0) return (s + 1) / Math.sqrt(varS);
  return 0;
}

/**
 * Mann–Kendall test of values in time order (no missing values: drop them first).
 * Needs n ≥ 2; a constant series gives Var(S) = 0, Z = 0, p = 1 and tau NaN
 * (callers report such series with a note instead, see {@link trendOfSeries}).
 *
 * @example mannKendall([1, 2, 3, 4, 5]) // { n: 5, s: 10, varS: 16.667, z: 2.2045, p: 0.02749, tau: 1 }
 */
export function mannKendall(values: ArrayLike<number>): MannKendallResult {
  const n = values.length;
  const s = mannKendallS(values);
  const ties = tieGroupSizes(values);
  const varS = mannKendallVariance(n, ties);
  const z = continuityZ(s, varS);
  const n0 = (n * (n - 1)) / 2;
  let n2 = 0;
  for (const t of ties) n2 += (t * (t - 1)) / 2;
  const tau = s / Math.sqrt(n0 * (n0 - n2));
  return { n, s, varS, z, p: twoSidedP(z), tau };
}
