/**
 * Scenes as the API lists them (sql/queries/scene_listing.sql, scene_districts.sql):
 * a page in acquisition order after a cursor, with each district's valid
 * fraction and why that scene gives the district no value (from the scene's own
 * zonal row, never from the other pass of a derived pair), and for a thermal
 * scene the stored facts of how its LST was made.
 */
import { MIN_VALID_FRACTION } from '../core/defaults.js';
import { passMissingReason } from '../core/derive/pass-reason.js';
import type { UtcIso } from '../core/units.js';
import { namedQuery } from './queries.js';
import type { Db } from './db.js';
import type { SceneKind, ScenePass, SceneStatus, TimingRating } from './scenes.js';
import type { StoredAtmosphere } from './thermal-scenes.js';

export interface SceneListingFilter {
  status?: SceneStatus;
  kind?: SceneKind;
  pass?: ScenePass;
  /** Acquired at or after (UTC ISO). */
  from?: UtcIso;
  /** Acquired before (UTC ISO). */
  before?: UtcIso;
  /** Where the previous page ended: its last row's acquisition time ('infinity' when it had none) and id. */
  after?: { acquiredAt: string; id: number };
  /** One scene only. */
  id?: number;
  limit: number;
}

export interface SceneDistrictRow {
  district_id: string;
  valid_fraction: number | null;
  /** Why this scene gives the district no value (outside the scene, no valid pixel, too few), or null. */
  missing_reason: string | null;
}

/** A row of sql/queries/scene_districts.sql. */
interface SceneDistrictQueryRow {
  scene_id: number;
  district_id: string;
  valid_fraction: number | null;
  pixels: number;
  has_mean: boolean;
  nodata_count: number;
  masked_count: number;
  implausible_count: number;
  /** The minimum the scene was judged by; null = the documented default. */
  min_valid_fraction: number | null;
}

export interface SceneListingRow {
  id: number;
  /** As stored (absolute); the API shows it relative to its data root. */
  path: string;
  kind: SceneKind | null;
  sensor: string | null;
  acquired_at: UtcIso | null;
  pass: ScenePass | null;
  timing_rating: TimingRating | null;
  status: SceneStatus;
  error: string | null;
  warnings: string[];
  /** How a thermal scene's LST was made (migration 005); null for other kinds. */
  lst_method: 'rte' | 'emissivity_only' | null;
  atmospheric_correction: boolean | null;
  atmosphere: StoredAtmosphere | null;
  thermal_constants_source: string | null;
  emissivity_source: string | null;
  districts: SceneDistrictRow[];
}

/** One page of scenes (up to `limit` rows) with their districts. */
export async function sceneListing(db: Db, f: SceneListingFilter): Promise<SceneListingRow[]> {
  const rows = await db.query<Omit<SceneListingRow, 'districts'>>(namedQuery('scene_listing'), [
    f.status ?? null, f.kind ?? null, f.pass ?? null, f.from ?? null, f.before ?? null,
    f.after?.acquiredAt ?? null, f.after?.id ?? null, f.limit, f.id ?? null,
  ]);
  if (rows.length === 0) return [];
  const ids = rows.map((r) => Number(r.id));
  const parts = await db.query<SceneDistrictQueryRow>(namedQuery('scene_districts'), [ids]);
  const byScene = new Map<number, SceneDistrictRow[]>();
  for (const p of parts) {
    const list = byScene.get(Number(p.scene_id)) ?? [];
    const validFraction = p.valid_fraction === null ? null : Number(p.valid_fraction);
    const missingReason = passMissingReason({
      pixels: Number(p.pixels), validFraction, hasMean: p.has_mean === true,
      nodataCount: Number(p.nodata_count), maskedCount: Number(p.masked_count), implausibleCount: Number(p.implausible_count),
    }, p.min_valid_fraction === null ? MIN_VALID_FRACTION : Number(p.min_valid_fraction));
    list.push({ district_id: p.district_id, valid_fraction: validFraction, missing_reason: missingReason });
    byScene.set(Number(p.scene_id), list);
  }
  return rows.map((r) => ({ ...r, id: Number(r.id), warnings: Array.isArray(r.warnings) ? r.warnings.map(String) : [], districts: byScene.get(Number(r.id)) ?? [] }));
}

/** Scenes stored as processed and as failed among these files and under these folders (absolute paths). */
export async function sceneProgress(db: Db, files: readonly string[], folders: readonly string[]): Promise<{ processed: number; failed: number }> {
  const escape = (p: string) => `${p.replace(/[\\%_]/g, (c) => `\\${c}`)}${p.endsWith('/') ? '' : '/'}`;
  const [r] = await db.query<{ processed: number; failed: number }>(namedQuery('scene_progress'), [[...files], folders.map(escape)]);
  return { processed: Number(r.processed), failed: Number(r.failed) };
}
