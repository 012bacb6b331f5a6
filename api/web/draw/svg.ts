/**
 * Small helpers for building SVG text: escaping and number formatting.
 * Pure functions with no DOM access, shared by the page (browser) and the
 * yearly report (Node).
 */

/** Text or attribute content with the five XML special characters escaped. */
export function esc(value: unknown): string {
  return String(value ?? '').replace(/[&<>"']/g, (c) => `&#${c.charCodeAt(0)};`);
}

/** A coordinate rounded to 0.1 px, without a trailing ".0" (keeps the SVG small). */
export function px(v: number): string {
  const r = Math.round(v * 10) / 10;
  return Object.is(r, -0) ? '0' : String(r);
}

/** Attributes from an object; undefined and null values are left out, all values escaped. */
export function attrs(a: Record<string, string | number | null | undefined>): string {
  return Object.entries(a)
    .filter(([, v]) => v !== undefined && v !== null)
    .map(([k, v]) => ` ${k}="${esc(v)}"`)
    .join('');
}

/** Fewest decimals (0–6) that show `step` exactly: 0.25 → 2, 0.5 → 1, 2 → 0. */
export function decimalsFor(step: number): number {
  for (let d = 0; d <= 6; d++) {
    const scaled = Math.abs(step) * 10 ** d;
    if (Math.abs(scaled - Math.round(scaled)) < 1e-6 * Math.max(1, scaled)) return d;
  }
  return 6;
}

/** A number with `decimals` places, a true minus sign (U+2212) and no "−0". */
export function formatNumber(v: number, decimals: number): string {
  const s = v.toFixed(decimals);
  if (/^-0(\.0*)?$/.test(s)) return s.slice(1);
  return s.startsWith('-') ? `\u2212${s.slice(1)}` : s;
}
