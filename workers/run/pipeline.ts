/**
 * The main job: districts + a scene archive → zonal statistics, ATI and SUHI
 * in the store. The same code runs embedded (in-process runner, embedded
 * database) and distributed (queue workers on Redis, PostgreSQL server); the
 * only difference is which runner queue/configured.ts and which store
 * store/configured.ts hand back.
 */
import os from 'node:os';
import { resolve } from 'node:path';
import { InputError, isServiceError } from '../core/errors.js';
import { settleWithin } from '../core/settle.js';
import { readDistricts, ruralRing, subtractPolygons, type District } from '../core/districts/index.js';
import { writeRuralDescription } from '../core/districts/rural-description.js';
import type { DeriveOptions } from '../core/derive/metrics.js';
import { DEFAULT_DERIVE_OPTIONS } from '../core/derive/metrics.js';
import { fingerprint } from '../core/hash.js';
import { EMISSIVITY_WINDOW_DAYS, PLAUSIBLE_RANGE_KELVIN, RURAL_RING_INNER_METRES, RURAL_RING_OUTER_METRES, THERMAL_EMISSIVITY_DEFAULT } from '../core/defaults.js';
import { checkEmissivity, type NdviSource } from '../core/thermal/index.js';
import { openRaster } from '../core/raster/index.js';
import { listScenes, readManifest, type ManifestEntry, type UnreadablePath } from './archive.js';
import { readMergedPolygons, readRuralReference } from '../core/districts/merged.js';
import { registryModuleUrl, THREADED_JOBS } from './registry.js';
import { createPipelineRepo } from '../store/pipeline-repo.js';
import type { DeriveResult } from '../jobs/derive.js';
import type { SceneResult } from '../jobs/scene.js';
import type { FlowProgress, FlowResult, JobFailure, Runner } from '../queue/types.js';
import { DEFAULT_SERVICE_RETRY_BUDGET_MS } from '../queue/settings.js';
import { withServiceRetry } from '../queue/retry.js';
import { createConfiguredRunner, prepareConfiguredRunner } from '../queue/configured.js';
import type { Store } from '../store/index.js';
import { openConfiguredStore, prepareConfiguredStore } from '../store/configured.js';
import { upsertDistricts } from '../store/districts.js';
import { startRun, finishRun } from '../store/runs.js';
import { knownContentHashes, markSceneFailed, scenesNotProcessed } from '../store/scenes.js';
import { storeIdentity } from '../store/identity.js';
import { onInterrupt } from '../store/interrupt.js';
import { runtimeConfig, type RuntimeConfig } from './config.js';
import { buildFlow } from './flow.js';
import { runOutcome, type RunOutcome } from './outcome.js';
import { VERSION } from '../version.js';

export const RURAL_ID = 'rural';

/**
 * How long an interrupted run waits for its runner to stop: worker threads end
 * within milliseconds unless a job is blocked in a read that never returns.
 */
const RUNNER_STOP_WAIT_MS = 10_000;

export interface PipelineOptions {
  /** Scene files and folders (searched recursively for .tif/.tiff). */
  inputs: string[];
  districtsPath: string;
  idField?: string;
  nameField?: string;
  /** User rural reference polygon(s); default a ring around the districts. */
  ruralPath?: string;
  ruralInnerMetres?: number;
  ruralOuterMetres?: number;
  /** Water polygons (GeoJSON) cut out of the default rural ring. */
  waterPath?: string;
  /** Albedo rasters or folders (kind 'albedo'). */
  albedoInputs?: string[];
  manifestPath?: string;
  coverage?: 'centre' | 'fraction';
  plausibleKelvin?: [number, number] | null;
  qaMaskBits?: number;
  derive?: Partial<DeriveOptions>;
  /** Worker threads in embedded mode (default: the machine's cores). */
  threads?: number;
  dataDir?: string;
  /** How long (s) PostgreSQL or Redis may stay unreachable before the run gives up on them; default 300. */
  serviceRetryBudgetSeconds?: number;
  /** Distributed mode: how long (s) to wait with no worker activity before ending the run incomplete; default 180. */
  stallTimeoutSeconds?: number;
  /** Thermal scenes: the constant emissivity when no raster, NDVI or district property applies; in (0.8, 1]. */
  emissivity?: number;
  /** Thermal scenes: NDVI is taken from the nearest day scene within this many days (default 16). */
  emissivityWindowDays?: number;
  /** Thermal scenes: also write the derived LST as COGs into this folder. */
  writeLstDir?: string;
  onProgress?(p: FlowProgress & { elapsedSeconds: number }): void;
  onNotice?(message: string): void;
}

export interface PipelineSummary {
  runId: number;
  mode: RuntimeConfig['mode'];
  scenes: number;
  /** Files whose bytes equal an earlier file's (processed once, as that file). */
  duplicates: { path: string; sameAs: string }[];
  /** Paths asked for that could not be read (stored as failed scenes keyed by path). */
  unreadable: UnreadablePath[];
  failures: JobFailure[];
  derive: DeriveResult | null;
  /** How the run ended, as stored in its row. */
  outcome: RunOutcome;
  seconds: number;
}

/** The rural ring without the water polygons of `waterPath` (GeoJSON; ids optional). */
export async function subtractWater(ring: District, waterPath: string): Promise<District> {
  const water = await readMergedPolygons(waterPath, 'water', 'water');
  return subtractPolygons(ring, water.geometry, waterPath);
}

function asNumber(v: unknown): number | null {
  const n = typeof v === 'string' ? Number(v) : v;
  return typeof n === 'number' && Number.isFinite(n) && n >= 0 && n <= 1 ? n : null;
}

/** What the embedded runner runs: the registry's processors, on this many threads. */
function runnerParts(threads: number | undefined) {
  return { processorsModule: registryModuleUrl(), threads, threadedJobs: THREADED_JOBS };
}

/** The runner for a configuration; embedded mode runs the registry's processors on this store. */
function createRunner(
  config: RuntimeConfig, store: Store, threads: number | undefined,
  limits: { serviceRetryBudgetMs?: number; stallTimeoutMs?: number },
): Promise<Runner> {
  return createConfiguredRunner(config, { ...runnerParts(threads), repo: createPipelineRepo(store) }, limits);
}

/** The districts of a run; none may take the rural reference's id. */
async function runDistricts(options: PipelineOptions): Promise<District[]> {
  const districts = await readDistricts(options.districtsPath, { idField: options.idField, nameField: options.nameField });
  if (districts.some((d) => d.id === RURAL_ID)) {
    throw new InputError(`a district has the id "${RURAL_ID}", which is reserved for the rural reference`, options.districtsPath);
  }
  return districts;
}

/** The rural reference: the user's polygons, else a ring around the districts (without water), and how it was made. */
async function ruralReference(options: PipelineOptions, districts: District[]): Promise<{ rural: District; description: string }> {
  if (options.ruralPath) {
    return { rural: await readRuralReference(options.ruralPath), description: writeRuralDescription({ kind: 'polygons', path: options.ruralPath }) };
  }
  const inner = options.ruralInnerMetres ?? RURAL_RING_INNER_METRES;
  const outer = options.ruralOuterMetres ?? RURAL_RING_OUTER_METRES;
  const ring = ruralRing(districts, inner, outer, { source: options.districtsPath });
  const description = writeRuralDescription({ kind: 'ring', innerMetres: inner, outerMetres: outer, waterPath: options.waterPath ?? null });
  if (!options.waterPath) return { rural: ring, description };
  return { rural: await subtractWater(ring, options.waterPath), description };
}

/** The scene files of a run (hashed, duplicates and unreadable paths apart), each with its manifest entry. */
async function runScenes(options: PipelineOptions, beforeHashing?: () => void) {
  const manifest = options.manifestPath ? await readManifest(options.manifestPath) : new Map<string, ManifestEntry>();
  const listing = await listScenes(options.inputs, options.albedoInputs ?? [], { beforeHashing });
  for (const f of listing.files) f.manifest = manifest.get(f.path);
  if (options.qaMaskBits === undefined && [...manifest.values()].some((m) => m.qa)) {
    throw new InputError('the manifest gives QA rasters; say which QA bits mask a pixel with --qa-mask', options.manifestPath);
  }
  return listing;
}

/**
 * The emissivity inputs thermal scenes share: district `emissivity` properties, the
 * scenes that can lend NDVI (with their times), the window and the constant.
 * @throws InputError naming the districts file, the manifest or the option for a value out of range
 */
async function thermalInputs(options: PipelineOptions, districts: District[], files: { path: string; manifest?: ManifestEntry }[]): Promise<NonNullable<Parameters<typeof buildFlow>[0]['thermal']>> {
  const fallbackValue = options.emissivity ?? THERMAL_EMISSIVITY_DEFAULT;
  checkEmissivity(fallbackValue, '--emissivity');
  const windowDays = options.emissivityWindowDays ?? EMISSIVITY_WINDOW_DAYS;
  if (!(Number.isFinite(windowDays) && windowDays >= 0)) throw new InputError(`--emissivity-window ${windowDays} is not a number of days >= 0`);
  const districtEmissivity: Record<string, number> = {};
  for (const d of districts) {
    const v = d.properties.emissivity;
    if (v === undefined || v === null || v === '') continue;
    const n = typeof v === 'string' ? Number(v) : v;
    checkEmissivity(n, `${options.districtsPath} (district ${d.id}, property emissivity)`);
    districtEmissivity[d.id] = n as number;
  }
  const ndviSources: NdviSource[] = [];
  for (const f of files) {
    const m = f.manifest;
    if (!m || !(m.ndvi || (m.red && m.nir))) continue;
    let acquiredAt = m.acquiredAt ?? null;
    if (acquiredAt === null) {
      const r = await openRaster(f.path).catch(() => null); // an unreadable scene is reported by its own ingest
      if (r) { acquiredAt = r.header.acquiredAt; await r.close(); }
    }
    ndviSources.push({ scenePath: f.path, acquiredAt, ndvi: m.ndvi, red: m.red, nir: m.nir });
  }
  return {
    ndviSources,
    windowDays,
    districtEmissivity,
    fallback: { value: fallbackValue, source: `constant ${fallbackValue} (${options.emissivity !== undefined ? '--emissivity' : 'default'})` },
    ...(options.writeLstDir ? { writeLstDir: resolve(options.writeLstDir) } : {}),
  };
}

/** The run's parameters as stored with it (and fingerprinted into its job ids). */
function runParameters(options: PipelineOptions, districts: District[], ruralDescription: string) {
  const deriveOptions: DeriveOptions = { ...DEFAULT_DERIVE_OPTIONS, ...options.derive };
  const coverage = options.coverage ?? 'centre';
  const plausibleKelvin = options.plausibleKelvin === undefined ? ([...PLAUSIBLE_RANGE_KELVIN] as [number, number]) : options.plausibleKelvin;
  const params = {
    coverageRule: coverage,
    ruralReference: { districtId: RURAL_ID, description: ruralDescription },
    plausibleRangeKelvin: plausibleKelvin,
    minValidFraction: deriveOptions.minValidFraction,
    pairingWindowHours: deriveOptions.pairingWindowHours,
    albedoWindowDays: deriveOptions.albedoWindowDays,
    atiMinDifferenceKelvin: deriveOptions.minDifferenceKelvin,
    qaMaskBits: options.qaMaskBits ?? null,
    districtIds: districts.map((d) => d.id),
  };
  return { params, deriveOptions, coverage, plausibleKelvin };
}

/** Scenes (hashed), parameters and thermal inputs of a run; `beforeHashing` as for {@link listScenes}. */
async function runInputs(options: PipelineOptions, districts: District[], ruralDescription: string, beforeHashing: () => void) {
  const { files, duplicates, unreadable } = await runScenes(options, beforeHashing);
  const { params, deriveOptions, coverage, plausibleKelvin } = runParameters(options, districts, ruralDescription);
  const thermal = await thermalInputs(options, districts, files);
  return { files, duplicates, unreadable, params, deriveOptions, coverage, plausibleKelvin, thermal };
}

/** The districts and the rural reference as stored rows. */
function districtRows(districts: District[], rural: District, ruralDescription: string) {
  return [
    ...districts.map((d) => ({ id: d.id, name: d.name, role: 'district' as const, geometry: d.geometry, areaSquareMetres: d.areaSquareMetres, properties: d.properties })),
    { id: RURAL_ID, name: 'rural reference', role: 'rural' as const, geometry: rural.geometry, areaSquareMetres: rural.areaSquareMetres, properties: { description: ruralDescription } },
  ];
}

/** Run the whole job: read the inputs, record the run, run its job tree, record how it ended. */
export async function runPipeline(options: PipelineOptions, config: RuntimeConfig = runtimeConfig({ dataDir: options.dataDir })): Promise<PipelineSummary> {
  const started = performance.now();
  const districts = await runDistricts(options);
  const { rural, description: ruralDescription } = await ruralReference(options, districts);
  const budgetMs = options.serviceRetryBudgetSeconds !== undefined ? options.serviceRetryBudgetSeconds * 1000 : DEFAULT_SERVICE_RETRY_BUDGET_MS;
  // A database server that is away is waited for (within the budget); an embedded store is not a service.
  const onServer = <T>(fn: () => Promise<T>): Promise<T> => (config.databaseUrl ? withServiceRetry(fn, budgetMs) : fn());
  // An embedded store takes about a second to open (PGlite's start): once the walk has found
  // scene files, it opens while they are hashed, and the worker threads load their modules
  // meanwhile (errors are the runner's to report). A server connection is quick, and is made
  // only once the inputs are known good, so that a server that is away never delays an input
  // error; only the modules of its client and of the queue's load while the files are hashed.
  const early: { store: Promise<Store> | null } = { store: null };
  const startEarly = () => {
    void prepareConfiguredRunner(config, runnerParts(options.threads)).catch(() => undefined);
    if (config.databaseUrl) {
      void prepareConfiguredStore(config).catch(() => undefined);
      return;
    }
    early.store = openConfiguredStore(config);
    early.store.catch(() => undefined); // its error is met below, or the input error comes first
  };
  const inputs = await runInputs(options, districts, ruralDescription, startEarly).catch(async (e: unknown) => {
    await early.store?.then((s) => s.close(), () => undefined);
    throw e;
  });
  const { files, duplicates, unreadable, params, deriveOptions, coverage, plausibleKelvin, thermal } = inputs;
  const store = await (early.store ?? onServer(() => openConfiguredStore(config)));
  let runner: Runner | null = null;
  let unregisterInterrupt = () => {};
  let interrupted = false;
  let finishing: Promise<void> | null = null;
  try {
    await onServer(() => upsertDistricts(store, districtRows(districts, rural, ruralDescription)));
    const runId = await onServer(() => startRun(store, {
      softwareVersion: VERSION, mode: config.mode, parameters: params, ownerHost: os.hostname(), ownerPid: process.pid, scenesAsked: files.length,
    }));
    for (const u of unreadable) await onServer(() => markSceneFailed(store, { path: u.path, error: `${u.path}: ${u.reason}`, runId }));
    // SIGINT/SIGTERM: stop the jobs, then say in the store how far the run got (the store closes after this handler)
    unregisterInterrupt = onInterrupt(async (signal) => {
      // every job is done: let the run's own end be recorded
      if (finishing) {
        await finishing.catch(() => undefined);
        return { message: `interrupted after run ${runId} had finished its jobs; its state is recorded` };
      }
      interrupted = true;
      // stop handing out jobs; the run is recorded meanwhile (a job blocked in a read must not hold that up)
      const stopped = runner ? settleWithin(runner.close(), RUNNER_STOP_WAIT_MS) : Promise.resolve(true);
      runner = null;
      const left = await scenesNotProcessed(store, files.map((f) => f.contentHash));
      await finishRun(store, runId, { status: 'interrupted', error: `stopped by ${signal}`, scenesLeft: left });
      return {
        message: `interrupted; run ${runId} marked interrupted, ${left} scene(s) left — run the same ingest again to finish them`,
        ...((await stopped) ? {} : { stuck: true }),
      };
    });
    const identity = await onServer(() => storeIdentity(store));
    const knownHashes = await onServer(() => knownContentHashes(store, files.map((f) => f.contentHash)));
    const root = buildFlow({
      identity,
      runId,
      files,
      targetIds: [...districts.map((d) => d.id), RURAL_ID],
      params: { ...params, thermal: { ...thermal, ndviSources: thermal.ndviSources.map((n) => [n.scenePath, n.acquiredAt]) }, districtsFingerprint: fingerprint(districts.map((d) => [d.id, d.geometry])), ruralFingerprint: fingerprint(rural.geometry) },
      zonal: { coverage, plausibleKelvin },
      knownHashes,
      qaMaskBits: options.qaMaskBits,
      thermal,
      derive: {
        districtIds: districts.map((d) => d.id),
        ruralId: RURAL_ID,
        options: deriveOptions,
        albedoProperties: Object.fromEntries(districts.map((d) => [d.id, asNumber(d.properties.albedo)])),
      },
    });
    runner = await createRunner(config, store, options.threads, {
      serviceRetryBudgetMs: budgetMs,
      stallTimeoutMs: options.stallTimeoutSeconds !== undefined ? options.stallTimeoutSeconds * 1000 : undefined,
    });
    let result: FlowResult | null;
    try {
      result = await runner.runFlow(root, {
        onProgress: options.onProgress ? (p) => options.onProgress!({ ...p, elapsedSeconds: (performance.now() - started) / 1000 }) : undefined,
        // once interrupted, the runner's notices (while it stops) are not news
        onNotice: options.onNotice ? (m) => { if (!interrupted) options.onNotice!(m); } : undefined,
      });
    } catch (e) {
      if (interrupted) result = null;
      // The queue itself went away (Redis past the budget): nothing is known done; the run is left for the next ingest.
      else if (!isServiceError(e)) throw e;
      else result = { results: new Map(), failures: [], stopped: { error: e.message, kind: 'service', service: e.service } };
    }
    // stopped by a signal: the interrupt handler records the run, closes the store and exits the process
    if (interrupted || result === null) return await untilExit();
    const deriveResult = (result.results.get(root.id) as DeriveResult | undefined) ?? null;
    // thermal scenes converted with the built-in constants: say so (the warning is also stored with the scene)
    for (const r of result.results.values()) {
      const ingested = r as Partial<SceneResult> | undefined;
      if (ingested?.thermal && ingested.thermal.constantsSource.startsWith('built-in')) {
        for (const w of ingested.warnings ?? []) if (w.includes('built-in')) options.onNotice?.(w);
      }
    }
    const outcome = runOutcome(root, result, unreadable.length);
    finishing = onServer(() => finishRun(store, runId, {
      status: outcome.status,
      error: outcome.error,
      errorKind: outcome.errorKind,
      scenesLeft: outcome.status === 'succeeded' ? 0 : outcome.scenesLeft,
    }));
    await finishing;
    return {
      runId,
      mode: config.mode,
      scenes: files.length,
      duplicates,
      unreadable,
      failures: result.failures,
      derive: deriveResult,
      outcome,
      seconds: (performance.now() - started) / 1000,
    };
  } finally {
    unregisterInterrupt();
    if (runner) await runner.close();
    await store.close();
  }
}

/** A promise that never settles: the run was stopped by a signal and the process is exiting. */
function untilExit(): Promise<never> {
  return new Promise<never>(() => undefined);
}
