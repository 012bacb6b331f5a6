/** GET /api/health: the store kind, schema version, software version, the last run and the years with values. */
import type { Store } from '../../workers/store/index.js';
import { storeSummary } from '../../workers/store/store-summary.js';
import { VERSION } from '../../workers/version.js';

export interface HealthAnswer {
  ok: true;
  store: 'pg' | 'pglite';
  schema_version: number;
  version: string;
  last_run: { id: number; state: string; finished_at: string } | null;
  years: number[];
}

export async function answerHealth(store: Store): Promise<HealthAnswer> {
  const s = await storeSummary(store);
  return { ok: true, store: store.kind, schema_version: s.schema_version ?? 0, version: VERSION, last_run: s.last_run, years: s.years };
}
