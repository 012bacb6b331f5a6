/**
 * What the table modules (districts, runs, scenes, zonal-stats, derived,
 * district-tables) share: the `Db` they take (a store or a transaction handle),
 * the batch size of batched writes, and the checks of values headed for the
 * database.
 *
 * The table modules hold the writes and reads as plain functions over a
 * `Store` (or, where they need no transaction of their own, any `Queryable`,
 * such as the `tx` inside `store.transaction`). Every write is an idempotent
 * upsert keyed by a natural key: re-running a step leaves the same rows.
 * Batched writes pass one array per column and `unnest` them, so one statement
 * carries any number of rows with a fixed number of parameters (PostgreSQL
 * caps a statement at 65 535 parameters) and the same SQL runs on both stores.
 */
import type { Queryable, Store } from './interface.js';

/** A store, or a transaction handle (then the caller's transaction is used). */
export type Db = Store | Queryable;

/** Rows per statement in batched writes; 17 arrays of 5 000 values stay small. */
export const BATCH_ROWS = 5000;

export function isStore(db: Db): db is Store {
  return typeof (db as Store).transaction === 'function';
}

/** Run `fn` in a transaction of its own, or in the caller's when `db` is a transaction handle. */
export function inTransaction<T>(db: Db, fn: (q: Queryable) => Promise<T>): Promise<T> {
  return isStore(db) ? db.transaction(fn) : fn(db);
}

/** A number headed for a double precision column: finite, or null. NaN would be stored silently. */
export function num(value: number | null | undefined, field: string): number | null {
  if (value === null || value === undefined) return null;
  if (typeof value !== 'number' || !Number.isFinite(value)) {
    throw new Error(`store: ${field} must be a finite number or null, got ${String(value)}`);
  }
  return value;
}

/** A year headed for an integer parameter: a whole number, or null (no bound). */
export function yearOrNull(value: number | null | undefined): number | null {
  if (value === null || value === undefined) return null;
  if (!Number.isInteger(value)) throw new Error(`store: year must be an integer, got ${String(value)}`);
  return value;
}

export function json(value: unknown): string {
  return JSON.stringify(value ?? {});
}
