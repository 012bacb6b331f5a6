/**
 * The persistence object processors see as `ctx.repo`: the store's repository
 * functions bound to one store, as an object of async methods. On a worker
 * thread the runner hands processors a proxy of this object whose calls run on
 * the main thread (where the embedded database lives); everywhere else it is
 * the object itself. Processors never know which.
 */
import { ENV } from '../config.js';
import { InputError } from '../core/errors.js';
import * as repo from './index.js';
import { openStore, type Store } from './store.js';

/** The store's repository functions bound to one store. */
function bindPipelineRepo(store: Store) {
  return {
    /** Register and say what the status was before (null for a new scene), in one round trip. */
    registerSceneReporting: (scene: repo.SceneInput) => repo.registerSceneReporting(store, scene),
    /** Replace the reading warnings stored with a scene. */
    setSceneWarnings: (sceneId: number, warnings: string[]) => repo.setSceneWarnings(store, sceneId, warnings),
    markSceneFailed: (f: { contentHash?: string | null; path: string; error: string; runId?: number | null }) => repo.markSceneFailed(store, f),
    listDistricts: () => repo.listDistricts(store),
    /** Id, kind, time and pass of the scenes of these kinds with this status, in acquisition order. */
    listSceneTimes: (kinds: repo.SceneKind[], status: repo.SceneStatus) => repo.listSceneTimes(store, kinds, status),
    countScenes: (status: repo.SceneStatus) => repo.countScenes(store, status),
    /** Mean and valid fraction of these districts in these scenes. */
    zonalMeansForScenes: (sceneIds: number[], districtIds: string[]) => repo.zonalMeansForScenes(store, sceneIds, districtIds),
    /** The stored scene with this content, its districts with current statistics under a coverage rule, or null. */
    storedSceneState: (contentHash: string, coverageRule: string) => repo.storedSceneState(store, contentHash, coverageRule),
    /** Register a scene with its reading warnings and replace its statistics with `rows`, as processed, in one statement; its id. */
    storeProcessedScene: (scene: repo.SceneInput, rows: repo.ZonalStatsInput[], warnings: string[]) =>
      repo.storeProcessedScene(store, scene, rows, { runId: scene.runId ?? null, warnings }),
    /** Record how a thermal scene's LST is made (method, atmosphere, constants source). */
    setSceneThermal: (sceneId: number, t: repo.ThermalSceneInput) => repo.setSceneThermal(store, sceneId, t),
    /** Store a thermal scene's emissivity source, for the scene and per district. */
    setEmissivitySources: (sceneId: number, sceneSource: string, byDistrict: Record<string, string>, inputsFingerprint: string | null) =>
      repo.setEmissivitySources(store, sceneId, sceneSource, byDistrict, inputsFingerprint),
    /** Replace every derived row of these districts with `rows`, in one transaction. */
    replaceDerivedFor: (districtIds: string[], rows: repo.DerivedInput[]) => repo.replaceDerivedFor(store, districtIds, rows),
  };
}

export type PipelineRepo = ReturnType<typeof bindPipelineRepo>;

/** Something that wraps each repository a process makes (e.g. to time its calls). */
export type PipelineRepoWrapper = (repo: PipelineRepo) => PipelineRepo;

let wrapper: PipelineRepoWrapper | null = null;

/**
 * Have every repository this process makes from now on go through `wrap`
 * (null: none). A process calls it before its runners start; worker threads
 * do not need it, their repository is a proxy of the main thread's.
 */
export function wrapPipelineRepos(wrap: PipelineRepoWrapper | null): void {
  wrapper = wrap;
}

/** The processors' repository over `store` (through the registered wrapper, if any). */
export function createPipelineRepo(store: Store): PipelineRepo {
  const bound = bindPipelineRepo(store);
  return wrapper ? wrapper(bound) : bound;
}

/** The repository of a worker process: the PostgreSQL server named by DATABASE_URL in `env`. */
export async function openWorkerRepo(env: Record<string, string | undefined>): Promise<{ repo: PipelineRepo; close(): Promise<void> }> {
  const url = env[ENV.databaseUrl];
  if (!url) throw new InputError(`a worker needs ${ENV.databaseUrl} (a PostgreSQL server shared by all workers)`);
  const store = await openStore({ databaseUrl: url });
  return { repo: createPipelineRepo(store), close: () => store.close() };
}
