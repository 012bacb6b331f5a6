/**
 * Zonal statistics of a thermal (Level-1 DN) scene: the DN become LST block by
 * block (core/thermal/lst-raster.ts) and go through zonalScene, so the pixel
 * rule, masks, plausibility and statistics are those of LST scenes. Districts
 * that take their emissivity from a property (or the constant) are grouped by
 * value, one pass per group.
 */
import { openRaster, type RasterFile } from '../raster/index.js';
import { thermalLstRaster, type AtmosphereRasters, type EmissivityField, type ThermalLstPlan } from '../thermal/lst-raster.js';
import type { SceneEmissivityInput } from '../thermal/emissivity-choice.js';
import { isAtmosphereRasters, type AtmosphereParameters, type SceneAtmosphere } from '../thermal/rte.js';
import type { TirsBandConstants } from '../thermal/sensors.js';
import { zonalScene, type ZonalSceneOptions, type ZonalSceneResult, type ZonalTarget } from './scene.js';

export interface ThermalZonalInput {
  constants: TirsBandConstants;
  /** Values or raster paths; null: no atmospheric correction. */
  atmosphere: SceneAtmosphere | null;
  /** Per-pixel emissivity for the whole scene, or null (then districts, then the fallback). */
  sceneEmissivity: SceneEmissivityInput | null;
  /** District `emissivity` properties in (0.8, 1] (checked by the caller). */
  districtEmissivity: Readonly<Record<string, number>>;
  /** The constant when nothing else applies, and how to name it. */
  fallback: { value: number; source: string };
}

export interface ThermalZonalResult {
  results: ZonalSceneResult[];
  /** Where the scene's emissivity came from (one sentence). */
  sceneSource: string;
  /** Emissivity source per target id. */
  byTarget: Record<string, string>;
}

/** Open the rasters of a per-scene emissivity input as an EmissivityField (caller closes `opened`). */
export async function openEmissivityField(input: SceneEmissivityInput, opened: RasterFile[]): Promise<EmissivityField> {
  const open = async (p: string) => { const r = await openRaster(p); opened.push(r); return r; };
  switch (input.kind) {
    case 'constant': return { kind: 'constant', value: input.value };
    case 'raster': return { kind: 'raster', raster: await open(input.path) };
    case 'ndvi': return { kind: 'ndvi', ndvi: await open(input.path) };
    case 'reflectance': return { kind: 'reflectance', red: await open(input.red), nir: await open(input.nir) };
  }
}

/** Open a scene's atmosphere rasters (caller closes `opened`); values pass through. */
export async function openAtmosphere(a: SceneAtmosphere | null, opened: RasterFile[]): Promise<AtmosphereParameters | AtmosphereRasters | null> {
  if (a === null || !isAtmosphereRasters(a)) return a;
  const open = async (p: string) => { const r = await openRaster(p); opened.push(r); return r; };
  return { kind: 'rasters', transmittance: await open(a.transmittanceRaster), upwelling: await open(a.upwellingRaster), downwelling: await open(a.downwellingRaster) };
}

/**
 * Zonal statistics of a thermal DN scene for many targets.
 * @param dn the scene (Level-1 DN)
 * @param targets zones in the scene's CRS
 * @param options the zonalScene options (coverage, plausible range, QA, band)
 * @param thermal constants, atmosphere and emissivity inputs
 * @returns results in target order, with the emissivity source of the scene and of each target
 * @throws InputError naming an emissivity or NDVI raster that is on another grid or holds values out of range
 */
export async function zonalThermalScene(
  dn: RasterFile,
  targets: readonly ZonalTarget[],
  options: ZonalSceneOptions,
  thermal: ThermalZonalInput,
): Promise<ThermalZonalResult> {
  const opened: RasterFile[] = [];
  // the adapter's close() would close the DN scene, which belongs to the caller: never called here
  try {
    const atmosphere = await openAtmosphere(thermal.atmosphere, opened);
    const plan = (emissivity: EmissivityField): ThermalLstPlan => ({ constants: thermal.constants, atmosphere, emissivity });
    if (thermal.sceneEmissivity !== null) {
      const field = await openEmissivityField(thermal.sceneEmissivity, opened);
      const results = await zonalScene(thermalLstRaster(dn, plan(field)), targets, options);
      return { results, sceneSource: thermal.sceneEmissivity.source, byTarget: Object.fromEntries(targets.map((t) => [t.id, thermal.sceneEmissivity!.source])) };
    }
    const groups = new Map<number, { source: string; targets: ZonalTarget[] }>();
    const byTarget: Record<string, string> = {};
    for (const t of targets) {
      const prop = thermal.districtEmissivity[t.id];
      const value = prop ?? thermal.fallback.value;
      const source = prop !== undefined ? `district property emissivity ${prop}` : thermal.fallback.source;
      byTarget[t.id] = source;
      const key = prop !== undefined ? value : -value; // a property and the fallback of one value stay apart (their sources differ)
      const g = groups.get(key) ?? { source, targets: [] };
      g.targets.push(t);
      groups.set(key, g);
    }
    const byId = new Map<string, ZonalSceneResult>();
    for (const [key, g] of groups) {
      const rows = await zonalScene(thermalLstRaster(dn, plan({ kind: 'constant', value: Math.abs(key) })), g.targets, options);
      for (const r of rows) byId.set(r.id, r);
    }
    const sources = [...new Set(Object.values(byTarget))];
    const sceneSource = sources.length === 1 ? sources[0] : `per district: ${sources.join('; ')}`;
    return { results: targets.map((t) => byId.get(t.id)!), sceneSource, byTarget };
  } finally {
    for (const r of opened) await r.close();
  }
}
