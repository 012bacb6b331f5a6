/**
 * The main job: districts + a scene archive → zonal statistics, ATI and SUHI
 * in the store. The same code runs embedded (in-process runner, PGlite) and
 * distributed (BullMQ on Redis, PostgreSQL server); the only difference is
 * which runner and which store `openRuntime` hands back.
 */
import os from 'node:os';
import { InputError, isServiceError, type ServiceName } from './core/errors.js';
import { readDistricts, ruralRing, subtractPolygons, type District } from './core/districts/index.js';
import type { DeriveOptions } from './core/derive/metrics.js';
import { DEFAULT_DERIVE_OPTIONS } from './core/derive/metrics.js';
import { fingerprint, listScenes, readManifest, type ManifestEntry, type SceneKind, type UnreadablePath } from './jobs/archive.js';
import { readMergedPolygons, readRuralReference } from './core/districts/merged.js';
import { registryModuleUrl, THREADED_JOBS } from './jobs/registry.js';
import { createPipelineRepo } from './jobs/repo.js';
import type { IngestData } from './jobs/ingest.js';
import type { ZonalData } from './jobs/zonal.js';
import type { DeriveData, DeriveResult } from './jobs/derive.js';
import { deriveJobId } from './queue/tree.js';
import type { FlowProgress, FlowResult, JobFailure, JobSpec, Runner } from './queue/types.js';
import { DEFAULT_SERVICE_RETRY_BUDGET_MS, DEFAULT_STALL_TIMEOUT_MS } from './queue/settings.js';
import { withServiceRetry } from './queue/retry.js';
import type { Store } from './store/index.js';
import { openConfiguredStore } from './store/configured.js';
import { startRun, finishRun, markSceneFailed, upsertDistricts } from './store/repo.js';
import { onInterrupt } from './store/interrupt.js';
import { runtimeConfig, type RuntimeConfig, ENV } from './config.js';
import { VERSION } from './version.js';

export const RURAL_ID = 'rural';

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

/** How a run ended: every scene stored and the table derived, or not (and why). */
export interface RunOutcome {
  status: 'succeeded' | 'incomplete' | 'failed';
  /** Scenes not finished (neither stored nor refused as bad input); the next ingest finishes them. */
  scenesLeft: number;
  /** Files asked for that were refused as bad input (unreadable paths, corrupt scenes); recorded with their reasons. */
  refused: number;
  /** Whether the derive step produced the district table. */
  derived: boolean;
  /** Why the run is not 'succeeded'. */
  error: string | null;
  /** The service that kept the run from finishing, when one did, and how long (s) it kept failing. */
  service?: ServiceName;
  serviceFailingSeconds?: number;
}

/**
 * The outcome of a run from its job tree (derive ← zonal ← ingest) and what
 * the runner reported. A scene is finished when both its jobs completed or one
 * refused it as bad input (recorded as a failed scene); anything else —
 * a service that stayed away past the budget, a bug, a runner that stopped
 * waiting — leaves it for the next ingest. A derive step failing on a service
 * leaves the run incomplete; failing on anything else fails it. Files refused
 * as bad input (and `unreadable` paths that never became jobs) also keep the
 * run from 'succeeded' — not everything asked for was stored — but re-running
 * will not change them: the error names them, and they stay in the store.
 */
export function runOutcome(root: JobSpec, result: FlowResult, unreadable = 0): RunOutcome {
  const failures = new Map(result.failures.map((f) => [f.id, f]));
  const reasons: JobFailure[] = [];
  const finished = (id: string): boolean => {
    if (result.results.has(id)) return true;
    const f = failures.get(id);
    if (f?.kind === 'input') return true;
    if (f) reasons.push(f);
    return false;
  };
  let scenesLeft = 0;
  let refused = unreadable;
  for (const zonalJob of root.children ?? []) {
    const ingestDone = (zonalJob.children ?? []).every((c) => finished(c.id));
    const zonalDone = finished(zonalJob.id);
    if (!(ingestDone && zonalDone)) scenesLeft++;
    else if ([zonalJob, ...(zonalJob.children ?? [])].some((j) => failures.get(j.id)?.kind === 'input')) refused++;
  }
  const derived = result.results.has(root.id);
  const deriveFailure = failures.get(root.id);
  const first = (kind?: string) => reasons.find((f) => kind === undefined || f.kind === kind);
  const pick = result.stopped ? { error: result.stopped.error, service: result.stopped.service, serviceFailingSeconds: undefined }
    : deriveFailure ?? first('service') ?? first();
  if (deriveFailure && deriveFailure.kind !== 'service' && !result.stopped) {
    return { status: 'failed', scenesLeft, refused, derived, error: deriveFailure.error, service: deriveFailure.service };
  }
  if (!derived || scenesLeft > 0 || result.stopped) {
    return {
      status: 'incomplete', scenesLeft, refused, derived,
      error: pick?.error ?? 'the run did not finish',
      ...(pick?.service ? { service: pick.service } : {}),
      ...(pick?.serviceFailingSeconds !== undefined ? { serviceFailingSeconds: pick.serviceFailingSeconds } : {}),
    };
  }
  if (refused > 0) {
    return {
      status: 'incomplete', scenesLeft: 0, refused, derived,
      error: `${refused} file(s) asked for were refused as bad input and are recorded with their reasons (heatledger status); every other scene is stored`,
    };
  }
  return { status: 'succeeded', scenesLeft: 0, refused: 0, derived, error: null };
}

/** Store identity: part of every job id, so a fresh database never inherits another's completed jobs. */
async function storeIdentity(store: Store): Promise<string> {
  const rows = await store.query<{ sys: string; db: number; name: string }>(
    `SELECT (SELECT system_identifier::text FROM pg_control_system()) AS sys,
            (SELECT oid::int FROM pg_database WHERE datname = current_database()) AS db,
            current_database() AS name`,
  );
  return `${rows[0].sys}/${rows[0].db}/${rows[0].name}`;
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

/** Build the job tree: derive ← zonal (one per scene) ← ingest. */
export function buildFlow(args: {
  identity: string;
  runId: number;
  files: { path: string; contentHash: string; kind?: SceneKind; manifest?: ManifestEntry }[];
  targetIds: string[];
  params: Record<string, unknown>;
  zonal: Omit<ZonalData, 'runId' | 'contentHash' | 'path' | 'targetIds' | 'targetsKey' | 'qa'>;
  derive: Omit<DeriveData, 'runId'>;
  qaMaskBits?: number;
}): JobSpec {
  const targetsKey = fingerprint(args.targetIds, args.params);
  const children: JobSpec[] = args.files.map((f) => {
    const ingestData: IngestData = { path: f.path, contentHash: f.contentHash, runId: args.runId, manifest: f.manifest, defaultKind: f.kind };
    const qa = f.manifest?.qa && args.qaMaskBits !== undefined ? { path: f.manifest.qa, maskBits: args.qaMaskBits } : undefined;
    const zonalData: ZonalData = { ...args.zonal, runId: args.runId, contentHash: f.contentHash, path: f.path, targetIds: args.targetIds, targetsKey, qa };
    return {
      name: 'zonal',
      id: deriveJobId('zonal', args.identity, f.contentHash, targetsKey),
      data: zonalData,
      children: [{ name: 'ingest', id: deriveJobId('ingest', args.identity, f.contentHash, f.manifest ?? null, f.kind ?? null), data: ingestData }],
    };
  });
  return {
    name: 'derive',
    id: deriveJobId('derive', args.identity, targetsKey, children.map((c) => c.id).sort()),
    data: { ...args.derive, runId: args.runId } satisfies DeriveData,
    children,
  };
}

/** Make the runner for a configuration. */
export async function createRunner(
  config: RuntimeConfig, store: Store, threads?: number,
  limits: { serviceRetryBudgetMs?: number; stallTimeoutMs?: number } = {},
): Promise<Runner> {
  const serviceRetryBudgetMs = limits.serviceRetryBudgetMs ?? DEFAULT_SERVICE_RETRY_BUDGET_MS;
  if (config.mode === 'distributed') {
    const { createBullRunner } = await import('./queue/bull.js');
    return createBullRunner({
      redisUrl: config.redisUrl!,
      prefix: process.env[ENV.queuePrefix] || undefined,
      serviceRetryBudgetMs,
      redisBudgetMs: serviceRetryBudgetMs,
      stallTimeoutMs: limits.stallTimeoutMs ?? DEFAULT_STALL_TIMEOUT_MS,
    });
  }
  const { createInProcessRunner } = await import('./queue/in-process.js');
  return createInProcessRunner({
    processorsModule: registryModuleUrl(),
    repo: createPipelineRepo(store),
    threads: threads ?? Math.max(1, os.availableParallelism()),
    threadedJobs: THREADED_JOBS,
    serviceRetryBudgetMs,
  });
}

/** Run the whole job. */
export async function runPipeline(options: PipelineOptions, config: RuntimeConfig = runtimeConfig({ dataDir: options.dataDir })): Promise<PipelineSummary> {
  const started = performance.now();
  const districts = await readDistricts(options.districtsPath, { idField: options.idField, nameField: options.nameField });
  if (districts.some((d) => d.id === RURAL_ID)) {
    throw new InputError(`a district has the id "${RURAL_ID}", which is reserved for the rural reference`, options.districtsPath);
  }
  const inner = options.ruralInnerMetres ?? 2000;
  const outer = options.ruralOuterMetres ?? 10000;
  let rural: District;
  let ruralDescription: string;
  if (options.ruralPath) {
    rural = await readRuralReference(options.ruralPath);
    ruralDescription = `user polygon(s) from ${options.ruralPath}`;
  } else {
    rural = ruralRing(districts, inner, outer, { source: options.districtsPath });
    ruralDescription = `ring ${inner}-${outer} m outside the union of the districts`;
    if (options.waterPath) {
      rural = await subtractWater(rural, options.waterPath);
      ruralDescription += `, water from ${options.waterPath} excluded`;
    }
  }

  const manifest = options.manifestPath ? await readManifest(options.manifestPath) : new Map<string, ManifestEntry>();
  const { files, duplicates, unreadable } = await listScenes(options.inputs, options.albedoInputs ?? []);
  for (const f of files) f.manifest = manifest.get(f.path);

  if (options.qaMaskBits === undefined && [...manifest.values()].some((m) => m.qa)) {
    throw new InputError('the manifest gives QA rasters; say which QA bits mask a pixel with --qa-mask', options.manifestPath);
  }

  const deriveOptions: DeriveOptions = { ...DEFAULT_DERIVE_OPTIONS, ...options.derive };
  const coverage = options.coverage ?? 'centre';
  const plausibleKelvin = options.plausibleKelvin === undefined ? ([170, 360] as [number, number]) : options.plausibleKelvin;
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

  const budgetMs = options.serviceRetryBudgetSeconds !== undefined ? options.serviceRetryBudgetSeconds * 1000 : DEFAULT_SERVICE_RETRY_BUDGET_MS;
  // A database server that is away is waited for (within the budget); an embedded store is not a service.
  const onServer = <T>(fn: () => Promise<T>): Promise<T> => (config.databaseUrl ? withServiceRetry(fn, budgetMs) : fn());
  const store = await onServer(() => openConfiguredStore(config));
  let runner: Runner | null = null;
  let unregisterInterrupt = () => {};
  let interrupted = false;
  let finishing: Promise<void> | null = null;
  try {
    await onServer(() => upsertDistricts(store, [
      ...districts.map((d) => ({ id: d.id, name: d.name, role: 'district' as const, geometry: d.geometry, areaSquareMetres: d.areaSquareMetres, properties: d.properties })),
      { id: RURAL_ID, name: 'rural reference', role: 'rural' as const, geometry: rural.geometry, areaSquareMetres: rural.areaSquareMetres, properties: { description: ruralDescription } },
    ]));
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
      // stop handing out jobs (not awaited: a job blocked in a read must not hold up the exit)
      if (runner) void runner.close().catch(() => undefined);
      runner = null;
      const left = await scenesLeft(store, files.map((f) => f.contentHash));
      await finishRun(store, runId, { status: 'interrupted', error: `stopped by ${signal}`, scenesLeft: left });
      return { message: `interrupted; run ${runId} marked interrupted, ${left} scene(s) left — run the same ingest again to finish them` };
    });
    const identity = await onServer(() => storeIdentity(store));
    const root = buildFlow({
      identity,
      runId,
      files,
      targetIds: [...districts.map((d) => d.id), RURAL_ID],
      params: { ...params, districtsFingerprint: fingerprint(districts.map((d) => [d.id, d.geometry])), ruralFingerprint: fingerprint(rural.geometry) },
      zonal: { coverage, plausibleKelvin },
      qaMaskBits: options.qaMaskBits,
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
        onNotice: options.onNotice,
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
    const outcome = runOutcome(root, result, unreadable.length);
    finishing = onServer(() => finishRun(store, runId, {
      status: outcome.status,
      error: outcome.error,
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

/** Scene files of a run (by content hash) not yet stored as processed. */
async function scenesLeft(store: Store, contentHashes: string[]): Promise<number> {
  const rows = await store.query<{ n: number }>(
    `SELECT count(*)::int AS n FROM scenes WHERE content_hash = ANY($1::text[]) AND status = 'processed'`,
    [contentHashes],
  );
  return contentHashes.length - rows[0].n;
}
