/**
 * Calendar years as the user types them (CLI `--year`, API `year=`): plain
 * decimal digits in a range that satellite LST archives can hold. Hex, binary,
 * exponents, fractions, signs and blanks are refused, so `0x7e4` or `2.02e3`
 * is never read as 2020.
 */
import { InputError } from './errors.js';

/** First and last year accepted (thermal satellite archives start in the 1970s). */
export const YEAR_MIN = 1950;
export const YEAR_MAX = 2100;

/**
 * The whole number written as 1 to `maxDigits` plain decimal digits (no sign, blank,
 * point, exponent, 0x or 0b), else NaN: the one reader of digits the user types (years,
 * counts, ports, environment variables), which then checks the range and words the message.
 * @example decimalWhole('2020') // 2020; decimalWhole('0x7e4') // NaN
 */
export function decimalWhole(text: string, maxDigits: number): number {
  return text.length >= 1 && text.length <= maxDigits && /^[0-9]+$/.test(text) ? Number(text) : NaN;
}

/** A short, printable quote of what was given (a request may send anything). */
export function quoteGiven(text: string, limit = 40): string {
  const clipped = text.length > limit ? `${text.slice(0, limit)}...` : text;
  return JSON.stringify(clipped);
}

/**
 * Parse a year given as text; `what` names the option or parameter in the
 * message (e.g. "--year" or "query parameter year").
 */
export function parseYear(text: string, what: string): number {
  const n = decimalWhole(text, 9);
  if (!(Number.isInteger(n) && n >= YEAR_MIN && n <= YEAR_MAX)) {
    throw new InputError(`${what} must be a year written in decimal digits from ${YEAR_MIN} to ${YEAR_MAX}, got ${quoteGiven(text)}`);
  }
  return n;
}
