/**
 * Benjamini–Hochberg false discovery rate.
 *
 * Benjamini, Y. & Hochberg, Y. 1995, "Controlling the false discovery rate: a
 * practical and powerful approach to multiple testing", JRSS B 57:289–300.
 * Adjusted p-values ("q"): for p sorted ascending p_(1) ≤ … ≤ p_(m),
 *   q_(i) = min_{j ≥ i} min(1, m · p_(j) / j);
 * a hypothesis is rejected at level alpha when its q ≤ alpha (the step-up rule).
 */

/**
 * q-values in the input's order; null/NaN entries stay null and do not count in m.
 * @example benjaminiHochberg([0.01, 0.04, 0.03]) // [0.03, 0.04, 0.04]
 */
export function benjaminiHochberg(pValues: readonly (number | null)[]): (number | null)[] {
  const idx: number[] = [];
  for (let i = 0; i < pValues.length; i++) {
    const p = pValues[i];
    if (p !== null && Number.isFinite(p)) idx.push(i);
  }
  idx.sort((a, b) => (pValues[a] as number) - (pValues[b] as number));
  const m = idx.length;
  const out: (number | null)[] = pValues.map(() => null);
  let running = 1;
  for (let r = m - 1; r >= 0; r--) {
    const q = Math.min(1, (m * (pValues[idx[r]] as number)) / (r + 1));
    running = Math.min(running, q);
    out[idx[r]] = running;
  }
  return out;
}
