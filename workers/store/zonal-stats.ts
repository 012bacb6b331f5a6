/** The zonal_stats table: statistics of one district in one scene under one coverage rule. */
import type { Kelvin } from '../core/units.js';
import { type Db, BATCH_ROWS, inTransaction, num } from './db.js';
import { SCENE_HEADER_COLUMNS, SCENE_HEADER_PARAMS, SCENE_HEADER_UPDATE, SCENE_HEADER_VALUES, registerSceneReporting, sceneHeaderParams, setSceneWarnings, type SceneInput, type SceneStatus } from './scenes.js';

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

const N_ZONAL = ZONAL_FIELDS.length;

/**
 * The INSERT of a scene's rows: `sceneId` an SQL expression for the scene's id,
 * the rows' columns as arrays from parameter $`first` on (see {@link zonalParams}).
 */
function zonalInsert(sceneId: string, first: number): string {
  return `INSERT INTO zonal_stats (scene_id, district_id, ${ZONAL_FIELDS.map((f) => f[1]).join(', ')}, coverage_rule, run_id)
  SELECT ${sceneId}, * FROM unnest($${first}::text[], ${ZONAL_FIELDS.map((_, i) => `$${first + 1 + i}::double precision[]`).join(', ')},
                                   $${first + N_ZONAL + 1}::text[], $${first + N_ZONAL + 2}::bigint[])`;
}

/**
 * The common table expressions that replace a scene's rows in one statement:
 * `up` upserts them (returning their district ids), `gone` deletes the scene's
 * rows of other districts.
 */
function zonalReplaceCtes(sceneId: string, first: number): string {
  return `up AS (
    ${zonalInsert(sceneId, first)}
    ON CONFLICT (scene_id, district_id) DO UPDATE SET
      ${ZONAL_FIELDS.map((f) => `${f[1]} = EXCLUDED.${f[1]}`).join(', ')},
      coverage_rule = EXCLUDED.coverage_rule, run_id = EXCLUDED.run_id
    RETURNING district_id),
  gone AS (DELETE FROM zonal_stats WHERE scene_id = ${sceneId} AND NOT (district_id = ANY($${first}::text[])))`;
}

/** The rows' numeric columns in ZONAL_FIELDS order, each value checked (finite or null). */
function zonalColumns(rows: readonly ZonalStatsInput[]): (number | null)[][] {
  return ZONAL_FIELDS.map(([key]) => rows.map((r) => num(r[key] as number | null, `zonal ${key} of district ${r.districtId}`)));
}

/** The parameters of {@link zonalInsert}: district ids, the checked numeric columns, rules, run ids (a row's own, else `runId`). */
function zonalParams(rows: readonly ZonalStatsInput[], columns: (number | null)[][], runId: number | null): unknown[] {
  return [rows.map((r) => r.districtId), ...columns, rows.map((r) => r.coverageRule), rows.map((r) => r.runId ?? runId)];
}

const ZONAL_INSERT = zonalInsert('$1::bigint', 2);
const ZONAL_REPLACE_ONE = `WITH ${zonalReplaceCtes('$1::bigint', 2)},
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
  const columns = zonalColumns(rows);
  const runId = options.runId ?? null;
  if (rows.length <= BATCH_ROWS) {
    // One statement (atomic on its own): upsert the rows, drop the scene's other
    // rows, mark the scene processed. One round trip instead of five.
    const out = await db.query<{ n: number }>(ZONAL_REPLACE_ONE, [sceneId, ...zonalParams(rows, columns, runId), runId], { prepared: true }); // once a scene, keyed by scene id: kept planned on the server (QueryOptions)
    return out[0].n;
  }
  return inTransaction(db, async (q) => {
    await q.query('DELETE FROM zonal_stats WHERE scene_id = $1', [sceneId]);
    for (let start = 0; start < rows.length; start += BATCH_ROWS) {
      const end = Math.min(rows.length, start + BATCH_ROWS);
      await q.query(ZONAL_INSERT, [sceneId, ...zonalParams(rows.slice(start, end), columns.map((c) => c.slice(start, end)), runId)]);
    }
    await q.query(
      `UPDATE scenes SET status = 'processed', error = NULL, error_kind = NULL, processed_at = now(), run_id = coalesce($2, run_id)
       WHERE id = $1`,
      [sceneId, runId],
    );
    return rows.length;
  });
}

/** Parameters after the scene's header ($19 on): run id, warnings, then the zonal columns. */
const S = SCENE_HEADER_PARAMS;
const SCENE_STORE_ONE = `WITH stale AS (DELETE FROM scenes WHERE content_hash IS NULL AND path = $2),
  reg AS (
    INSERT INTO scenes (${SCENE_HEADER_COLUMNS}, status, run_id, processed_at, warnings)
    VALUES (${SCENE_HEADER_VALUES}, 'processed', $${S + 1}::bigint, now(), $${S + 2}::jsonb)
    ON CONFLICT (content_hash) DO UPDATE SET ${SCENE_HEADER_UPDATE},
      run_id = coalesce(EXCLUDED.run_id, scenes.run_id), status = 'processed', error = NULL, error_kind = NULL,
      processed_at = now(), warnings = EXCLUDED.warnings
    RETURNING id),
  ${zonalReplaceCtes('(SELECT id FROM reg)', S + 3)}
  SELECT (SELECT id FROM reg) AS id, (SELECT count(*) FROM up)::int AS n`;

/**
 * Store a processed scene: register it (as {@link registerSceneReporting} does,
 * with these reading warnings) and replace its zonal statistics with `rows`,
 * marking it 'processed' — one statement, so one round trip and one commit, and
 * a reader sees the scene with all its new rows or as it was before. More rows
 * than one statement takes: the registration, then {@link replaceZonalStats},
 * in one transaction (the same all-or-nothing, in more round trips).
 * Returns the scene id.
 */
export async function storeProcessedScene(
  db: Db,
  scene: SceneInput,
  rows: ZonalStatsInput[],
  options: { runId?: number | null; warnings?: readonly string[] } = {},
): Promise<number> {
  const warnings = options.warnings ?? [];
  if (!Array.isArray(warnings) || !warnings.every((w) => typeof w === 'string')) throw new Error('store: scene warnings must be a list of strings');
  // Validate everything before the first statement, so a bad value changes nothing.
  const header = sceneHeaderParams(scene);
  const columns = zonalColumns(rows);
  const runId = options.runId ?? scene.runId ?? null;
  if (rows.length > BATCH_ROWS) {
    return inTransaction(db, async (q) => {
      const { id } = await registerSceneReporting(q, { ...scene, runId });
      await setSceneWarnings(q, id, warnings);
      await replaceZonalStats(q, id, rows, { runId });
      return id;
    });
  }
  const out = await db.query<{ id: number; n: number }>(SCENE_STORE_ONE, [...header, runId, JSON.stringify(warnings), ...zonalParams(rows, columns, runId)],
    { prepared: true }); // once a scene: kept planned on the server (QueryOptions)
  return out[0].id;
}

/** What a scene job needs to know of a stored scene before it computes anything. */
export interface StoredSceneState {
  id: number;
  status: SceneStatus;
  /**
   * Districts with statistics under the coverage rule that are still current: computed in a
   * run that started after the district (its geometry, e.g. a rural ring with water cut out)
   * was last changed. Statistics of a district changed since, or of an unknown run, are not counted.
   */
  districts: string[];
  /** What a thermal scene's statistics were computed from (thermal-scenes.ts), or null. */
  lstInputsFingerprint: string | null;
}

/** The stored scene with this content hash, its current districts under `coverageRule`, or null: one round trip. */
export async function storedSceneState(db: Db, contentHash: string, coverageRule: string): Promise<StoredSceneState | null> {
  const rows = await db.query<StoredSceneState>(
    `SELECT s.id, s.status, s.lst_inputs_fingerprint AS "lstInputsFingerprint",
            coalesce((SELECT array_agg(z.district_id ORDER BY z.district_id COLLATE "C")
                      FROM zonal_stats z
                      JOIN districts d ON d.id = z.district_id
                      JOIN runs r ON r.id = z.run_id
                      WHERE z.scene_id = s.id AND z.coverage_rule = $2 AND r.started_at >= d.updated_at), '{}') AS districts
     FROM scenes s WHERE s.content_hash = $1`,
    [contentHash, coverageRule],
  );
  return rows[0] ?? null;
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
