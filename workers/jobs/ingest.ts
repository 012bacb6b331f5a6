/**
 * The ingest step of a scene job (jobs/scene.ts): what a scene's header says —
 * kind, acquisition time, pass and timing, a thermal scene's constants — read
 * from the opened file (and its metadata file), ready to be registered keyed by
 * content hash.
 */
import { readFile } from 'node:fs/promises';
import { InputError } from '../core/errors.js';
import {
  acquisitionTimeFromMetadata, chooseThermalConstants, metadataFileCandidates, normaliseSpacecraft, parseSceneMetadata,
  thermalBandFromName, type SceneAtmosphere, type SceneMetadataFile, type TirsBand, type TirsBandConstants,
} from '../core/thermal/index.js';
import type { RasterFile, RasterHeader } from '../core/raster/index.js';
import { pixelSizeMetres, sceneCentreLonLat } from '../core/raster/placement.js';
import { sceneTiming } from '../core/solar/index.js';
import { sceneKind, type ManifestEntry, type SceneKind } from '../run/archive.js';
import type { SceneInput, ThermalSceneInput } from '../store/index.js';

export interface IngestData {
  path: string;
  contentHash: string;
  runId: number;
  manifest?: ManifestEntry;
  /** Kind for files given as albedo (`--albedo`), unless a manifest says otherwise. */
  defaultKind?: SceneKind;
  dayElevationDeg?: number;
}

/** What the zonal step needs to turn a thermal scene's DN into LST. */
export interface IngestedThermal {
  band: TirsBand;
  constants: TirsBandConstants;
  constantsSource: string;
  spacecraft: string | null;
  /** Values or per-pixel rasters; null: emissivity correction alone. */
  atmosphere: SceneAtmosphere | null;
}

/** The scene's metadata file: the manifest's, else the first that exists by the scene's name; parsed. */
async function findMetadataFile(scenePath: string, manifest: ManifestEntry | undefined): Promise<{ file: SceneMetadataFile | null; lookedFor: string[] }> {
  const candidates = manifest?.metadata ? [manifest.metadata] : metadataFileCandidates(scenePath);
  for (const path of candidates) {
    let text: string;
    try {
      text = await readFile(path, 'latin1');
    } catch (e) {
      const code = (e as NodeJS.ErrnoException).code;
      if (manifest?.metadata) throw new InputError(`cannot read the scene's metadata file (${code ?? (e as Error).message})`, path);
      if (code === 'ENOENT' || code === 'ENOTDIR') continue;
      throw new InputError(`cannot read the scene's metadata file (${code ?? (e as Error).message})`, path);
    }
    return { file: parseSceneMetadata(text, path), lookedFor: [path] };
  }
  return { file: null, lookedFor: candidates };
}

/** Constants, atmosphere and acquisition time of a thermal scene; the notice (built-in constants) goes to `warnings`. */
async function thermalOf(h: RasterHeader, manifest: ManifestEntry | undefined, warnings: string[]): Promise<{ thermal: IngestedThermal; acquiredAt: string | null }> {
  const { file, lookedFor } = await findMetadataFile(h.path, manifest);
  const band = manifest?.band ?? thermalBandFromName(h.path) ?? 'B10';
  const choice = chooseThermalConstants({
    scenePath: h.path,
    band,
    sceneSpacecraft: normaliseSpacecraft(manifest?.sensor ?? h.metadata.SPACECRAFT_ID),
    metadata: file,
    manifest: manifest?.constants ?? null,
    lookedFor,
  });
  if (choice.notice) warnings.push(choice.notice);
  return {
    thermal: { band, constants: choice.constants, constantsSource: choice.source, spacecraft: choice.spacecraft, atmosphere: manifest?.atmosphere ?? null },
    acquiredAt: file ? acquisitionTimeFromMetadata(file) : null,
  };
}

/** What the ingest step reads of a scene: its registration (kind, time, pass ...) and what the zonal step needs. */
export interface SceneReading {
  /** The scene's row as registered (run id added by the caller). */
  scene: SceneInput;
  /** Problems found while reading the scene (stored with it). */
  warnings: string[];
  thermal?: IngestedThermal;
}

/**
 * The ingest step: read an opened scene's header, kind, acquisition time, pass
 * and timing (and a thermal scene's constants). Stores nothing; a scene that
 * cannot be used raises an InputError naming the file.
 */
export async function readScene(raster: RasterFile, data: IngestData): Promise<SceneReading> {
  const h = raster.header;
  const kind = sceneKind(h, data.manifest, data.defaultKind);
  const warnings = [...h.warnings];
  const thermal = kind === 'thermal' ? await thermalOf(h, data.manifest, warnings) : null;
  const acquiredAt = data.manifest?.acquiredAt ?? h.acquiredAt ?? thermal?.acquiredAt ?? null;
  if (!acquiredAt && kind !== 'albedo') {
    throw new InputError(
      'has no acquisition time: no ACQUISITION_TIME (or DATETIME) metadata item, no TIFF DateTime tag, and no manifest entry; give one with --manifest',
      data.path,
    );
  }
  const [lon, lat] = sceneCentreLonLat(h);
  const timing = kind === 'lst' || kind === 'thermal' ? sceneTiming(acquiredAt, lon, lat, data.dayElevationDeg) : sceneTiming(null, lon, lat);
  return {
    scene: {
      contentHash: data.contentHash,
      path: data.path,
      kind,
      sensor: data.manifest?.sensor ?? h.metadata.SENSOR ?? h.metadata.SPACECRAFT_ID ?? thermal?.thermal.spacecraft ?? null,
      productNotes: h.metadata.PRODUCT ?? null,
      acquiredAt: acquiredAt ?? null,
      pass: timing.pass,
      sunElevationDeg: timing.sunElevationDeg,
      solarTimeHours: timing.solarTimeHours,
      timingRating: timing.timingRating,
      epsg: h.epsg,
      crsDefinition: h.crsDefinition,
      width: h.width,
      height: h.height,
      pixelSizeMetres: pixelSizeMetres(h),
      scale: h.scale,
      offset: h.offset,
      nodata: Number.isNaN(h.nodata) ? null : h.nodata,
    },
    warnings,
    ...(thermal ? { thermal: thermal.thermal } : {}),
  };
}

/** How a thermal scene's LST is made, as the store records it. */
export function thermalSceneInput(t: IngestedThermal): ThermalSceneInput {
  return { lstMethod: t.atmosphere ? 'rte' : 'emissivity_only', atmosphere: t.atmosphere, constantsSource: t.constantsSource };
}
