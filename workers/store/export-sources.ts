/**
 * Store-side reads behind the exports: the district table per scene (pass) with
 * its public field names (sql/queries/district_table_scene.sql), and the
 * provenance a sidecar records — the scenes whose values the exported rows hold
 * (content hashes) and the runs that stored them (version, parameters).
 * The date and year tables come from ./district-table.ts; the yearly trends
 * from ./district-statistics.ts.
 */
import { type Db, yearOrNull } from './db.js';
import { namedQuery } from './queries.js';
import { fileForReader, handedOnParameters } from '../core/relative-paths.js';

/** Column order of the district table per scene; `_k` Kelvin, `_per_k` 1/K. */
export const SCENE_TABLE_FIELDS = [
  'district', 'name', 'scene_hash', 'acquired_at', 'pass', 'timing_rating', 'valid_fraction',
  'lst_day_k', 'lst_night_k', 'suhi_day_k', 'suhi_night_k', 'ati_per_k',
] as const;

export type SceneTableRow = { readonly [field: string]: string | number | null };

/** Inclusive range of UTC years; null ends are open. */
export interface YearRange {
  from: number | null;
  to: number | null;
}

function yearParams(range: YearRange): [number | null, number | null] {
  return [yearOrNull(range.from), yearOrNull(range.to)];
}

/** One row per district and LST pass, at full precision (round at the output edge). */
export async function districtSceneTable(db: Db, range: YearRange): Promise<SceneTableRow[]> {
  const rows = await db.query<{
    district_id: string; district_name: string; scene_hash: string; acquired_at: string; pass: string; timing_rating: string | null;
    valid_fraction: number | null; lst_day_k: number | null; lst_night_k: number | null; suhi_day_k: number | null;
    suhi_night_k: number | null; ati_per_k: number | null;
  }>(namedQuery('district_table_scene'), yearParams(range));
  return rows.map((r) => ({
    district: r.district_id, name: r.district_name, scene_hash: r.scene_hash, acquired_at: r.acquired_at, pass: r.pass,
    timing_rating: r.timing_rating, valid_fraction: r.valid_fraction,
    lst_day_k: r.lst_day_k, lst_night_k: r.lst_night_k, suhi_day_k: r.suhi_day_k, suhi_night_k: r.suhi_night_k, ati_per_k: r.ati_per_k,
  }));
}

/** A scene behind exported values. */
export interface SourceScene {
  contentHash: string;
  /** File name only (the folder is the operator's, not the export reader's; core/relative-paths.ts). */
  file: string;
  kind: string;
  pass: string | null;
  acquiredAt: string | null;
}

/** A run that stored exported values. */
export interface SourceRun {
  id: number;
  startedAt: string;
  finishedAt: string | null;
  softwareVersion: string;
  mode: string;
  status: string;
  /** As stored, with files named by their names alone (core/relative-paths.ts, `handedOnParameters`). */
  parameters: Record<string, unknown>;
}

/**
 * The scenes (day, night and albedo) of the derived rows dated within the UTC
 * years, and the runs that wrote those rows, ordered by acquisition time and
 * by run id.
 */
export async function exportSources(db: Db, range: YearRange): Promise<{ scenes: SourceScene[]; runs: SourceRun[] }> {
  const params = yearParams(range);
  const inRange = `($1::integer IS NULL OR extract(year FROM m.obs_date)::integer >= $1::integer)
                   AND ($2::integer IS NULL OR extract(year FROM m.obs_date)::integer <= $2::integer)`;
  const scenes = await db.query<{ content_hash: string; path: string; kind: string; pass: string | null; acquired_at: string | null }>(
    `WITH used AS (
       SELECT unnest(ARRAY[m.day_scene_id, m.night_scene_id, m.albedo_scene_id]) AS scene_id
       FROM derived_metrics m WHERE ${inRange}
     )
     SELECT s.content_hash, s.path, s.kind, s.pass, s.acquired_at
     FROM scenes s WHERE s.id IN (SELECT scene_id FROM used WHERE scene_id IS NOT NULL)
     ORDER BY s.acquired_at NULLS LAST, s.content_hash COLLATE "C"`,
    params,
  );
  const runs = await db.query<SourceRun>(
    `SELECT r.id, r.started_at AS "startedAt", r.finished_at AS "finishedAt", r.software_version AS "softwareVersion",
            r.mode, r.status, r.parameters
     FROM runs r WHERE r.id IN (SELECT m.run_id FROM derived_metrics m WHERE ${inRange})
     ORDER BY r.id`,
    params,
  );
  return {
    scenes: scenes.map((s) => ({
      contentHash: s.content_hash, file: fileForReader(s.path, null), kind: s.kind, pass: s.pass, acquiredAt: s.acquired_at,
    })),
    runs: runs.map((r) => ({ ...r, id: Number(r.id), parameters: handedOnParameters(r.parameters ?? {}, null) })),
  };
}
