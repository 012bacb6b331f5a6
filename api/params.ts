/**
 * Query parameters from text to values, their ranges checked (the schemas
 * have already checked their shape). Each refusal is an InputError naming the
 * parameter and what it accepts.
 */
import { InputError } from '../workers/core/errors.js';
import { parseYear, quoteGiven } from '../workers/core/year.js';
import { LIMIT_MAX } from './answers/common.js';
import { LIMIT_DESCRIPTION } from './schemas.js';

/** A year parameter (decimal digits, 1950-2100), or undefined when absent. */
export function yearParam(text: string | undefined, name: string): number | undefined {
  return text === undefined ? undefined : parseYear(text, `query parameter ${name}`);
}

/** from/to years, from not after to. */
export function yearRange(from: string | undefined, to: string | undefined): { from?: number; to?: number } {
  const f = yearParam(from, 'from');
  const t = yearParam(to, 'to');
  if (f !== undefined && t !== undefined && f > t) throw new InputError(`query parameter from (${f}) is after to (${t}); from must be the first year, to the last`);
  return { from: f, to: t };
}

/** limit: 1..LIMIT_MAX. */
export function limitParam(text: string | undefined): number | undefined {
  if (text === undefined) return undefined;
  const n = /^[0-9]{1,9}$/.test(text) ? Number(text) : NaN;
  if (!(n >= 1 && n <= LIMIT_MAX)) throw new InputError(`query parameter limit must be ${LIMIT_DESCRIPTION}, got ${quoteGiven(text)}`);
  return n;
}

/** alpha: a decimal fraction from 0.001 to 0.5. */
export function alphaParam(text: string | undefined): number | undefined {
  if (text === undefined) return undefined;
  const n = /^0?\.[0-9]{1,6}$/.test(text) ? Number(text) : NaN;
  if (!(n >= 0.001 && n <= 0.5)) throw new InputError(`query parameter alpha must be a decimal fraction from 0.001 to 0.5 (e.g. 0.05), got ${quoteGiven(text)}`);
  return n;
}

/** A calendar day YYYY-MM-DD that exists (UTC). */
export function dayParam(text: string | undefined, name: string): string | undefined {
  if (text === undefined) return undefined;
  const d = /^[0-9]{4}-[0-9]{2}-[0-9]{2}$/.test(text) ? new Date(`${text}T00:00:00Z`) : null;
  if (!d || Number.isNaN(d.getTime()) || d.toISOString().slice(0, 10) !== text) {
    throw new InputError(`query parameter ${name} must be a day written YYYY-MM-DD (UTC), got ${quoteGiven(text)}`);
  }
  const year = Number(text.slice(0, 4));
  parseYear(String(year), `query parameter ${name}'s year`);
  return text;
}

/** A numeric path id (scenes): decimal digits within a safe integer. */
export function idParam(text: string, name: string): number {
  const n = /^[0-9]{1,15}$/.test(text) ? Number(text) : NaN;
  if (!(n >= 1 && Number.isSafeInteger(n))) throw new InputError(`path parameter ${name} must be a whole number of up to 15 decimal digits, got ${quoteGiven(text)}`);
  return n;
}
