/**
 * What the store holds, in brief (sql/queries/store_summary.sql, last_run.sql):
 * the schema version, the run that finished last and the years with values.
 * The API's health answer and its response tags (ETag) come from here.
 */
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

/** The run that finished last (its id, state and end time), or null: what the store holds changes only when a run ends. */
export async function lastFinishedRun(db: Db): Promise<{ id: number; state: string; finished_at: UtcIso } | null> {
  const [r] = await db.query<{ id: number; status: string; finished_at: UtcIso }>(namedQuery('last_run'));
  return r ? { id: Number(r.id), state: r.status, finished_at: r.finished_at } : null;
}
