/**
 * ingest: read a scene's header, register it (keyed by content hash) with its
 * kind, acquisition time, pass and timing. A file that fails is recorded as
 * failed with its reason, and the error is raised as an InputError so the
 * runner records it too; the rest of the run goes on.
 */
import { readFile } from 'node:fs/promises';
import { InputError, isInputError } from '../core/errors.js';
import {
  acquisitionTimeFromMetadata, chooseThermalConstants, metadataFileCandidates, normaliseSpacecraft, parseSceneMetadata,
  thermalBandFromName, type SceneAtmosphere, type SceneMetadataFile, type TirsBand, type TirsBandConstants,
} from '../core/thermal/index.js';
import type { RasterHeader } from '../core/raster/index.js';
import { openRaster } from '../core/raster/index.js';
import type { JobContext } from '../queue/types.js';
import { pixelSizeMetres, sceneCentreLonLat } from '../core/raster/placement.js';
import { sceneTiming } from '../core/solar/index.js';
import { sceneKind, type ManifestEntry, type SceneKind } from '../run/archive.js';
import type { PipelineRepo } from '../store/pipeline-repo.js';

export interface IngestData {
  path: string;
  contentHash: string;
  runId: number;
  manifest?: ManifestEntry;
  /** Kind for files given as albedo (`--albedo`), unless a manifest says otherwise. */
  defaultKind?: SceneKind;
  dayElevationDeg?: number;
}

export interface IngestResult {
  sceneId: number;
  kind: SceneKind;
  pass: 'day' | 'night' | null;
  acquiredAt: string | null;
  /** True when the same content was already stored and processed. */
  alreadyStored: boolean;
  /** Problems found while reading the scene (also stored with it). */
  warnings: string[];
  /** Thermal scenes: how the DN become LST. */
  thermal?: IngestedThermal;
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

export async function ingest(data: IngestData, ctx: JobContext<PipelineRepo>): Promise<IngestResult> {
  const { repo } = ctx;
  try {
    const raster = await openRaster(data.path);
    let result: IngestResult;
    try {
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
      const { id: sceneId, previousStatus } = await repo.registerSceneReporting({
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
        runId: data.runId,
      });
      // Stored apart from the registration: only scenes with something to say (or a
      // re-read scene whose earlier warnings may be gone, e.g. a sidecar fixed) pay a round trip.
      if (warnings.length > 0 || previousStatus !== null) await repo.setSceneWarnings(sceneId, warnings);
      if (thermal) {
        const t = thermal.thermal;
        await repo.setSceneThermal(sceneId, { lstMethod: t.atmosphere ? 'rte' : 'emissivity_only', atmosphere: t.atmosphere, constantsSource: t.constantsSource });
      }
      result = {
        sceneId,
        kind,
        pass: timing.pass,
        acquiredAt: acquiredAt ?? null,
        alreadyStored: previousStatus === 'processed',
        warnings,
        ...(thermal ? { thermal: thermal.thermal } : {}),
      };
    } finally {
      await raster.close();
    }
    return result;
  } catch (e) {
    if (isInputError(e)) {
      await repo.markSceneFailed({ contentHash: data.contentHash, path: data.path, error: (e as Error).message, runId: data.runId });
    }
    throw e;
  }
}
