/**
 * Global Moran's I with its moments under normality and under randomisation.
 *
 * Moran, P.A.P. 1950, "Notes on continuous stochastic phenomena", Biometrika
 * 37:17–23; moments from Cliff, A.D. & Ord, J.K. 1981, Spatial Processes:
 * Models & Applications, Pion, ch. 1 (eqs. 1.35–1.38, from memory):
 *
 *   I = (n / S0) · Σ_i Σ_j w_ij z_i z_j / Σ_i z_i²,   z = x − x̄
 *   E[I] = −1/(n − 1)
 *   Var_N(I) = (n² S1 − n S2 + 3 S0²) / (S0² (n² − 1)) − E[I]²
 *   Var_R(I) = [n((n² − 3n + 3) S1 − n S2 + 3 S0²) − b2((n² − n) S1 − 2n S2 + 6 S0²)]
 *              / ((n − 1)(n − 2)(n − 3) S0²) − E[I]²
 *   S0 = Σ w_ij,  S1 = ½ Σ (w_ij + w_ji)²,  S2 = Σ_i (w_i· + w_·i)²,  b2 = n Σ z⁴ / (Σ z²)²
 *
 * Weights: row-standardised (each neighbour of i weighs 1/|N(i)|; no self).
 * A district without neighbours has a zero row; it still counts in x̄, z and
 * b2, but n in the constants (n/S0, E[I], the variances) counts only districts
 * with neighbours (common practice, no source). p-values are two-sided.
 */
import { twoSidedP } from '../trend/normal.js';

export interface MoranResult {
  i: number;
  expected: number;
  variance_normal: number;
  z_normal: number;
  p_normal: number;
  variance_randomisation: number;
  z_randomisation: number;
  p_randomisation: number;
  /** Districts without neighbours (left out of n in the constants). */
  islands: number;
}

/**
 * @example moranI([10, 12, 20, 22, 11], [[1], [0, 2], [1, 3], [2, 4], [3]]).i
 * @returns null when fewer than 4 districts have neighbours or the values are constant
 */
export function moranI(values: readonly number[], neighbourLists: readonly (readonly number[])[]): MoranResult | null {
  const nAll = values.length;
  let mean = 0;
  for (const x of values) mean += x;
  mean /= nAll;
  const z = values.map((x) => x - mean);
  let m2 = 0, m4 = 0;
  for (const v of z) { m2 += v * v; m4 += v ** 4; }
  const islands = neighbourLists.filter((l) => l.length === 0).length;
  const n = nAll - islands;
  if (n < 4 || !(m2 > 0)) return null;
  // Row-standardised weights as a sparse map, to get S1 and S2 with w_ji.
  const w = new Map<number, number>();
  const rowSum = new Float64Array(nAll);
  const colSum = new Float64Array(nAll);
  let s0 = 0, cross = 0;
  for (let i = 0; i < nAll; i++) {
    const list = neighbourLists[i];
    if (list.length === 0) continue;
    const wij = 1 / list.length;
    for (const j of list) {
      w.set(i * nAll + j, wij);
      rowSum[i] += wij;
      colSum[j] += wij;
      s0 += wij;
      cross += wij * z[i] * z[j];
    }
  }
  // S1 = ½ Σ over ordered pairs (i, j) of (w_ij + w_ji)²: a pair present one way only is
  // visited once here but stands for two ordered pairs of equal value.
  let s1 = 0;
  for (const [key, wij] of w) {
    const i = Math.floor(key / nAll), j = key % nAll;
    const wji = w.get(j * nAll + i);
    s1 += wji === undefined ? 2 * wij * wij : (wij + wji) ** 2;
  }
  s1 /= 2;
  let s2 = 0;
  for (let i = 0; i < nAll; i++) s2 += (rowSum[i] + colSum[i]) ** 2;
  const I = (n / s0) * (cross / m2);
  const e = -1 / (n - 1);
  const s02 = s0 * s0;
  const nn = n * n;
  const varN = (nn * s1 - n * s2 + 3 * s02) / (s02 * (nn - 1)) - e * e;
  const b2 = (nAll * m4) / (m2 * m2);
  const varR =
    (n * ((nn - 3 * n + 3) * s1 - n * s2 + 3 * s02) - b2 * ((nn - n) * s1 - 2 * n * s2 + 6 * s02)) /
      ((n - 1) * (n - 2) * (n - 3) * s02) - e * e;
  const zN = (I - e) / Math.sqrt(varN);
  const zR = (I - e) / Math.sqrt(varR);
  return {
    i: I, expected: e,
    variance_normal: varN, z_normal: zN, p_normal: twoSidedP(zN),
    variance_randomisation: varR, z_randomisation: zR, p_randomisation: twoSidedP(zR),
    islands,
  };
}
