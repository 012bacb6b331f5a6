/**
 * The writes and reads the pipeline needs, as plain functions over a `Store`
 * (or, where they need no transaction of their own, any `Queryable`, such as
 * the `tx` inside `store.transaction`). Every write is an idempotent upsert
 * keyed by a natural key: re-running a step leaves the same rows.
 *
 * Batched writes pass one array per column and `unnest` them, so one statement
 * carries any number of rows with a fixed number of parameters (PostgreSQL
 * caps a statement at 65 535 parameters) and the same SQL runs on both stores.
 */
import type { Epsg, Kelvin, SquareMetres, UtcIso } from '../core/units.js';
import type { AlbedoSource, DerivedRow as DerivedValues } from '../core/derive/metrics.js';
import { namedQuery } from './queries.js';
import type { Queryable, Store } from './store.js';

/** A store, or a transaction handle (then the caller's transaction is used). */
export type Db = Store | Queryable;

/** Rows per statement in batched writes; 17 arrays of 5 000 values stay small. */
const BATCH_ROWS = 5000;

function isStore(db: Db): db is Store {
  return typeof (db as Store).transaction === 'function';
}

/** Run `fn` in a transaction of its own, or in the caller's when `db` is a transaction handle. */
function inTransaction<T>(db: Db, fn: (q: Queryable) => Promise<T>): Promise<T> {
  return isStore(db) ? db.transaction(fn) : fn(db);
}

/** A number headed for a double precision column: finite, or null. NaN would be stored silently. */
function num(value: number | null | undefined, field: string): number | null {
  if (value === null || value === undefined) return null;
  if (typeof value !== 'number' || !Number.isFinite(value)) {
    throw new Error(`store: ${field} must be a finite number or null, got ${String(value)}`);
  }
  return value;
}

function json(value: unknown): string {
  return JSON.stringify(value ?? {});
}

// ---------------------------------------------------------------------------
// districts

/** GeoJSON geometry object (RFC 7946), lon/lat. */
export interface GeoJsonGeometry {
  type: string;
  coordinates?: unknown;
  geometries?: unknown;
}

export interface DistrictInput {
  id: string;
  name: string;
  /** 'rural' marks the rural reference polygon of SUHI; default 'district'. */
  role?: 'district' | 'rural';
  /** A GeoJSON geometry, or bare MultiPolygon coordinates (as `District.geometry` carries them). */
  geometry: GeoJsonGeometry | number[][][][];
  areaSquareMetres: SquareMetres;
  properties?: Record<string, unknown>;
}

export interface DistrictRow {
  id: string;
  name: string;
  role: 'district' | 'rural';
  geometry: GeoJsonGeometry;
  areaSquareMetres: SquareMetres;
  properties: Record<string, unknown>;
  updatedAt: UtcIso;
}

/**
 * Insert or update districts by id (a row whose content is unchanged keeps its
 * updated_at). Districts absent from `districts` are left alone: their history
 * stays. Returns the number of rows given.
 */
export async function upsertDistricts(db: Db, districts: DistrictInput[]): Promise<number> {
  for (let start = 0; start < districts.length; start += BATCH_ROWS) {
    const batch = districts.slice(start, start + BATCH_ROWS);
    await db.query(
      `INSERT INTO districts (id, name, role, geometry, area_m2, properties)
       SELECT id, name, role, geometry::jsonb, area_m2, properties::jsonb
       FROM unnest($1::text[], $2::text[], $3::text[], $4::text[], $5::double precision[], $6::text[])
            AS t(id, name, role, geometry, area_m2, properties)
       ON CONFLICT (id) DO UPDATE SET
         name = EXCLUDED.name, role = EXCLUDED.role, geometry = EXCLUDED.geometry,
         area_m2 = EXCLUDED.area_m2, properties = EXCLUDED.properties, updated_at = now()
       WHERE (districts.name, districts.role, districts.geometry, districts.area_m2, districts.properties)
             IS DISTINCT FROM (EXCLUDED.name, EXCLUDED.role, EXCLUDED.geometry, EXCLUDED.area_m2, EXCLUDED.properties)`,
      [
        batch.map((d) => d.id),
        batch.map((d) => d.name),
        batch.map((d) => d.role ?? 'district'),
        batch.map((d) => json(Array.isArray(d.geometry) ? { type: 'MultiPolygon', coordinates: d.geometry } : d.geometry)),
        batch.map((d) => num(d.areaSquareMetres, `district ${d.id} areaSquareMetres`)),
        batch.map((d) => json(d.properties)),
      ],
    );
  }
  return districts.length;
}

/** Every district (including the rural reference), ordered by id (byte order). */
export function listDistricts(db: Db): Promise<DistrictRow[]> {
  return db.query<DistrictRow>(
    `SELECT id, name, role, geometry, area_m2 AS "areaSquareMetres", properties, updated_at AS "updatedAt"
     FROM districts ORDER BY id COLLATE "C"`,
  );
}

// ---------------------------------------------------------------------------
// runs

/** What a run was computed with; stored as runs.parameters (jsonb). */
export interface RunParameters {
  /** Pixel-to-polygon rule, e.g. 'centre' (GDAL rasterize default) or 'fraction'. */
  coverageRule?: string;
  /** The rural reference: which districts row (role 'rural') and how it was defined. */
  ruralReference?: { districtId: string; description: string };
  /** Plausible LST range [min, max], Kelvin; values outside are counted implausible. */
  plausibleRangeKelvin?: [Kelvin, Kelvin] | null;
  /** Minimum valid fraction of a district's pixels for its statistics to be used. */
  minValidFraction?: number;
  /** Largest day–night separation for an ATI pair, hours. */
  pairingWindowHours?: number;
  /** Largest distance in time from a day scene to the albedo used, days. */
  albedoWindowDays?: number;
  [key: string]: unknown;
}

export interface RunInput {
  softwareVersion: string;
  mode: 'embedded' | 'distributed';
  parameters: RunParameters;
  /** The process that runs it (host name and pid), so a later command can tell a run whose process died. */
  ownerHost?: string;
  ownerPid?: number;
  /** Scene files the run was asked to process. */
  scenesAsked?: number;
}

/** Record the start of a run; returns its id. */
export async function startRun(db: Db, run: RunInput): Promise<number> {
  const rows = await db.query<{ id: number }>(
    `INSERT INTO runs (software_version, mode, parameters, owner_host, owner_pid, scenes_asked) VALUES ($1, $2, $3::text::jsonb, $4, $5, $6) RETURNING id`,
    [run.softwareVersion, run.mode, json(run.parameters), run.ownerHost ?? null, run.ownerPid ?? null, run.scenesAsked ?? null],
  );
  return rows[0].id;
}

/** How a run ended (see sql/migrations/004_run_states.sql for what each state means). */
export type RunEndState = 'succeeded' | 'incomplete' | 'failed' | 'interrupted' | 'abandoned';
export type RunState = 'running' | RunEndState;

/** Record the end of run `runId`: its state, the reason (when not 'succeeded') and the scenes left unfinished. */
export async function finishRun(
  db: Db,
  runId: number,
  outcome: { status: RunEndState; error?: string | null; scenesLeft?: number | null },
): Promise<void> {
  await db.query(`UPDATE runs SET finished_at = now(), status = $2, error = $3, scenes_left = $4 WHERE id = $1`, [
    runId,
    outcome.status,
    outcome.error ?? null,
    outcome.scenesLeft ?? null,
  ]);
}

export interface RunRow {
  id: number;
  startedAt: UtcIso;
  finishedAt: UtcIso | null;
  softwareVersion: string;
  mode: 'embedded' | 'distributed';
  parameters: RunParameters;
  status: RunState;
  error: string | null;
}

/** One run by id, or null. */
export async function getRun(db: Db, runId: number): Promise<RunRow | null> {
  const rows = await db.query<RunRow>(
    `SELECT id, started_at AS "startedAt", finished_at AS "finishedAt", software_version AS "softwareVersion",
            mode, parameters, status, error
     FROM runs WHERE id = $1`,
    [runId],
  );
  return rows[0] ?? null;
}

// ---------------------------------------------------------------------------
// scenes

export type SceneKind = 'lst' | 'albedo' | 'qa';
export const SCENE_KINDS: readonly SceneKind[] = ['lst', 'albedo', 'qa'];
export type ScenePass = 'day' | 'night';
export type TimingRating = 'predawn' | 'midday' | 'crossover' | 'other';
export type SceneStatus = 'registered' | 'processed' | 'failed';

/** What ingest knows about a readable scene file. */
export interface SceneInput {
  /** sha256 of the file bytes, lower-case hex (64 characters). */
  contentHash: string;
  path: string;
  kind: SceneKind;
  sensor?: string | null;
  productNotes?: string | null;
  acquiredAt: UtcIso | null;
  pass: ScenePass | null;
  sunElevationDeg?: number | null;
  solarTimeHours?: number | null;
  timingRating?: TimingRating | null;
  epsg: Epsg | null;
  crsDefinition: string | null;
  width: number;
  height: number;
  pixelSizeMetres: number | null;
  /** physical = offset + scale × stored value. */
  scale: number;
  offset: number;
  nodata: number | null;
  runId?: number | null;
}

export interface SceneRow {
  id: number;
  contentHash: string | null;
  path: string;
  kind: SceneKind | null;
  sensor: string | null;
  productNotes: string | null;
  acquiredAt: UtcIso | null;
  pass: ScenePass | null;
  sunElevationDeg: number | null;
  solarTimeHours: number | null;
  timingRating: TimingRating | null;
  epsg: Epsg | null;
  crsDefinition: string | null;
  width: number | null;
  height: number | null;
  pixelSizeMetres: number | null;
  scale: number | null;
  offset: number | null;
  nodata: number | null;
  status: SceneStatus;
  error: string | null;
  runId: number | null;
  ingestedAt: UtcIso;
  processedAt: UtcIso | null;
}

const SCENE_COLUMNS = `id, content_hash AS "contentHash", path, kind, sensor, product_notes AS "productNotes",
  acquired_at AS "acquiredAt", pass, sun_elevation_deg AS "sunElevationDeg", solar_time_hours AS "solarTimeHours",
  timing_rating AS "timingRating", epsg, crs_definition AS "crsDefinition", width, height,
  pixel_size_m AS "pixelSizeMetres", scale, add_offset AS "offset", nodata, status, error, run_id AS "runId",
  ingested_at AS "ingestedAt", processed_at AS "processedAt"`;

const HASH_RE = /^[0-9a-f]{64}$/;

function checkHash(hash: string): void {
  if (!HASH_RE.test(hash)) throw new Error(`store: content hash must be 64 lower-case hex digits (sha256), got "${hash}"`);
}

/** The scene with this content hash, or null. */
export async function findSceneByHash(db: Db, contentHash: string): Promise<SceneRow | null> {
  const rows = await db.query<SceneRow>(`SELECT ${SCENE_COLUMNS} FROM scenes WHERE content_hash = $1`, [contentHash]);
  return rows[0] ?? null;
}

/** One scene by id, or null. */
export async function getScene(db: Db, sceneId: number): Promise<SceneRow | null> {
  const rows = await db.query<SceneRow>(`SELECT ${SCENE_COLUMNS} FROM scenes WHERE id = $1`, [sceneId]);
  return rows[0] ?? null;
}

/** Scenes, optionally of one kind and/or status, in acquisition order (then id). */
export function listScenes(db: Db, filter: { kind?: SceneKind; status?: SceneStatus } = {}): Promise<SceneRow[]> {
  return db.query<SceneRow>(
    `SELECT ${SCENE_COLUMNS} FROM scenes
     WHERE ($1::text IS NULL OR kind = $1::text) AND ($2::text IS NULL OR status = $2::text)
     ORDER BY acquired_at NULLS LAST, id`,
    [filter.kind ?? null, filter.status ?? null],
  );
}

/**
 * Register a readable scene, keyed by content hash; returns its id. Registering
 * the same content again updates path and header and keeps the id and a
 * 'processed' status; a scene that had failed goes back to 'registered'. A
 * path-only failure row (file unreadable earlier) for the same path is removed.
 */
export async function registerScene(db: Db, scene: SceneInput): Promise<number> {
  return (await registerSceneReporting(db, scene)).id;
}

/**
 * {@link registerScene}, also saying what the scene's status was before
 * (null when it is new): one round trip where a look-up and a write were two.
 */
export async function registerSceneReporting(db: Db, scene: SceneInput): Promise<{ id: number; previousStatus: SceneStatus | null }> {
  checkHash(scene.contentHash);
  const rows = await db.query<{ id: number; previousStatus: SceneStatus | null }>(
    `WITH prev AS (SELECT status FROM scenes WHERE content_hash = $1),
     stale AS (DELETE FROM scenes WHERE content_hash IS NULL AND path = $2)
     INSERT INTO scenes (content_hash, path, kind, sensor, product_notes, acquired_at, pass, sun_elevation_deg,
                         solar_time_hours, timing_rating, epsg, crs_definition, width, height, pixel_size_m,
                         scale, add_offset, nodata, status, run_id)
     VALUES ($1, $2, $3, $4, $5, $6::timestamptz, $7, $8, $9, $10, $11, $12, $13, $14, $15, $16, $17, $18,
             'registered', $19)
     ON CONFLICT (content_hash) DO UPDATE SET
       path = EXCLUDED.path, kind = EXCLUDED.kind, sensor = EXCLUDED.sensor, product_notes = EXCLUDED.product_notes,
       acquired_at = EXCLUDED.acquired_at, pass = EXCLUDED.pass, sun_elevation_deg = EXCLUDED.sun_elevation_deg,
       solar_time_hours = EXCLUDED.solar_time_hours, timing_rating = EXCLUDED.timing_rating, epsg = EXCLUDED.epsg,
       crs_definition = EXCLUDED.crs_definition, width = EXCLUDED.width, height = EXCLUDED.height,
       pixel_size_m = EXCLUDED.pixel_size_m, scale = EXCLUDED.scale, add_offset = EXCLUDED.add_offset,
       nodata = EXCLUDED.nodata, run_id = coalesce(EXCLUDED.run_id, scenes.run_id),
       status = CASE WHEN scenes.status = 'failed' THEN 'registered' ELSE scenes.status END,
       error = CASE WHEN scenes.status = 'failed' THEN NULL ELSE scenes.error END
     RETURNING id, (SELECT status FROM prev) AS "previousStatus"`,
    [
      scene.contentHash,
      scene.path,
      scene.kind,
      scene.sensor ?? null,
      scene.productNotes ?? null,
      scene.acquiredAt,
      scene.pass,
      num(scene.sunElevationDeg, 'sunElevationDeg'),
      num(scene.solarTimeHours, 'solarTimeHours'),
      scene.timingRating ?? null,
      scene.epsg,
      scene.crsDefinition,
      scene.width,
      scene.height,
      num(scene.pixelSizeMetres, 'pixelSizeMetres'),
      num(scene.scale, 'scale'),
      num(scene.offset, 'offset'),
      num(scene.nodata, 'nodata'),
      scene.runId ?? null,
    ],
  );
  return { id: rows[0].id, previousStatus: rows[0].previousStatus ?? null };
}

/**
 * Replace the warnings stored with a scene (scenes.warnings, migration 004):
 * problems found while reading it that did not stop its use, e.g. a metadata
 * block that could not be parsed. An empty list clears them.
 */
export async function setSceneWarnings(db: Db, sceneId: number, warnings: readonly string[]): Promise<void> {
  if (!Array.isArray(warnings) || !warnings.every((w) => typeof w === 'string')) {
    throw new Error('store: scene warnings must be a list of strings');
  }
  await db.query('UPDATE scenes SET warnings = $2::jsonb WHERE id = $1', [sceneId, JSON.stringify(warnings)]);
}

/**
 * Record that a file failed (unreadable, bad header, failed processing).
 * Keyed by content hash when the bytes could be hashed, else by path; a file
 * without a readable header still gets a row. Returns the scene id.
 */
export async function markSceneFailed(
  db: Db,
  failure: { contentHash?: string | null; path: string; error: string; runId?: number | null },
): Promise<number> {
  if (failure.contentHash) checkHash(failure.contentHash);
  const params = [failure.contentHash ?? null, failure.path, failure.error, failure.runId ?? null];
  const sql = failure.contentHash
    ? `INSERT INTO scenes (content_hash, path, status, error, run_id) VALUES ($1, $2, 'failed', $3, $4)
       ON CONFLICT (content_hash) DO UPDATE SET status = 'failed', error = EXCLUDED.error,
         run_id = coalesce(EXCLUDED.run_id, scenes.run_id), processed_at = NULL
       RETURNING id`
    : `INSERT INTO scenes (content_hash, path, status, error, run_id) VALUES ($1, $2, 'failed', $3, $4)
       ON CONFLICT (path) WHERE content_hash IS NULL DO UPDATE SET status = 'failed', error = EXCLUDED.error,
         run_id = coalesce(EXCLUDED.run_id, scenes.run_id)
       RETURNING id`;
  const rows = await db.query<{ id: number }>(sql, params);
  return rows[0].id;
}

/** Scene counts by status; every status is present (0 when none). */
export async function sceneStatusCounts(db: Db): Promise<Record<SceneStatus, number> & { total: number }> {
  const rows = await db.query<{ status: SceneStatus; n: number }>(
    `SELECT status, count(*) AS n FROM scenes GROUP BY status`,
  );
  const out = { registered: 0, processed: 0, failed: 0, total: 0 };
  for (const r of rows) {
    out[r.status] = r.n;
    out.total += r.n;
  }
  return out;
}

export interface FailureRow {
  sceneId: number;
  contentHash: string | null;
  path: string;
  error: string;
  runId: number | null;
  ingestedAt: UtcIso;
}

/** Failed scenes, ordered by path (byte order). */
export function failures(db: Db): Promise<FailureRow[]> {
  return db.query<FailureRow>(
    `SELECT id AS "sceneId", content_hash AS "contentHash", path, error, run_id AS "runId", ingested_at AS "ingestedAt"
     FROM scenes WHERE status = 'failed' ORDER BY path COLLATE "C", id`,
  );
}

// ---------------------------------------------------------------------------
// zonal statistics

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
  mark AS (UPDATE scenes SET status = 'processed', error = NULL, processed_at = now(),
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
    ]);
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
      `UPDATE scenes SET status = 'processed', error = NULL, processed_at = now(), run_id = coalesce($2, run_id)
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

// ---------------------------------------------------------------------------
// derived metrics

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

// ---------------------------------------------------------------------------
// district tables (sql/queries/district_table_*.sql)

export interface DistrictTableOptions {
  /** Only this calendar year (UTC). */
  year?: number | null;
  /** Minimum valid fraction of a scene's district pixels for its mean to count; default 0. */
  minValidFraction?: number | null;
}

export interface DistrictDateRow {
  district_id: string;
  district_name: string;
  role: 'district' | 'rural';
  /** 'YYYY-MM-DD' (UTC). */
  obs_date: string;
  lst_day_k: Kelvin | null;
  lst_night_k: Kelvin | null;
  suhi_day_k: Kelvin | null;
  suhi_night_k: Kelvin | null;
  ati_per_k: number | null;
  day_scenes: number;
  night_scenes: number;
}

export interface DistrictYearRow extends Omit<DistrictDateRow, 'obs_date'> {
  year: number;
  /** Dates of that year with any value. */
  dates: number;
}

function tableParams(options: DistrictTableOptions): unknown[] {
  const year = options.year ?? null;
  if (year !== null && !Number.isInteger(year)) throw new Error(`store: year must be an integer, got ${String(year)}`);
  return [year, num(options.minValidFraction, 'minValidFraction')];
}

/** Per district and date: mean day/night LST, SUHI, ATI and scene counts (sql/queries/district_table_date.sql). */
export function districtTableByDate(db: Db, options: DistrictTableOptions = {}): Promise<DistrictDateRow[]> {
  return db.query<DistrictDateRow>(namedQuery('district_table_date'), tableParams(options));
}

/** Per district and year: means over dates and counts (sql/queries/district_table_year.sql). */
export function districtTableByYear(db: Db, options: DistrictTableOptions = {}): Promise<DistrictYearRow[]> {
  return db.query<DistrictYearRow>(namedQuery('district_table_year'), tableParams(options));
}
