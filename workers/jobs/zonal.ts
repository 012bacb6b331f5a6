/**
 * The zonal step of a scene job (jobs/scene.ts): statistics of one scene for
 * every district and the rural reference, in one pass over the blocks under
 * them; districts are reprojected once per CRS (cached for the life of the
 * process or thread). Stores nothing: the scene job stores the rows with the
 * scene's registration.
 */
import { InputError } from '../core/errors.js';
import { fingerprint } from '../core/hash.js';
import { openRaster, rasterCrs, type RasterFile } from '../core/raster/index.js';
import type { ZonalStatsInput } from '../store/index.js';
import { GEOJSON_CRS, reprojectFlat, type FlatMultiPolygon } from '../core/crs/index.js';
import { mkdir } from 'node:fs/promises';
import { basename, join } from 'node:path';
import { zonalScene, zonalThermalScene, openAtmosphere, openEmissivityField, type ThermalZonalResult, type ZonalSceneOptions, type ZonalTarget } from '../core/zonal/index.js';
import { chooseSceneEmissivity, writeThermalLst, type NdviSource, type OwnEmissivityInputs, type SceneEmissivityInput } from '../core/thermal/index.js';
import type { SceneReading } from './ingest.js';

export interface ZonalData {
  path: string;
  /** Ids of the districts (and rural reference) of this run. */
  targetIds: string[];
  /** Fingerprint of the targets' geometries and the run's parameters: cached geometries are valid for one key. */
  targetsKey: string;
  coverage: 'centre' | 'fraction';
  plausibleKelvin: [number, number] | null;
  qa?: { path: string; maskBits?: number; maskValues?: number[] };
  /** Thermal scenes: where emissivity comes from, and where to write the derived LST. */
  thermal?: ThermalZonalData;
}

/** The run's emissivity inputs for a thermal scene (see core/thermal/emissivity-choice.ts). */
export interface ThermalZonalData {
  /** The scene's own manifest inputs. */
  own: OwnEmissivityInputs;
  /** Scenes of the run that can lend NDVI (or red + NIR). */
  ndviSources: NdviSource[];
  windowDays: number;
  /** District `emissivity` properties (checked in (0.8, 1]). */
  districtEmissivity: Record<string, number>;
  /** The last fallback. */
  fallback: { value: number; source: string };
  /** Also write the derived LST as a COG into this folder. */
  writeLstDir?: string;
}

/** A thermal scene's emissivity input, chosen once per scene (null: the district properties, then the fallback). */
export function sceneEmissivityOf(ingested: SceneReading, data: ZonalData): SceneEmissivityInput | null {
  const d = data.thermal;
  return d ? chooseSceneEmissivity(data.path, d.own, ingested.scene.acquiredAt, d.ndviSources, d.windowDays) : null;
}

/** Fingerprint of what a thermal scene's statistics are computed from. */
export function thermalInputsKey(ingested: SceneReading, data: ZonalData, sceneEmissivity: SceneEmissivityInput | null): string {
  const t = ingested.thermal, d = data.thermal;
  if (!t || !d) return fingerprint('incomplete thermal inputs');
  const districtEmissivity = Object.fromEntries(data.targetIds.filter((id) => id in d.districtEmissivity).map((id) => [id, d.districtEmissivity[id]]));
  return fingerprint(t.constants, t.atmosphere, sceneEmissivity, districtEmissivity, d.fallback.value);
}

/** Statistics of a thermal scene from its DN (and, with --write-lst, its LST as a COG). */
async function thermalZonal(raster: RasterFile, targets: ZonalTarget[], options: ZonalSceneOptions, ingested: SceneReading, data: ZonalData,
  sceneEmissivity: SceneEmissivityInput | null): Promise<ThermalZonalResult> {
  const t = ingested.thermal;
  const d = data.thermal;
  if (!t || !d) throw new Error(`thermal scene ${data.path} reached the zonal step without its constants or emissivity inputs`);
  const result = await zonalThermalScene(raster, targets, options, {
    constants: t.constants, atmosphere: t.atmosphere, sceneEmissivity, districtEmissivity: d.districtEmissivity, fallback: d.fallback,
  });
  if (d.writeLstDir) {
    const opened: RasterFile[] = [];
    try {
      const emissivity = sceneEmissivity ? await openEmissivityField(sceneEmissivity, opened) : { kind: 'constant' as const, value: d.fallback.value };
      const atmosphere = await openAtmosphere(t.atmosphere, opened);
      await mkdir(d.writeLstDir, { recursive: true }).catch((e: NodeJS.ErrnoException) => {
        throw new InputError(`cannot create the folder for --write-lst (${e.code ?? e.message})`, d.writeLstDir);
      });
      await writeThermalLst(raster, { constants: t.constants, atmosphere, emissivity }, join(d.writeLstDir, `${basename(data.path).replace(/\.[^.]*$/, '')}_lst.tif`), {
        SOURCE_SCENE: basename(data.path),
        ...(ingested.scene.acquiredAt ? { ACQUISITION_TIME: ingested.scene.acquiredAt } : {}),
        ...(ingested.scene.pass ? { PASS: ingested.scene.pass } : {}),
        LST_METHOD: t.atmosphere ? 'radiative transfer equation inverted with the scene atmosphere' : 'emissivity correction alone (no atmospheric correction)',
        THERMAL_CONSTANTS_SOURCE: t.constantsSource,
        EMISSIVITY_SOURCE: sceneEmissivity ? sceneEmissivity.source : `${d.fallback.source} (district properties are not applied to this raster)`,
      });
    } finally {
      for (const r of opened) await r.close();
    }
  }
  return result;
}

type Geometry = number[][][][];
// Per process (or thread): a long-lived worker serves run after run, so the
// caches hold one targets key at a time; a job with another key (districts
// redrawn since) starts them afresh rather than using old geometry.
let cacheKey: string | null = null;
const lonLatCache = new Map<string, Geometry>();
const projectedCache = new Map<string, Map<string, FlatMultiPolygon>>();

async function targetsFor(listDistricts: () => Promise<{ id: string; geometry: unknown }[]>, ids: readonly string[], crs: string, key: string): Promise<ZonalTarget[]> {
  if (key !== cacheKey) {
    clearDistrictCache();
    cacheKey = key;
  }
  const missing = ids.filter((id) => !lonLatCache.has(id));
  if (missing.length) {
    for (const d of await listDistricts()) {
      const g = d.geometry as { type: string; coordinates: unknown };
      lonLatCache.set(d.id, g.type === 'Polygon' ? [g.coordinates as number[][][]] : (g.coordinates as Geometry));
    }
  }
  let byId = projectedCache.get(crs);
  if (!byId) projectedCache.set(crs, (byId = new Map()));
  return ids.map((id) => {
    let g = byId!.get(id);
    if (!g) {
      const ll = lonLatCache.get(id);
      if (!ll) throw new Error(`district ${id} is not in the store`);
      g = reprojectFlat(ll, GEOJSON_CRS, crs);
      byId!.set(id, g);
    }
    return { id, geometry: g };
  });
}

/** Forget cached district geometries. */
function clearDistrictCache(): void {
  cacheKey = null;
  lonLatCache.clear();
  projectedCache.clear();
}

/** A scene's zonal rows, and for a thermal scene where its emissivity came from. */
export interface SceneZonal {
  rows: ZonalStatsInput[];
  thermal: ThermalZonalResult | null;
}

/**
 * The zonal step: statistics of an opened scene (kind lst, albedo or thermal)
 * for the run's targets, as rows for the store. Districts come from the store
 * (`listDistricts`) the first time a run's targets are met in this process.
 */
export async function zonalRows(raster: RasterFile, ingested: SceneReading, data: ZonalData, sceneEmissivity: SceneEmissivityInput | null,
  listDistricts: () => Promise<{ id: string; geometry: unknown }[]>): Promise<SceneZonal> {
  let qa: RasterFile | null = null;
  try {
    const crs = rasterCrs(raster.header);
    const targets = await targetsFor(listDistricts, data.targetIds, crs, data.targetsKey);
    if (data.qa) qa = await openRaster(data.qa.path);
    const options: ZonalSceneOptions = {
      coverage: data.coverage,
      // albedo is a fraction, not a temperature: the LST plausibility window does not apply
      plausibleKelvin: ingested.scene.kind === 'lst' || ingested.scene.kind === 'thermal' ? data.plausibleKelvin : [0, 1],
      qa: qa ? { raster: qa, maskBits: data.qa?.maskBits, maskValues: data.qa?.maskValues } : undefined,
    };
    const thermal = ingested.scene.kind === 'thermal' ? await thermalZonal(raster, targets, options, ingested, data, sceneEmissivity) : null;
    const results = thermal ? thermal.results : await zonalScene(raster, targets, options);
    const rows = results.map((r) => ({
      districtId: r.id,
      pixels: r.stats.pixels,
      valid: r.stats.valid,
      validFraction: r.stats.validFraction,
      meanKelvin: r.stats.mean,
      stdKelvin: r.stats.std,
      minKelvin: r.stats.min,
      maxKelvin: r.stats.max,
      medianKelvin: r.stats.median,
      p10Kelvin: r.stats.p10,
      p90Kelvin: r.stats.p90,
      nodataCount: r.counts.nodata,
      maskedCount: r.counts.masked,
      implausibleCount: r.counts.implausible,
      coverageRule: data.coverage,
    }));
    return { rows, thermal };
  } finally {
    if (qa) await qa.close();
  }
}
