/** The scenes table: one row per scene file (keyed by content hash), its header facts and status. */
import type { Epsg, UtcIso } from '../core/units.js';
import type { TimingRating } from '../core/solar/index.js';
import type { FailureKind } from '../core/errors.js';
import { type Db, num } from './db.js';

/** 'thermal': a Level-1 thermal band as DN, turned into LST on ingest (migration 005). */
export type SceneKind = 'lst' | 'albedo' | 'qa' | 'thermal';
export const SCENE_KINDS: readonly SceneKind[] = ['lst', 'albedo', 'qa', 'thermal'];
export type ScenePass = 'day' | 'night';
export type { TimingRating };
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

/** What pairing needs of a scene: when it was taken, and which pass. */
export interface SceneTime {
  id: number;
  kind: SceneKind;
  acquiredAt: UtcIso | null;
  pass: ScenePass | null;
}

/**
 * The id, kind, time and pass of every scene of these kinds with this status, in
 * acquisition order (then id): {@link listScenes} for the derive step, without
 * the header columns it does not read (the CRS definition alone is ~1 kB a scene).
 */
export function listSceneTimes(db: Db, kinds: readonly SceneKind[], status: SceneStatus): Promise<SceneTime[]> {
  return db.query<SceneTime>(
    `SELECT id, kind, acquired_at AS "acquiredAt", pass FROM scenes
     WHERE kind = ANY($1::text[]) AND status = $2::text
     ORDER BY acquired_at NULLS LAST, id`,
    [kinds, status],
  );
}

/** How many scenes have this status. */
export async function countScenes(db: Db, status: SceneStatus): Promise<number> {
  return (await db.query<{ n: number }>('SELECT count(*)::int AS n FROM scenes WHERE status = $1::text', [status]))[0].n;
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
  const rows = await db.query<{ id: number; previousStatus: SceneStatus | null }>(
    `WITH prev AS (SELECT status FROM scenes WHERE content_hash = $1),
     stale AS (DELETE FROM scenes WHERE content_hash IS NULL AND path = $2)
     INSERT INTO scenes (${SCENE_HEADER_COLUMNS}, status, run_id)
     VALUES (${SCENE_HEADER_VALUES}, 'registered', $${SCENE_HEADER_PARAMS + 1})
     ON CONFLICT (content_hash) DO UPDATE SET ${SCENE_HEADER_UPDATE},
       run_id = coalesce(EXCLUDED.run_id, scenes.run_id),
       status = CASE WHEN scenes.status = 'failed' THEN 'registered' ELSE scenes.status END,
       error = CASE WHEN scenes.status = 'failed' THEN NULL ELSE scenes.error END,
       error_kind = CASE WHEN scenes.status = 'failed' THEN NULL ELSE scenes.error_kind END
     RETURNING id, (SELECT status FROM prev) AS "previousStatus"`,
    [...sceneHeaderParams(scene), scene.runId ?? null],
    // once a scene, keyed by content hash (and path): kept planned on the server (QueryOptions)
    { prepared: true },
  );
  return { id: rows[0].id, previousStatus: rows[0].previousStatus ?? null };
}

/**
 * The header columns a registration writes ($1 the content hash, $2 the path, ...):
 * shared by {@link registerSceneReporting} and the one-statement store of a
 * processed scene (zonal-stats.ts), so that both write a scene the same way.
 */
export const SCENE_HEADER_COLUMNS = `content_hash, path, kind, sensor, product_notes, acquired_at, pass, sun_elevation_deg,
  solar_time_hours, timing_rating, epsg, crs_definition, width, height, pixel_size_m, scale, add_offset, nodata`;
/** How many parameters {@link sceneHeaderParams} gives. */
export const SCENE_HEADER_PARAMS = 18;
/** The VALUES of {@link SCENE_HEADER_COLUMNS}: $1 ... $18. */
export const SCENE_HEADER_VALUES = Array.from({ length: SCENE_HEADER_PARAMS }, (_, i) => (i === 5 ? `$${i + 1}::timestamptz` : `$${i + 1}`)).join(', ');
/** ON CONFLICT (content_hash): the header as read now replaces the stored one. */
export const SCENE_HEADER_UPDATE = `path = EXCLUDED.path, kind = EXCLUDED.kind, sensor = EXCLUDED.sensor, product_notes = EXCLUDED.product_notes,
  acquired_at = EXCLUDED.acquired_at, pass = EXCLUDED.pass, sun_elevation_deg = EXCLUDED.sun_elevation_deg,
  solar_time_hours = EXCLUDED.solar_time_hours, timing_rating = EXCLUDED.timing_rating, epsg = EXCLUDED.epsg,
  crs_definition = EXCLUDED.crs_definition, width = EXCLUDED.width, height = EXCLUDED.height,
  pixel_size_m = EXCLUDED.pixel_size_m, scale = EXCLUDED.scale, add_offset = EXCLUDED.add_offset,
  nodata = EXCLUDED.nodata`;

/** The parameters of {@link SCENE_HEADER_COLUMNS}, checked (hash form, finite numbers). */
export function sceneHeaderParams(scene: SceneInput): unknown[] {
  checkHash(scene.contentHash);
  return [
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
  ];
}

/**
 * Which of these content hashes the store has a scene for (any status): a
 * run's scene jobs for the others need not look for earlier results.
 */
export async function knownContentHashes(db: Db, contentHashes: readonly string[]): Promise<Set<string>> {
  const rows = await db.query<{ h: string }>('SELECT content_hash AS h FROM scenes WHERE content_hash = ANY($1::text[])', [contentHashes]);
  return new Set(rows.map((r) => r.h));
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
  failure: { contentHash?: string | null; path: string; error: string; kind?: FailureKind; runId?: number | null },
): Promise<number> {
  if (failure.contentHash) checkHash(failure.contentHash);
  const params = [failure.contentHash ?? null, failure.path, failure.error, failure.runId ?? null, failure.kind ?? 'input'];
  const sql = failure.contentHash
    ? `INSERT INTO scenes (content_hash, path, status, error, run_id, error_kind) VALUES ($1, $2, 'failed', $3, $4, $5)
       ON CONFLICT (content_hash) DO UPDATE SET status = 'failed', error = EXCLUDED.error, error_kind = EXCLUDED.error_kind,
         run_id = coalesce(EXCLUDED.run_id, scenes.run_id), processed_at = NULL
       RETURNING id`
    : `INSERT INTO scenes (content_hash, path, status, error, run_id, error_kind) VALUES ($1, $2, 'failed', $3, $4, $5)
       ON CONFLICT (path) WHERE content_hash IS NULL DO UPDATE SET status = 'failed', error = EXCLUDED.error, error_kind = EXCLUDED.error_kind,
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
  /** The problem as stored: the message alone (its kind apart). */
  error: string;
  /** input (bad file; re-running cannot fix it), service or bug. */
  errorKind: FailureKind;
  runId: number | null;
  ingestedAt: UtcIso;
}

/** Failed scenes, ordered by path (byte order). */
export function failures(db: Db): Promise<FailureRow[]> {
  return db.query<FailureRow>(
    `SELECT id AS "sceneId", content_hash AS "contentHash", path, error, error_kind AS "errorKind", run_id AS "runId", ingested_at AS "ingestedAt"
     FROM scenes WHERE status = 'failed' ORDER BY path COLLATE "C", id`,
  );
}

/** Scene files of a run (by content hash) not yet stored as processed. */
export async function scenesNotProcessed(db: Db, contentHashes: string[]): Promise<number> {
  const rows = await db.query<{ n: number }>(
    `SELECT count(*)::int AS n FROM scenes WHERE content_hash = ANY($1::text[]) AND status = 'processed'`,
    [contentHashes],
  );
  return contentHashes.length - rows[0].n;
}
