/**
 * Standard normal distribution: two-sided tail probability and quantile, from
 * the @stdlib packages (erfc and the normal quantile), so p-values stay exact
 * far into the tails (2·(1 − Φ(|z|)) would lose digits below ~1e-16).
 */
import erfc from '@stdlib/math-base-special-erfc';
import quantile from '@stdlib/stats-base-dists-normal-quantile';

/**
 * Two-sided p-value of a standard normal statistic: P(|Z| ≥ |z|) = erfc(|z|/√2).
 * @example twoSidedP(1.959964) // ≈ 0.05
 */
export function twoSidedP(z: number): number {
  return erfc(Math.abs(z) / Math.SQRT2);
}

/**
 * Quantile of the standard normal distribution (probability 0 < p < 1).
 * @example normalQuantile(0.975) // 1.959963984540054
 */
export function normalQuantile(p: number): number {
  return quantile(p, 0, 1);
}
