/**
 * Acquisition time of a scene from its metadata, normalised to UTC
 * "YYYY-MM-DDTHH:MM:SSZ" (ISO 8601).
 */
import { InputError } from '../errors.js';

const pad = (n: number, w = 2) => String(n).padStart(w, '0');

/**
 * Normalise one timestamp text to "YYYY-MM-DDTHH:MM:SSZ".
 * Accepts ISO 8601 with "T" or a space, TIFF's "YYYY:MM:DD HH:MM:SS" (TIFF 6.0
 * tag 306), optional fractional seconds (dropped) and an optional "Z" or
 * ±HH[:]MM offset (converted to UTC). Text without an offset is read as UTC.
 * @returns the normalised time, "date-only" for a bare date, null for blank
 *   text (TIFF writes blanks for an unknown time), "invalid" otherwise
 * @example normaliseTimestamp('2024-07-14T15:30:00+02:00') // '2024-07-14T13:30:00Z'
 */
export function normaliseTimestamp(text: string): string | null | 'invalid' | 'date-only' {
  const t = text.trim();
  if (t === '' || /^[\s:]*$/.test(t)) return null;
  if (/^\d{4}[-:/]\d{2}[-:/]\d{2}$/.test(t)) return 'date-only';
  const m = /^(\d{4})[-:/](\d{2})[-:/](\d{2})[T ]+(\d{2}):(\d{2})(?::(\d{2})(?:[.,]\d+)?)?\s*(Z|UTC|GMT|[+-]\d{2}(?::?\d{2})?)?$/i.exec(t);
  if (!m) return 'invalid';
  const [, ys, mos, ds, hs, mis, ss, tz] = m;
  const y = +ys, mo = +mos, d = +ds, h = +hs, mi = +mis, s = ss === undefined ? 0 : +ss;
  if (mo < 1 || mo > 12 || d < 1 || d > 31 || h > 24 || mi > 59 || s > 60) return 'invalid';
  let offsetMinutes = 0;
  if (tz && /^[+-]/.test(tz)) {
    const sign = tz[0] === '-' ? -1 : 1;
    const digits = tz.slice(1).replace(':', '');
    offsetMinutes = sign * (+digits.slice(0, 2) * 60 + (digits.length > 2 ? +digits.slice(2, 4) : 0));
  }
  const ms = Date.UTC(y, mo - 1, d, h, mi, s) - offsetMinutes * 60000;
  const dt = new Date(ms);
  // Reject dates that Date.UTC would roll over (e.g. 31 February).
  if (new Date(Date.UTC(y, mo - 1, d)).getUTCDate() !== d) return 'invalid';
  return `${pad(dt.getUTCFullYear(), 4)}-${pad(dt.getUTCMonth() + 1)}-${pad(dt.getUTCDate())}T${pad(dt.getUTCHours())}:${pad(dt.getUTCMinutes())}:${pad(dt.getUTCSeconds())}Z`;
}

/**
 * The scene's acquisition time. Candidates in order: metadata items
 * ACQUISITION_TIME, DATETIME, ACQUISITION_DATE (+ ACQUISITION_TIME when that
 * holds a time of day only), TIFFTAG_DATETIME, then the TIFF DateTime tag.
 * Blank and date-only values are passed over; any other value that is not a
 * timestamp is an InputError (a wrong time would silently misfile the scene).
 * @param items dataset metadata (item names compared case-insensitively)
 * @param tiffDateTime TIFF tag 306 text, or null
 * @returns "YYYY-MM-DDTHH:MM:SSZ" or null when no candidate holds a time
 */
export function acquisitionTime(
  items: Record<string, string>,
  tiffDateTime: string | null,
  path: string,
): string | null {
  const get = (name: string): string | null => {
    for (const [k, v] of Object.entries(items)) if (k.toUpperCase() === name) return v;
    return null;
  };
  const candidates: [string, string | null][] = [];
  const acqTime = get('ACQUISITION_TIME');
  const acqDate = get('ACQUISITION_DATE');
  const timeOfDayOnly = acqTime !== null && /^\s*\d{2}:\d{2}(:\d{2}([.,]\d+)?)?\s*(Z|UTC|[+-]\d{2}(:?\d{2})?)?\s*$/i.test(acqTime);
  if (!timeOfDayOnly) candidates.push(['ACQUISITION_TIME', acqTime]);
  candidates.push(['DATETIME', get('DATETIME')]);
  if (acqDate !== null) {
    const date = acqDate.trim();
    candidates.push(['ACQUISITION_DATE', timeOfDayOnly ? `${date}T${acqTime!.trim()}` : date]);
  }
  candidates.push(['TIFFTAG_DATETIME', get('TIFFTAG_DATETIME')]);
  candidates.push(['TIFF DateTime tag', tiffDateTime]);
  for (const [name, value] of candidates) {
    if (value === null) continue;
    const r = normaliseTimestamp(value);
    if (r === null || r === 'date-only') continue;
    if (r === 'invalid') throw new InputError(`${name} "${value.trim()}" is not a recognisable timestamp`, path);
    return r;
  }
  return null;
}
