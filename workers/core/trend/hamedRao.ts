/**
 * Mann–Kendall variance corrected for serial correlation.
 *
 * Hamed, K.H. & Rao, A.R. 1998, "A modified Mann-Kendall trend test for
 * autocorrelated data", Journal of Hydrology 204:182–196 (eq. 26 for the
 * correction factor; equation number from memory):
 *
 *   n/n*_s = 1 + 2/(n(n−1)(n−2)) · Σ_{k=1}^{n−1} (n−k)(n−k−1)(n−k−2) · ρ_s(k)
 *   Var*(S) = Var(S) · n/n*_s
 *
 * ρ_s(k) is the lag-k autocorrelation of the RANKS of the series after its
 * trend is removed with Sen's slope (x_i − β·t_i). Only lags whose
 * autocorrelation is significant are kept: |ρ_s(k)| > z_{1−α/2}/√n with the
 * same alpha as the test (5 % by default). The autocorrelation is the usual
 * sample estimate Σ_{t}(r_t − r̄)(r_{t+k} − r̄) / Σ_t (r_t − r̄)².
 * Lags count observations: with years missing, neighbours in the series are
 * the neighbouring years that have a value.
 */
import { continuityZ } from './mannKendall.js';
import { normalQuantile, twoSidedP } from './normal.js';
import { averageRanks } from './ranks.js';

export interface HamedRaoResult {
  /** n/n*_s, the factor applied to Var(S). */
  factor: number;
  varSCorrected: number;
  zCorrected: number;
  pCorrected: number;
  /** The lags whose autocorrelation entered the sum. */
  lagsKept: number[];
}

/** Sample autocorrelation at lags 0..n−1 (denominator Σ(x − x̄)², no small-sample adjustment). */
export function autocorrelation(x: ArrayLike<number>): Float64Array {
  const n = x.length;
  let mean = 0;
  for (let i = 0; i < n; i++) mean += x[i];
  mean /= n;
  let c0 = 0;
  for (let i = 0; i < n; i++) c0 += (x[i] - mean) ** 2;
  const out = new Float64Array(n);
  for (let k = 0; k < n; k++) {
    let c = 0;
    for (let i = 0; i + k < n; i++) c += (x[i] - mean) * (x[i + k] - mean);
    out[k] = c0 > 0 ? c / c0 : 0;
  }
  return out;
}

/**
 * The corrected variance, Z and p for a series with Mann–Kendall S and Var(S)
 * and Sen's slope `slopePerTime`.
 * @example hamedRao(years, values, s, varS, slope) // { factor, zCorrected, pCorrected, ... }
 */
export function hamedRao(
  times: ArrayLike<number>,
  values: ArrayLike<number>,
  s: number,
  varS: number,
  slopePerTime: number,
  alpha = 0.05,
): HamedRaoResult {
  const n = values.length;
  const detrended = new Float64Array(n);
  for (let i = 0; i < n; i++) detrended[i] = values[i] - slopePerTime * times[i];
  const acf = autocorrelation(averageRanks(detrended));
  const bound = normalQuantile(1 - alpha / 2) / Math.sqrt(n);
  let sum = 0;
  const lagsKept: number[] = [];
  for (let k = 1; k < n; k++) {
    if (Math.abs(acf[k]) > bound) {
      sum += (n - k) * (n - k - 1) * (n - k - 2) * acf[k];
      lagsKept.push(k);
    }
  }
  const factor = 1 + (2 / (n * (n - 1) * (n - 2))) * sum;
  const varSCorrected = varS * factor;
  const zCorrected = continuityZ(s, varSCorrected);
  return { factor, varSCorrected, zCorrected, pCorrected: twoSidedP(zCorrected), lagsKept };
}
