/**
 * The one plain sentence that says what a district's trend result means:
 * a change told from chance (after the false discovery rate across the
 * city's districts, Benjamini & Hochberg 1995), no change told from chance,
 * or a series too short to tell.
 */
import { formatNumber } from './svg.js';

/** The fields of the API's trend result the sentence reads (slopes in the unit shown). */
export interface TrendForSentence {
  n: number;
  slope_per_decade: number | null;
  slope_ci_lower_per_decade: number | null;
  slope_ci_upper_per_decade: number | null;
  direction: 'increasing' | 'decreasing' | 'none' | null;
  alpha: number;
  districts_tested: number;
  note: string | null;
}

/** Decimals for a slope: 1 from 0.1 up, else 2 significant digits. */
function slopeText(v: number, ref: number): string {
  const a = Math.abs(ref);
  const dec = a >= 0.1 || a === 0 ? 1 : Math.min(8, Math.max(2, 1 - Math.floor(Math.log10(a))));
  return formatNumber(v, dec);
}

function districtsText(n: number): string {
  return `the city's ${n} district${n === 1 ? '' : 's'}`;
}

/**
 * "Night SUHI rose by 0.9 K per decade (95 % interval 0.4 to 1.3); this is more
 * than chance after accounting for the city's 12 districts." and its siblings.
 * `subject` is the metric's short label ("Night SUHI"), `unit` the unit shown ("K").
 */
export function trendSentence(subject: string, unit: string, t: TrendForSentence | null): string {
  if (t === null || t.slope_per_decade === null || t.direction === null) {
    const why = t?.note ? `: ${t.note}` : '';
    return `The series is too short to tell whether ${lower(subject)} is changing${why}.`;
  }
  const pct = `${formatNumber((1 - t.alpha) * 100, Number.isInteger((1 - t.alpha) * 100) ? 0 : 1)} %`;
  const s = t.slope_per_decade;
  const lo = t.slope_ci_lower_per_decade;
  const hi = t.slope_ci_upper_per_decade;
  const ref = Math.max(Math.abs(s), Math.abs(lo ?? 0), Math.abs(hi ?? 0));
  const perDecade = `${unit} per decade`;
  if (t.direction === 'increasing' || t.direction === 'decreasing') {
    const rose = t.direction === 'increasing';
    // magnitudes for "fell by", so the interval reads in the same sense as the verb
    const [a, b] = rose ? [lo, hi] : [hi === null ? null : -hi, lo === null ? null : -lo];
    const interval = a !== null && b !== null ? ` (${pct} interval ${slopeText(a, ref)} to ${slopeText(b, ref)})` : '';
    return `${subject} ${rose ? 'rose' : 'fell'} by ${slopeText(Math.abs(s), ref)} ${perDecade}${interval}; this is more than chance after accounting for ${districtsText(t.districts_tested)}.`;
  }
  const interval = lo !== null && hi !== null ? `, ${pct} interval ${slopeText(lo, ref)} to ${slopeText(hi, ref)}` : '';
  return `No trend in ${lower(subject)} can be told from chance after accounting for ${districtsText(t.districts_tested)} (Sen slope ${slopeText(s, ref)} ${perDecade}${interval}).`;
}

/** "Night SUHI" → "night SUHI" (keeps acronyms). */
function lower(subject: string): string {
  return subject.replace(/^[A-Z](?=[a-z])/, (c) => c.toLowerCase());
}
