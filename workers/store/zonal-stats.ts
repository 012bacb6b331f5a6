/** The zonal_stats table: statistics of one district in one scene under one coverage rule. */
import type { Kelvin } from '../core/units.js';
import { type Db, BATCH_ROWS, inTransaction, num } from './db.js';

/** One district's statistics for one scene. Kelvin; counts in pixels (or summed coverage weights). */
export interface ZonalStatsInput {
  districtId: string;
  pixels: number;
  valid: number;
  validFraction: number | null;
  meanKelvin: Kelvin | null;
  stdKelvin: Kelvin | null;
  minKelvin: Kelvin | null;
  maxKelvin: Kelvin | null;
  medianKelvin: Kelvin | null;
  p10Kelvin: Kelvin | null;
  p90Kelvin: Kelvin | null;
  nodataCount: number;
  maskedCount: number;
  implausibleCount: number;
  /** e.g. 'centre' or 'fraction'. */
  coverageRule: string;
  runId?: number | null;
}

export interface ZonalStatsRow extends Omit<ZonalStatsInput, 'runId'> {
  sceneId: number;
  runId: number | null;
}

const ZONAL_FIELDS = [
  ['pixels', 'pixels'],
  ['valid', 'valid'],
  ['validFraction', 'valid_fraction'],
  ['meanKelvin', 'mean_k'],
  ['stdKelvin', 'std_k'],
  ['minKelvin', 'min_k'],
  ['maxKelvin', 'max_k'],
  ['medianKelvin', 'median_k'],
  ['p10Kelvin', 'p10_k'],
  ['p90Kelvin', 'p90_k'],
  ['nodataCount', 'nodata_count'],
  ['maskedCount', 'masked_count'],
  ['implausibleCount', 'implausible_count'],
] as const;

const ZONAL_INSERT = `INSERT INTO zonal_stats (scene_id, district_id, ${ZONAL_FIELDS.map((f) => f[1]).join(', ')}, coverage_rule, run_id)
  SELECT $1::bigint, * FROM unnest($2::text[], ${ZONAL_FIELDS.map((_, i) => `$${i + 3}::double precision[]`).join(', ')},
                           $${ZONAL_FIELDS.length + 3}::text[], $${ZONAL_FIELDS.length + 4}::bigint[])`;

const N_ZONAL = ZONAL_FIELDS.length;
const ZONAL_REPLACE_ONE = `WITH up AS (
    ${ZONAL_INSERT}
    ON CONFLICT (scene_id, district_id) DO UPDATE SET
      ${ZONAL_FIELDS.map((f) => `${f[1]} = EXCLUDED.${f[1]}`).join(', ')},
      coverage_rule = EXCLUDED.coverage_rule, run_id = EXCLUDED.run_id
    RETURNING district_id),
  gone AS (DELETE FROM zonal_stats WHERE scene_id = $1::bigint AND NOT (district_id = ANY($2::text[]))),
  mark AS (UPDATE scenes SET status = 'processed', error = NULL, error_kind = NULL, processed_at = now(),
                             run_id = coalesce($${N_ZONAL + 5}::bigint, run_id)
           WHERE id = $1::bigint)
  SELECT count(*)::int AS n FROM up`;

/**
 * Replace all zonal statistics of scene `sceneId` with `rows` and mark the
 * scene 'processed' (run id, processed_at), in one transaction: a reader sees
 * the old rows or the new ones, never a mix. Returns the number of rows written.
 */
export async function replaceZonalStats(
  db: Db,
  sceneId: number,
  rows: ZonalStatsInput[],
  options: { runId?: number | null } = {},
): Promise<number> {
  // Validate everything before the first statement, so a bad row changes nothing.
  const columns = ZONAL_FIELDS.map(([key]) =>
    rows.map((r) => num(r[key] as number | null, `zonal ${key} of district ${r.districtId}`)),
  );
  if (rows.length <= BATCH_ROWS) {
    // One statement (atomic on its own): upsert the rows, drop the scene's other
    // rows, mark the scene processed. One round trip instead of five.
    const out = await db.query<{ n: number }>(ZONAL_REPLACE_ONE, [
      sceneId,
      rows.map((r) => r.districtId),
      ...columns,
      rows.map((r) => r.coverageRule),
      rows.map((r) => r.runId ?? options.runId ?? null),
      options.runId ?? null,
    ], { prepared: true }); // once a scene, keyed by scene id: kept planned on the server (QueryOptions)
    return out[0].n;
  }
  return inTransaction(db, async (q) => {
    await q.query('DELETE FROM zonal_stats WHERE scene_id = $1', [sceneId]);
    for (let start = 0; start < rows.length; start += BATCH_ROWS) {
      const end = Math.min(rows.length, start + BATCH_ROWS);
      const batch = rows.slice(start, end);
      await q.query(ZONAL_INSERT, [
        sceneId,
        batch.map((r) => r.districtId),
        ...columns.map((c) => c.slice(start, end)),
        batch.map((r) => r.coverageRule),
        batch.map((r) => r.runId ?? options.runId ?? null),
      ]);
    }
    await q.query(
      `UPDATE scenes SET status = 'processed', error = NULL, error_kind = NULL, processed_at = now(), run_id = coalesce($2, run_id)
       WHERE id = $1`,
      [sceneId, options.runId ?? null],
    );
    return rows.length;
  });
}

/** Zonal statistics of the given scenes, ordered by scene id then district id (byte order). */
export function zonalStatsForScenes(db: Db, sceneIds: number[]): Promise<ZonalStatsRow[]> {
  return db.query<ZonalStatsRow>(
    `SELECT scene_id AS "sceneId", district_id AS "districtId", pixels, valid, valid_fraction AS "validFraction",
            mean_k AS "meanKelvin", std_k AS "stdKelvin", min_k AS "minKelvin", max_k AS "maxKelvin",
            median_k AS "medianKelvin", p10_k AS "p10Kelvin", p90_k AS "p90Kelvin",
            nodata_count AS "nodataCount", masked_count AS "maskedCount", implausible_count AS "implausibleCount",
            coverage_rule AS "coverageRule", run_id AS "runId"
     FROM zonal_stats WHERE scene_id = ANY($1::bigint[])
     ORDER BY scene_id, district_id COLLATE "C"`,
    [sceneIds],
  );
}

/** What the derive step reads of a district's statistics in a scene. */
export interface ZonalMean {
  sceneId: number;
  districtId: string;
  meanKelvin: Kelvin | null;
  validFraction: number | null;
}

/**
 * Mean and valid fraction of these districts in these scenes, ordered as
 * {@link zonalStatsForScenes}: what the derive step needs of every row, without
 * the eleven other columns.
 */
export function zonalMeansForScenes(db: Db, sceneIds: readonly number[], districtIds: readonly string[]): Promise<ZonalMean[]> {
  return db.query<ZonalMean>(
    `SELECT scene_id AS "sceneId", district_id AS "districtId", mean_k AS "meanKelvin", valid_fraction AS "validFraction"
     FROM zonal_stats WHERE scene_id = ANY($1::bigint[]) AND district_id = ANY($2::text[])
     ORDER BY scene_id, district_id COLLATE "C"`,
    [sceneIds, districtIds],
  );
}

/**
 * District ids with statistics for a scene under a coverage rule that are still current: computed
 * in a run that started after the district (its geometry, e.g. a rural ring with water cut out)
 * was last changed. Statistics of a district changed since, or of an unknown run, are not counted.
 */
export async function zonalDistrictsOfScene(db: Db, sceneId: number, coverageRule: string): Promise<string[]> {
  return (await db.query<{ id: string }>(
    `SELECT z.district_id AS id
     FROM zonal_stats z
     JOIN districts d ON d.id = z.district_id
     JOIN runs r ON r.id = z.run_id
     WHERE z.scene_id = $1 AND z.coverage_rule = $2 AND r.started_at >= d.updated_at
     ORDER BY z.district_id COLLATE "C"`,
    [sceneId, coverageRule],
  )).map((r) => r.id);
}
