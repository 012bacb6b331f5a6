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

/** The run that finished last (its id, state and end time, or null) and the newest run still running (or null). */
export async function runMarks(db: Db): Promise<{ last: { id: number; state: string; finished_at: UtcIso } | null; runningId: number | null }> {
  const [r] = await db.query<{ id: number | null; status: string | null; finished_at: UtcIso | null; running_id: number | null }>(namedQuery('last_run'));
  return {
    last: r.id === null ? null : { id: Number(r.id), state: String(r.status), finished_at: r.finished_at as UtcIso },
    runningId: r.running_id === null ? null : Number(r.running_id),
  };
}
