/**
 * Argument checks for the pure-computation core. Each failure is an
 * InputError whose source is the calling function (or file) and whose message
 * names the argument and the value it got.
 */
import { InputError } from './errors.js';

/** The value as a finite number, else InputError naming `name`. */
export function requireFinite(value: unknown, name: string, source: string): number {
  if (typeof value !== 'number' || !Number.isFinite(value)) {
    throw new InputError(`${name} must be a finite number, got ${describeValue(value)}.`, source);
  }
  return value;
}

/** A finite number > 0, else InputError. */
export function requirePositive(value: unknown, name: string, source: string): number {
  const v = requireFinite(value, name, source);
  if (v <= 0) throw new InputError(`${name} must be greater than 0, got ${v}.`, source);
  return v;
}

/** A finite number within [min, max], else InputError. */
export function requireBetween(value: unknown, name: string, min: number, max: number, source: string): number {
  const v = requireFinite(value, name, source);
  if (v < min || v > max) throw new InputError(`${name} must be between ${min} and ${max}, got ${v}.`, source);
  return v;
}

/** A Date holding a valid instant, else InputError. */
export function requireDate(value: unknown, name: string, source: string): Date {
  if (!(value instanceof Date) || !Number.isFinite(value.getTime())) {
    throw new InputError(`${name} must be a valid Date, got ${describeValue(value)}.`, source);
  }
  return value;
}

/** Short printable form of any value for error messages. */
export function describeValue(value: unknown): string {
  if (value instanceof Date) return Number.isFinite(value.getTime()) ? value.toISOString() : 'an invalid Date';
  if (typeof value === 'string') return JSON.stringify(value.length > 40 ? `${value.slice(0, 40)}...` : value);
  if (typeof value === 'number' || typeof value === 'boolean' || typeof value === 'bigint') return String(value);
  if (value === null) return 'null';
  if (value === undefined) return 'undefined';
  return typeof value;
}
