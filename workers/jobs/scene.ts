/**
 * scene: one job per scene file. The file is opened once; its header is read
 * (the ingest step, ingest.ts) and its district statistics computed (the zonal
 * step, zonal.ts); the scene is then stored with its statistics in one
 * statement, as 'processed'. A scene stored earlier with statistics for every
 * district of the run (and, thermal, from the same inputs) is re-registered
 * without computing anything.
 *
 * A file that cannot be used is recorded as failed with its reason (after its
 * registration, when its header could be read), and the error is raised as an
 * InputError so the runner records it too; the rest of the run goes on.
 */
import { isInputError } from '../core/errors.js';
import { openRaster } from '../core/raster/index.js';
import type { JobContext } from '../queue/types.js';
import type { PipelineRepo } from '../store/pipeline-repo.js';
import type { SceneKind } from '../store/index.js';
import { readScene, thermalSceneInput, type IngestData, type IngestedThermal, type SceneReading } from './ingest.js';
import { sceneEmissivityOf, thermalInputsKey, zonalRows, type ZonalData } from './zonal.js';

export interface SceneData extends IngestData, Omit<ZonalData, 'path'> {
  /**
   * The store had no scene with this content when the run was built: the job
   * does not look for earlier results (if one appeared since, it is replaced).
   */
  newToStore?: boolean;
}

export interface SceneResult {
  sceneId: number;
  kind: SceneKind;
  pass: 'day' | 'night' | null;
  acquiredAt: string | null;
  /** True when the same content was already stored and processed, and nothing was computed. */
  alreadyStored: boolean;
  /** Problems found while reading the scene (also stored with it). */
  warnings: string[];
  /** Thermal scenes: how the DN become LST. */
  thermal?: IngestedThermal;
  /** Zonal rows written. */
  rows: number;
  /** Why no statistics were computed, when none were. */
  skipped?: string;
}

export async function scene(data: SceneData, ctx: JobContext<PipelineRepo>): Promise<SceneResult> {
  const { repo } = ctx;
  let reading: SceneReading | null = null;
  try {
    const raster = await openRaster(data.path);
    try {
      reading = await readScene(raster, data);
      const r = reading;
      const registration = { ...r.scene, runId: data.runId };
      const { kind } = r.scene;
      const result = (sceneId: number, rows: number, alreadyStored: boolean, skipped?: string): SceneResult => ({
        sceneId, kind, pass: r.scene.pass, acquiredAt: r.scene.acquiredAt, alreadyStored, warnings: r.warnings,
        ...(r.thermal ? { thermal: r.thermal } : {}), rows, ...(skipped ? { skipped } : {}),
      });
      if (kind === 'qa') {
        const { id, previousStatus } = await repo.registerSceneReporting(registration);
        if (r.warnings.length > 0 || previousStatus !== null) await repo.setSceneWarnings(id, r.warnings);
        return result(id, 0, false, 'QA raster');
      }
      // a thermal scene's statistics also depend on its constants, atmosphere and emissivity inputs
      const sceneEmissivity = kind === 'thermal' ? sceneEmissivityOf(r, data) : null;
      const thermalKey = kind === 'thermal' ? thermalInputsKey(r, data, sceneEmissivity) : null;
      const writesLst = kind === 'thermal' && data.thermal?.writeLstDir !== undefined;
      if (!data.newToStore && !writesLst) {
        const stored = await repo.storedSceneState(data.contentHash, data.coverage);
        if (stored?.status === 'processed' && (thermalKey === null || stored.lstInputsFingerprint === thermalKey)
          && data.targetIds.every((id) => stored.districts.includes(id))) {
          // the same content, already processed for every target: take the path and header as read now
          const { id } = await repo.registerSceneReporting(registration);
          await repo.setSceneWarnings(id, r.warnings);
          if (r.thermal) await repo.setSceneThermal(id, thermalSceneInput(r.thermal));
          return result(id, 0, true, 'already processed');
        }
      }
      const zonal = await zonalRows(raster, r, data, sceneEmissivity, repo.listDistricts);
      const id = await repo.storeProcessedScene(registration, zonal.rows, r.warnings);
      if (r.thermal) {
        await repo.setSceneThermal(id, thermalSceneInput(r.thermal));
        if (zonal.thermal) await repo.setEmissivitySources(id, zonal.thermal.sceneSource, zonal.thermal.byTarget, thermalKey);
      }
      return result(id, zonal.rows.length, false);
    } finally {
      await raster.close();
    }
  } catch (e) {
    if (isInputError(e)) {
      // a scene whose header was read keeps what was read beside its failure
      if (reading) await repo.registerSceneReporting({ ...reading.scene, runId: data.runId });
      await repo.markSceneFailed({ contentHash: data.contentHash, path: data.path, error: (e as Error).message, runId: data.runId });
    }
    throw e;
  }
}
