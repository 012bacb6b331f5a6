/**
 * What the store holds, in brief (sql/queries/store_summary.sql, last_run.sql):
 * the schema version, the run that finished last and the years with values.
 * The API's health answer and its response tags (ETag) come from here.
 */
import { InputError } from '../core/errors.js';
import { yearRanges } from '../core/trend/index.js';
import type { UtcIso } from '../core/units.js';
import { namedQuery } from './queries.js';
import type { Db } from './db.js';

export interface StoreSummary {
  schema_version: number | null;
  last_run: { id: number; state: string; finished_at: UtcIso } | null;
  /** Calendar years with a derived value. */
  years: number[];
}

/** Schema version, the run that finished last and the years with values (sql/queries/store_summary.sql). */
export async function storeSummary(db: Db): Promise<StoreSummary> {
  const [r] = await db.query<{ schema_version: number | null; run_id: number | null; run_state: string | null; run_finished_at: UtcIso | null; years: number[] }>(namedQuery('store_summary'));
  return {
    schema_version: r.schema_version === null ? null : Number(r.schema_version),
    last_run: r.run_id === null ? null : { id: Number(r.run_id), state: String(r.run_state), finished_at: r.run_finished_at as UtcIso },
    years: (r.years ?? []).map(Number),
  };
}

/** The run that finished last (its id, state and end time, or null) and the newest run still running (or null). */
export async function runMarks(db: Db): Promise<{ last: { id: number; state: string; finished_at: UtcIso } | null; runningId: number | null }> {
  const [r] = await db.query<{ id: number | null; status: string | null; finished_at: UtcIso | null; running_id: number | null }>(namedQuery('last_run'));
  return {
    last: r.id === null ? null : { id: Number(r.id), state: String(r.status), finished_at: r.finished_at as UtcIso },
    runningId: r.running_id === null ? null : Number(r.running_id),
  };
}

/** Years in any order as short runs: [2020, 2015, 2016, 2017] → "2015-2017, 2020". */
export function yearRuns(years: readonly number[]): string {
  return yearRanges([...new Set(years)].sort((a, b) => a - b), ', ');
}

/**
 * The one check that the years a command asks for hold district values: of
 * `years` (the store's years with values), those within [from, to] (either end
 * open). Throws an InputError (exit 2) naming the years asked and the years
 * the store has when there are none, or saying that the store holds no values.
 */
export function yearsWithValuesIn(years: readonly number[], range: { from?: number; to?: number }): number[] {
  if (years.length === 0) throw new InputError('the store holds no district values yet: run `heatledger ingest` first');
  const inRange = years.filter((y) => (range.from === undefined || y >= range.from) && (range.to === undefined || y <= range.to));
  if (inRange.length === 0) {
    const asked = range.from !== undefined && range.from === range.to ? String(range.from)
      : range.from !== undefined && range.to !== undefined ? `${range.from}-${range.to}`
        : range.from !== undefined ? `${range.from} or later` : `${range.to} or earlier`;
    throw new InputError(`no district values for ${asked}; the store has ${yearRuns(years)}`);
  }
  return inRange;
}

/** yearsWithValuesIn on the store's own years with values. */
export async function requireValuesInYears(db: Db, range: { from?: number; to?: number }): Promise<number[]> {
  return yearsWithValuesIn((await storeSummary(db)).years, range);
}
