/**
 * How the LST of thermal scenes was made (migration 005): the scenes table's
 * thermal columns and zonal_stats.emissivity_source.
 */
import { describeLstMethod, type LstMethodDescription } from '../core/thermal/describe.js';
import { isAtmosphereRasters, type SceneAtmosphere } from '../core/thermal/rte.js';
import type { UtcIso } from '../core/units.js';
import { type Db, inTransaction } from './db.js';

/** What ingest decides about a thermal scene. */
export interface ThermalSceneInput {
  lstMethod: 'rte' | 'emissivity_only';
  /** Transmittance (0-1) and path radiances (W m-2 sr-1 um-1), or rasters of them, or null without atmospheric correction. */
  atmosphere: SceneAtmosphere | null;
  /** 'metadata file <path>', 'manifest' or 'built-in table (...)'. */
  constantsSource: string;
}

/** Record how a thermal scene's LST is made (its emissivity source comes with its statistics). */
export async function setSceneThermal(db: Db, sceneId: number, t: ThermalSceneInput): Promise<void> {
  const a = t.atmosphere;
  const atm = a === null ? null : JSON.stringify(isAtmosphereRasters(a)
    ? { transmittance_raster: a.transmittanceRaster, upwelling_raster: a.upwellingRaster, downwelling_raster: a.downwellingRaster }
    : { transmittance: a.transmittance, upwelling_w_m2_sr_um: a.upwellingRadiance, downwelling_w_m2_sr_um: a.downwellingRadiance });
  await db.query(
    `UPDATE scenes SET lst_method = $2, atmospheric_correction = $3, atmosphere = $4::jsonb, thermal_constants_source = $5
     WHERE id = $1`,
    [sceneId, t.lstMethod, t.lstMethod === 'rte', atm, t.constantsSource],
  );
}

/**
 * Store where a thermal scene's emissivity came from: one summary for the scene and
 * one per district (rows of zonal_stats already written for it), and the fingerprint of the
 * inputs the statistics were computed from, in one transaction.
 */
export async function setEmissivitySources(db: Db, sceneId: number, sceneSource: string, byDistrict: Record<string, string>, inputsFingerprint: string | null = null): Promise<void> {
  const ids = Object.keys(byDistrict);
  await inTransaction(db, async (q) => {
    await q.query('UPDATE scenes SET emissivity_source = $2, lst_inputs_fingerprint = $3 WHERE id = $1', [sceneId, sceneSource, inputsFingerprint]);
    await q.query(
      `UPDATE zonal_stats z SET emissivity_source = s.source
       FROM unnest($2::text[], $3::text[]) AS s(district_id, source)
       WHERE z.scene_id = $1 AND z.district_id = s.district_id`,
      [sceneId, ids, ids.map((id) => byDistrict[id])],
    );
  });
}

/** The scenes.atmosphere column: the values, or the paths of the rasters. */
export type StoredAtmosphere =
  | { transmittance: number; upwelling_w_m2_sr_um: number; downwelling_w_m2_sr_um: number }
  | { transmittance_raster: string; upwelling_raster: string; downwelling_raster: string };

/** A thermal scene and how its LST was made. */
export interface ThermalSceneRow {
  sceneId: number;
  path: string;
  acquiredAt: UtcIso | null;
  pass: 'day' | 'night' | null;
  status: string;
  sensor: string | null;
  lstMethod: 'rte' | 'emissivity_only' | null;
  atmosphericCorrection: boolean | null;
  atmosphere: StoredAtmosphere | null;
  thermalConstantsSource: string | null;
  emissivitySource: string | null;
}

/** Every thermal scene, in acquisition order. */
export function listThermalScenes(db: Db): Promise<ThermalSceneRow[]> {
  return db.query<ThermalSceneRow>(
    `SELECT id AS "sceneId", path, acquired_at AS "acquiredAt", pass, status, sensor, lst_method AS "lstMethod",
            atmospheric_correction AS "atmosphericCorrection", atmosphere, thermal_constants_source AS "thermalConstantsSource",
            emissivity_source AS "emissivitySource"
     FROM scenes WHERE kind = 'thermal' ORDER BY acquired_at NULLS LAST, id`,
  );
}

/** A thermal scene with how its LST was made, described (core/thermal/describe.ts). */
export type ThermalPassRow = Pick<ThermalSceneRow, 'sceneId' | 'path' | 'acquiredAt' | 'pass' | 'status'> & LstMethodDescription;

/** Every thermal scene, in acquisition order, with how its LST was made: what `status` and /api/status list. */
export async function thermalPasses(db: Db): Promise<ThermalPassRow[]> {
  return (await listThermalScenes(db)).map((t) => ({
    sceneId: t.sceneId, path: t.path, acquiredAt: t.acquiredAt, pass: t.pass, status: t.status, ...describeLstMethod(t),
  }));
}

/** Emissivity source per district of one scene. */
export async function emissivitySourcesOfScene(db: Db, sceneId: number): Promise<Record<string, string | null>> {
  const rows = await db.query<{ districtId: string; source: string | null }>(
    `SELECT district_id AS "districtId", emissivity_source AS source FROM zonal_stats WHERE scene_id = $1 ORDER BY district_id COLLATE "C"`,
    [sceneId],
  );
  return Object.fromEntries(rows.map((r) => [r.districtId, r.source]));
}
