/**
 * The persistence object processors see as `ctx.repo`: the store's repository
 * functions bound to one store, as an object of async methods. On a worker
 * thread the runner hands processors a proxy of this object whose calls run on
 * the main thread (where the embedded database lives); everywhere else it is
 * the object itself. Processors never know which.
 */
import * as repo from '../store/repo.js';
import type { Store } from '../store/store.js';

export function createPipelineRepo(store: Store) {
  return {
    getRun: (runId: number) => repo.getRun(store, runId),
    findSceneByHash: (hash: string) => repo.findSceneByHash(store, hash),
    getScene: (sceneId: number) => repo.getScene(store, sceneId),
    registerScene: (scene: repo.SceneInput) => repo.registerScene(store, scene),
    /** Register and say what the status was before (null for a new scene), in one round trip. */
    registerSceneReporting: (scene: repo.SceneInput) => repo.registerSceneReporting(store, scene),
    /** Replace the reading warnings stored with a scene. */
    setSceneWarnings: (sceneId: number, warnings: string[]) => repo.setSceneWarnings(store, sceneId, warnings),
    markSceneFailed: (f: { contentHash?: string | null; path: string; error: string; runId?: number | null }) => repo.markSceneFailed(store, f),
    listDistricts: () => repo.listDistricts(store),
    listScenes: (filter: { kind?: repo.SceneKind; status?: repo.SceneStatus }) => repo.listScenes(store, filter),
    zonalStatsForScenes: (ids: number[]) => repo.zonalStatsForScenes(store, ids),
    /**
     * District ids with statistics for a scene under a coverage rule that are still current: computed
     * in a run that started after the district (its geometry, e.g. a rural ring with water cut out)
     * was last changed. Statistics of a district changed since, or of an unknown run, are not counted.
     */
    zonalDistrictsOfScene: async (sceneId: number, coverageRule: string): Promise<string[]> =>
      (await store.query<{ id: string }>(
        `SELECT z.district_id AS id
         FROM zonal_stats z
         JOIN districts d ON d.id = z.district_id
         JOIN runs r ON r.id = z.run_id
         WHERE z.scene_id = $1 AND z.coverage_rule = $2 AND r.started_at >= d.updated_at
         ORDER BY z.district_id COLLATE "C"`,
        [sceneId, coverageRule],
      )).map((r) => r.id),
    replaceZonalStats: (sceneId: number, rows: repo.ZonalStatsInput[], runId: number | null) =>
      repo.replaceZonalStats(store, sceneId, rows, { runId }),
    /** Replace every derived row of these districts with `rows`, in one transaction. */
    replaceDerivedFor: (districtIds: string[], rows: repo.DerivedInput[]) =>
      store.transaction(async (tx) => {
        await tx.query('DELETE FROM derived_metrics WHERE district_id = ANY($1::text[])', [districtIds]);
        return repo.replaceDerived(tx, rows);
      }),
    finishRun: (runId: number, status: 'succeeded' | 'failed', error?: string) => repo.finishRun(store, runId, { status, error }),
  };
}

export type PipelineRepo = ReturnType<typeof createPipelineRepo>;
