/**
 * Which rescaling and thermal constants a Level-1 thermal scene uses: the scene's
 * metadata file, else constants given in the manifest, else the built-in
 * per-spacecraft table (with a notice). One spacecraft's constants are never
 * used for another's DN.
 */
import { InputError } from '../errors.js';
import { metadataField, thermalConstantsFromMetadata, type SceneMetadataFile } from './metadata-file.js';
import { TIRS_CONSTANTS, type TirsBand, type TirsBandConstants } from './sensors.js';

export interface ThermalConstantsChoice {
  constants: TirsBandConstants;
  band: TirsBand;
  /** SPACECRAFT_ID of the scene, when known. */
  spacecraft: string | null;
  /** Where the constants came from: 'metadata file <path>', 'manifest', 'built-in table (<spacecraft> band n)'. */
  source: string;
  /** Set when the built-in table was used: a sentence for the user. */
  notice: string | null;
}

export interface ThermalConstantsInputs {
  scenePath: string;
  band: TirsBand;
  /** Spacecraft the scene says it is from (manifest `sensor` or the GeoTIFF's SPACECRAFT_ID item), upper case; null when unknown. */
  sceneSpacecraft: string | null;
  /** The parsed metadata file, when one was found. */
  metadata: SceneMetadataFile | null;
  /** Constants the manifest gives for the scene (all four or none). */
  manifest: TirsBandConstants | null;
  /** Where the scene's metadata file was looked for, for the message when nothing is found. */
  lookedFor: readonly string[];
}

/** Normalised spacecraft id: 'landsat-8', 'Landsat 8', 'LANDSAT_8' -> 'LANDSAT_8'. */
export function normaliseSpacecraft(id: string | null | undefined): string | null {
  if (id === null || id === undefined) return null;
  const s = id.trim().toUpperCase().replace(/[\s-]+/g, '_');
  return s === '' ? null : s;
}

/**
 * Choose the constants of one thermal scene.
 * @throws InputError naming the metadata file when it belongs to another spacecraft than the scene,
 *   or naming the scene when no constants are found anywhere
 */
export function chooseThermalConstants(inp: ThermalConstantsInputs): ThermalConstantsChoice {
  const bandNo = inp.band === 'B10' ? 10 : 11;
  const fileCraft = inp.metadata ? normaliseSpacecraft(metadataField(inp.metadata, 'SPACECRAFT_ID')) : null;
  if (inp.metadata && fileCraft && inp.sceneSpacecraft && fileCraft !== inp.sceneSpacecraft) {
    throw new InputError(
      `is the metadata of ${fileCraft} but the scene ${inp.scenePath} is from ${inp.sceneSpacecraft}; one spacecraft's constants are never applied to another's DN`,
      inp.metadata.source,
    );
  }
  const spacecraft = fileCraft ?? inp.sceneSpacecraft;
  if (inp.metadata) {
    const c = thermalConstantsFromMetadata(inp.metadata, inp.band);
    if (c) return { constants: c, band: inp.band, spacecraft, source: `metadata file ${inp.metadata.source}`, notice: null };
  }
  if (inp.manifest) return { constants: inp.manifest, band: inp.band, spacecraft, source: 'manifest', notice: null };
  const table = spacecraft ? (TIRS_CONSTANTS as Record<string, Record<TirsBand, TirsBandConstants> | undefined>)[spacecraft] : undefined;
  if (table) {
    return {
      constants: table[inp.band],
      band: inp.band,
      spacecraft,
      source: `built-in table (${spacecraft} band ${bandNo})`,
      notice: `${inp.scenePath}: no metadata file or manifest constants; used the built-in ${spacecraft} band ${bandNo} constants (the scene's own metadata file is preferred)`,
    };
  }
  const looked = inp.lookedFor.length ? `looked for ${inp.lookedFor.join(', ')}` : 'none given';
  const craft = spacecraft
    ? `the spacecraft ${spacecraft} has no built-in constants (known: ${Object.keys(TIRS_CONSTANTS).join(', ')})`
    : 'no spacecraft is named (manifest sensor or SPACECRAFT_ID) for the built-in table';
  throw new InputError(
    `thermal scene without band ${bandNo} constants: no metadata file (${looked}), no radiance_mult/radiance_add/k1/k2 in the manifest, and ${craft}`,
    inp.scenePath,
  );
}
