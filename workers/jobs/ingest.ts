/**
 * ingest: read a scene's header, register it (keyed by content hash) with its
 * kind, acquisition time, pass and timing. A file that fails is recorded as
 * failed with its reason, and the error is raised as an InputError so the
 * runner records it too; the rest of the run goes on.
 */
import { InputError, isInputError } from '../core/errors.js';
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
}

export async function ingest(data: IngestData, ctx: JobContext<PipelineRepo>): Promise<IngestResult> {
  const { repo } = ctx;
  try {
    const raster = await openRaster(data.path);
    let result: IngestResult;
    try {
      const h = raster.header;
      const kind = sceneKind(h, data.manifest, data.defaultKind);
      const acquiredAt = data.manifest?.acquiredAt ?? h.acquiredAt;
      if (!acquiredAt && kind !== 'albedo') {
        throw new InputError(
          'has no acquisition time: no ACQUISITION_TIME (or DATETIME) metadata item, no TIFF DateTime tag, and no manifest entry; give one with --manifest',
          data.path,
        );
      }
      const [lon, lat] = sceneCentreLonLat(h);
      const timing = kind === 'lst' ? sceneTiming(acquiredAt, lon, lat, data.dayElevationDeg) : sceneTiming(null, lon, lat);
      const { id: sceneId, previousStatus } = await repo.registerSceneReporting({
        contentHash: data.contentHash,
        path: data.path,
        kind,
        sensor: data.manifest?.sensor ?? h.metadata.SENSOR ?? h.metadata.SPACECRAFT_ID ?? null,
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
      if (h.warnings.length > 0 || previousStatus !== null) await repo.setSceneWarnings(sceneId, h.warnings);
      result = {
        sceneId,
        kind,
        pass: timing.pass,
        acquiredAt: acquiredAt ?? null,
        alreadyStored: previousStatus === 'processed',
        warnings: h.warnings,
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
