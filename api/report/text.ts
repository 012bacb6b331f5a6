/**
 * Writing numbers and words into the report: HTML escaping, temperatures in
 * the unit asked for, and the `<data>` element every stated figure sits in
 * (its `value` holds the number as the API gave it, so a reader's tool, or a
 * test, can check the sentence against the API).
 */
import { PRECISION, roundNumber, type Precision } from '../../workers/format.js';
import { KELVIN_AT_ZERO_CELSIUS, type TemperatureUnit } from '../web/draw/metrics.js';
import { esc } from '../web/draw/svg.js';

// the one escape of text for HTML and SVG, shared with the page's drawing code
export { esc };
export type { TemperatureUnit };

/** The unit's symbol: "K" or "°C". */
export function unitSymbol(units: TemperatureUnit): string {
  return units === 'C' ? '°C' : 'K';
}

/** A number with `digits` decimals, a true minus sign, "−0.00" shown as "0.00"; "–" when missing. */
export function fixed(v: number | null | undefined, digits: number, signed = false): string {
  if (v === null || v === undefined || !Number.isFinite(v)) return '–';
  let s = v.toFixed(digits);
  if (/^-0\.?0*$/.test(s)) s = s.slice(1);
  if (s.startsWith('-')) return `−${s.slice(1)}`;
  return signed && Number(s) !== 0 ? `+${s}` : s;
}

/**
 * A temperature difference (SUHI, a change, a slope) in the unit asked for:
 * a difference of 1 K is a difference of 1 °C, so only the symbol changes.
 */
export function difference(v: number | null | undefined, units: TemperatureUnit, digits = 2, signed = true): string {
  return `${fixed(v, digits, signed)} ${unitSymbol(units)}`;
}

/** An absolute temperature (LST, kelvin in the store) in the unit asked for. */
export function temperature(kelvin: number | null | undefined, units: TemperatureUnit, digits = 1): string {
  if (kelvin === null || kelvin === undefined || !Number.isFinite(kelvin)) return '–';
  return `${fixed(units === 'C' ? kelvin - KELVIN_AT_ZERO_CELSIUS : kelvin, digits)} ${unitSymbol(units)}`;
}

/**
 * A stated figure: the shown text inside `<data>`, its value the number the
 * API returned (or computed from its answers, as the city's area-weighted mean)
 * rounded as the API rounds (workers/format.ts: 0.0001 K, also for differences
 * and slopes per decade; counts and ranks are whole numbers anyway) and
 * `data-figure` its name (e.g. "city_suhi_night_k").
 */
export function figure(name: string, value: number | null, shown: string, precision: Precision = PRECISION.kelvin): string {
  const rounded = roundNumber(value, precision);
  return rounded === null
    ? `<data data-figure="${esc(name)}" value="">${esc(shown)}</data>`
    : `<data data-figure="${esc(name)}" value="${rounded}">${esc(shown)}</data>`;
}

/** "A", "A and B", "A, B and C". */
export function listWords(items: readonly string[]): string {
  if (items.length <= 1) return items.join('');
  return `${items.slice(0, -1).join(', ')} and ${items[items.length - 1]}`;
}

/** "1 district", "3 districts". */
export function count(n: number, singular: string, plural = `${singular}s`): string {
  return `${n} ${n === 1 ? singular : plural}`;
}

/** A p or q value for a table: 2 significant digits, "< 0.001" below that. */
export function probability(v: number | null | undefined): string {
  if (v === null || v === undefined || !Number.isFinite(v)) return '–';
  return v < 0.001 ? '< 0.001' : v.toPrecision(2);
}

/** A share 0..1 as a whole percentage. */
export function percent(share: number | null | undefined): string {
  if (share === null || share === undefined || !Number.isFinite(share)) return '–';
  return `${Math.round(share * 100)} %`;
}
