/** The derived_metrics table: LST, SUHI and ATI per district and date. */
import type { AlbedoSource, DerivedRow as DerivedValues } from '../core/derive/metrics.js';
import { type Db, BATCH_ROWS, inTransaction, num } from './db.js';
import type { Store } from './interface.js';

export type { AlbedoSource };

/**
 * One district's derived values for one day scene and its night pair (or a
 * night pass alone): the derive step's row, with the stored reason and run.
 */
export interface DerivedInput extends DerivedValues {
  /** The reasons values are missing, when status is not 'ok'. */
  reason?: string | null;
  runId?: number | null;
}

export type DerivedRow = Required<DerivedInput>;

const DATE_RE = /^\d{4}-\d{2}-\d{2}$/;

/**
 * Insert or update derived metrics keyed by (obsDate, districtId, day scene or, without one, night scene),
 * in one transaction. Returns the number of rows given.
 */
export async function replaceDerived(db: Db, rows: DerivedInput[]): Promise<number> {
  for (const r of rows) {
    if (!DATE_RE.test(r.obsDate)) throw new Error(`store: derived obsDate must be YYYY-MM-DD, got "${r.obsDate}"`);
  }
  const f = (key: keyof DerivedInput) => rows.map((r) => num(r[key] as number | null, `derived ${key} of district ${r.districtId}`));
  const cols = [
    rows.map((r) => r.obsDate),
    rows.map((r) => r.districtId),
    rows.map((r) => r.daySceneId),
    rows.map((r) => r.nightSceneId),
    rows.map((r) => r.albedoSceneId),
    rows.map((r) => r.albedoSource),
    f('tDayKelvin'),
    f('tNightKelvin'),
    f('albedo'),
    f('atiPerKelvin'),
    f('suhiDayKelvin'),
    f('suhiNightKelvin'),
    rows.map((r) => r.status),
    rows.map((r) => r.reason ?? null),
    rows.map((r) => r.runId ?? null),
  ];
  return inTransaction(db, async (q) => {
    for (let start = 0; start < rows.length; start += BATCH_ROWS) {
      const end = Math.min(rows.length, start + BATCH_ROWS);
      await q.query(
        `INSERT INTO derived_metrics (obs_date, district_id, day_scene_id, night_scene_id, albedo_scene_id, albedo_source,
                                      t_day_k, t_night_k, albedo, ati_per_k, suhi_day_k, suhi_night_k, status, reason, run_id)
         SELECT * FROM unnest($1::date[], $2::text[], $3::bigint[], $4::bigint[], $5::bigint[], $6::text[],
                              $7::double precision[], $8::double precision[], $9::double precision[],
                              $10::double precision[], $11::double precision[], $12::double precision[],
                              $13::text[], $14::text[], $15::bigint[])
         ON CONFLICT (obs_date, district_id, (coalesce(day_scene_id, -night_scene_id))) DO UPDATE SET
           night_scene_id = EXCLUDED.night_scene_id, albedo_scene_id = EXCLUDED.albedo_scene_id,
           albedo_source = EXCLUDED.albedo_source, t_day_k = EXCLUDED.t_day_k, t_night_k = EXCLUDED.t_night_k,
           albedo = EXCLUDED.albedo, ati_per_k = EXCLUDED.ati_per_k, suhi_day_k = EXCLUDED.suhi_day_k,
           suhi_night_k = EXCLUDED.suhi_night_k, status = EXCLUDED.status, reason = EXCLUDED.reason,
           run_id = EXCLUDED.run_id`,
        cols.map((c) => c.slice(start, end)),
      );
    }
    return rows.length;
  });
}

/** Derived metrics, optionally of one district, ordered by district (byte order), date, day scene (night-only rows last), night scene. */
export function listDerived(db: Db, filter: { districtId?: string } = {}): Promise<DerivedRow[]> {
  return db.query<DerivedRow>(
    `SELECT obs_date AS "obsDate", district_id AS "districtId", day_scene_id AS "daySceneId",
            night_scene_id AS "nightSceneId", albedo_scene_id AS "albedoSceneId", albedo_source AS "albedoSource",
            t_day_k AS "tDayKelvin", t_night_k AS "tNightKelvin", albedo, ati_per_k AS "atiPerKelvin",
            suhi_day_k AS "suhiDayKelvin", suhi_night_k AS "suhiNightKelvin", status, reason, run_id AS "runId"
     FROM derived_metrics WHERE ($1::text IS NULL OR district_id = $1::text)
     ORDER BY district_id COLLATE "C", obs_date, day_scene_id, night_scene_id`,
    [filter.districtId ?? null],
  );
}

/** Replace every derived row of these districts with `rows`, in one transaction. */
export function replaceDerivedFor(store: Store, districtIds: string[], rows: DerivedInput[]): Promise<number> {
  return store.transaction(async (tx) => {
    await tx.query('DELETE FROM derived_metrics WHERE district_id = ANY($1::text[])', [districtIds]);
    return replaceDerived(tx, rows);
  });
}
