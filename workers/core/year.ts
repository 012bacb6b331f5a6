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

const DECIMAL_DIGITS = /^[0-9]{1,9}$/;

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
  const n = DECIMAL_DIGITS.test(text) ? Number(text) : NaN;
  if (!(Number.isInteger(n) && n >= YEAR_MIN && n <= YEAR_MAX)) {
    throw new InputError(`${what} must be a year written in decimal digits from ${YEAR_MIN} to ${YEAR_MAX}, got ${quoteGiven(text)}`);
  }
  return n;
}
