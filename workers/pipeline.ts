/**
 * The main job: districts + a scene archive → zonal statistics, ATI and SUHI
 * in the store. The same code runs embedded (in-process runner, PGlite) and
 * distributed (BullMQ on Redis, PostgreSQL server); the only difference is
 * which runner and which store `openRuntime` hands back.
 */
import os from 'node:os';
import { InputError } from './core/errors.js';
import { readDistricts, ruralRing, type District } from './core/districts/index.js';
import type { DeriveOptions } from './core/derive/metrics.js';
import { DEFAULT_DERIVE_OPTIONS } from './core/derive/metrics.js';
import { fingerprint, hashFile, listSceneFiles, readManifest, type ManifestEntry, type SceneKind } from './jobs/archive.js';
import { readMergedPolygons, readRuralReference } from './jobs/zonal-table.js';
import { registryModuleUrl, THREADED_JOBS } from './jobs/registry.js';
import { createPipelineRepo } from './jobs/repo.js';
import type { IngestData } from './jobs/ingest.js';
import type { ZonalData } from './jobs/zonal.js';
import type { DeriveData, DeriveResult } from './jobs/derive.js';
import { deriveJobId } from './queue/tree.js';
import type { FlowProgress, JobFailure, JobSpec, Runner } from './queue/types.js';
import type { Store } from './store/index.js';
import { openConfiguredStore } from './store/configured.js';
import { startRun, finishRun, upsertDistricts } from './store/repo.js';
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
  onProgress?(p: FlowProgress & { elapsedSeconds: number }): void;
  onNotice?(message: string): void;
}

export interface PipelineSummary {
  runId: number;
  mode: RuntimeConfig['mode'];
  scenes: number;
  /** Files whose bytes equal an earlier file's (processed once, as that file). */
  duplicates: { path: string; sameAs: string }[];
  failures: JobFailure[];
  derive: DeriveResult | null;
  seconds: number;
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
  const { default: difference } = await import('@turf/difference');
  const { featureCollection, multiPolygon } = await import('@turf/helpers');
  const cut = difference(featureCollection([multiPolygon(ring.geometry), multiPolygon(water.geometry)]));
  if (!cut) throw new InputError('the water polygons cover the whole rural ring', waterPath);
  const geometry = cut.geometry.type === 'Polygon' ? [cut.geometry.coordinates as number[][][]] : (cut.geometry.coordinates as number[][][][]);
  const { ellipsoidalAreaSquareMetres } = await import('./core/districts/index.js');
  return { ...ring, geometry, areaSquareMetres: ellipsoidalAreaSquareMetres(geometry) };
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
export async function createRunner(config: RuntimeConfig, store: Store, threads?: number): Promise<Runner> {
  if (config.mode === 'distributed') {
    const { createBullRunner } = await import('./queue/bull.js');
    return createBullRunner({ redisUrl: config.redisUrl!, prefix: process.env[ENV.queuePrefix] || undefined });
  }
  const { createInProcessRunner } = await import('./queue/in-process.js');
  return createInProcessRunner({
    processorsModule: registryModuleUrl(),
    repo: createPipelineRepo(store),
    threads: threads ?? Math.max(1, os.availableParallelism()),
    threadedJobs: THREADED_JOBS,
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
    rural = ruralRing(districts, inner, outer);
    ruralDescription = `ring ${inner}-${outer} m outside the union of the districts`;
    if (options.waterPath) {
      rural = await subtractWater(rural, options.waterPath);
      ruralDescription += `, water from ${options.waterPath} excluded`;
    }
  }

  const manifest = options.manifestPath ? await readManifest(options.manifestPath) : new Map<string, ManifestEntry>();
  const lstFiles = await listSceneFiles(options.inputs);
  const albedoFiles = options.albedoInputs?.length ? await listSceneFiles(options.albedoInputs) : [];
  const all = [...new Set([...lstFiles, ...albedoFiles])];
  if (all.length === 0) throw new InputError(`no GeoTIFF (.tif/.tiff) found in ${options.inputs.join(', ')}`);
  const albedoSet = new Set(albedoFiles);
  const files: { path: string; contentHash: string; kind?: SceneKind; manifest?: ManifestEntry }[] = [];
  const duplicates: { path: string; sameAs: string }[] = [];
  const byHash = new Map<string, string>();
  for (const path of all) {
    const contentHash = await hashFile(path);
    const first = byHash.get(contentHash);
    // a byte-identical copy under another name is the same scene: processed once
    if (first !== undefined) {
      duplicates.push({ path, sameAs: first });
      continue;
    }
    byHash.set(contentHash, path);
    files.push({ path, contentHash, kind: albedoSet.has(path) ? 'albedo' : undefined, manifest: manifest.get(path) });
  }

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

  const store = await openConfiguredStore(config);
  let runner: Runner | null = null;
  let unregisterInterrupt = () => {};
  let interrupted = false;
  let finishing: Promise<void> | null = null;
  try {
    await upsertDistricts(store, [
      ...districts.map((d) => ({ id: d.id, name: d.name, role: 'district' as const, geometry: d.geometry, areaSquareMetres: d.areaSquareMetres, properties: d.properties })),
      { id: RURAL_ID, name: 'rural reference', role: 'rural' as const, geometry: rural.geometry, areaSquareMetres: rural.areaSquareMetres, properties: { description: ruralDescription } },
    ]);
    const runId = await startRun(store, {
      softwareVersion: VERSION, mode: config.mode, parameters: params, ownerHost: os.hostname(), ownerPid: process.pid, scenesAsked: files.length,
    });
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
    const identity = await storeIdentity(store);
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
    runner = await createRunner(config, store, options.threads);
    const result = await runner
      .runFlow(root, {
        onProgress: options.onProgress ? (p) => options.onProgress!({ ...p, elapsedSeconds: (performance.now() - started) / 1000 }) : undefined,
        onNotice: options.onNotice,
      })
      .catch((e: unknown) => {
        if (!interrupted) throw e;
        return null;
      });
    // stopped by a signal: the interrupt handler records the run, closes the store and exits the process
    if (interrupted || result === null) return await untilExit();
    const deriveResult = (result.results.get(root.id) as DeriveResult | undefined) ?? null;
    const deriveFailure = result.failures.find((f) => f.id === root.id);
    finishing = finishRun(store, runId, deriveFailure ? { status: 'failed', error: deriveFailure.error } : { status: 'succeeded' });
    await finishing;
    return {
      runId,
      mode: config.mode,
      scenes: files.length,
      duplicates,
      failures: result.failures,
      derive: deriveResult,
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
