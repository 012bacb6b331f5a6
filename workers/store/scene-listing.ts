/**
 * Scenes as the API lists them (sql/queries/scene_listing.sql, scene_districts.sql):
 * a page in acquisition order after a cursor, with each district's valid
 * fraction and the stored reason of a missing value, and for a thermal scene
 * the stored facts of how its LST was made.
 */
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
  missing_reason: string | null;
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
  const parts = await db.query<SceneDistrictRow & { scene_id: number }>(namedQuery('scene_districts'), [ids]);
  const byScene = new Map<number, SceneDistrictRow[]>();
  for (const p of parts) {
    const list = byScene.get(Number(p.scene_id)) ?? [];
    list.push({ district_id: p.district_id, valid_fraction: p.valid_fraction === null ? null : Number(p.valid_fraction), missing_reason: p.missing_reason });
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
