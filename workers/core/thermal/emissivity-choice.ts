/**
 * Which emissivity a thermal scene's pixels take, first that applies:
 * 1. an emissivity raster given for the scene (or a constant given for it in the manifest);
 * 2. NDVI (or red and near-infrared reflectance) of the scene itself, else of the
 *    nearest day scene within the window, through the NDVI-threshold method;
 * 3. the district's `emissivity` property;
 * 4. a constant (`--emissivity`, or the documented default).
 * Steps 1-2 are chosen per scene (this module); 3-4 per district (zonal step).
 */

/** A scene that can lend NDVI (or red + NIR) to thermal passes near it in time. */
export interface NdviSource {
  scenePath: string;
  /** UTC ISO 8601; a source without a time cannot be matched. */
  acquiredAt: string | null;
  ndvi?: string;
  red?: string;
  nir?: string;
}

/** What the scene itself was given (manifest columns). */
export interface OwnEmissivityInputs {
  emissivityRaster?: string;
  emissivity?: number;
  ndvi?: string;
  red?: string;
  nir?: string;
}

/** The per-scene emissivity input, with a sentence saying where it came from. */
export type SceneEmissivityInput =
  | { kind: 'raster'; path: string; source: string }
  | { kind: 'constant'; value: number; source: string }
  | { kind: 'ndvi'; path: string; source: string }
  | { kind: 'reflectance'; red: string; nir: string; source: string };

const DAY_MS = 86_400_000;

/**
 * The per-scene emissivity input of a thermal scene, or null when neither the scene
 * nor a day scene within `windowDays` gives one (then districts and the constant decide).
 * Ties in time go to the earlier source.
 */
export function chooseSceneEmissivity(
  scenePath: string,
  own: OwnEmissivityInputs,
  acquiredAt: string | null,
  candidates: readonly NdviSource[],
  windowDays: number,
): SceneEmissivityInput | null {
  if (own.emissivityRaster) return { kind: 'raster', path: own.emissivityRaster, source: `emissivity raster ${own.emissivityRaster}` };
  if (own.emissivity !== undefined) return { kind: 'constant', value: own.emissivity, source: `constant ${own.emissivity} (manifest)` };
  if (own.ndvi) return { kind: 'ndvi', path: own.ndvi, source: `NDVI-threshold method on ${own.ndvi}` };
  if (own.red && own.nir) return { kind: 'reflectance', red: own.red, nir: own.nir, source: `NDVI-threshold method on ${own.red} and ${own.nir}` };
  if (acquiredAt === null) return null;
  const t = Date.parse(acquiredAt);
  let best: { c: NdviSource; dt: number; t: number } | null = null;
  for (const c of candidates) {
    if (c.scenePath === scenePath || c.acquiredAt === null || !(c.ndvi || (c.red && c.nir))) continue;
    const ct = Date.parse(c.acquiredAt);
    const dt = Math.abs(ct - t);
    if (!(dt <= windowDays * DAY_MS)) continue;
    if (best === null || dt < best.dt || (dt === best.dt && ct < best.t)) best = { c, dt, t: ct };
  }
  if (best === null) return null;
  const days = (best.dt / DAY_MS).toFixed(1);
  const from = `day scene ${best.c.scenePath} (${best.c.acquiredAt}, ${days} d away)`;
  if (best.c.ndvi) return { kind: 'ndvi', path: best.c.ndvi, source: `NDVI-threshold method on ${best.c.ndvi} of ${from}` };
  return { kind: 'reflectance', red: best.c.red!, nir: best.c.nir!, source: `NDVI-threshold method on ${best.c.red} and ${best.c.nir} of ${from}` };
}
