import { InputError } from '../errors.js';

/**
 * Argument checks for the thermal functions. Each failure is an InputError whose
 * source is the calling function and whose message names the argument.
 */
/** The value as a finite number, else InputError naming `name`. */
export function requireFinite(value: unknown, name: string, source: string): number {
  if (typeof value !== 'number' || !Number.isFinite(value)) {
    throw new InputError(`${name} must be a finite number, got ${String(value)}.`, source);
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
