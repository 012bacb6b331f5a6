/**
 * The main job: districts + a scene archive → zonal statistics, ATI and SUHI
 * in the store. The same code runs embedded (in-process runner, PGlite) and
 * distributed (BullMQ on Redis, PostgreSQL server); the only difference is
 * which runner and which store `openRuntime` hands back.
 */
import os from 'node:os';
import { InputError } from './core/errors.js';
import { readDistricts, ruralRing, subtractPolygons, type District } from './core/districts/index.js';
import type { DeriveOptions } from './core/derive/metrics.js';
import { DEFAULT_DERIVE_OPTIONS } from './core/derive/metrics.js';
import { fingerprint, listScenes, readManifest, type ManifestEntry, type SceneKind, type UnreadablePath } from './jobs/archive.js';
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
import { startRun, finishRun, markSceneFailed, upsertDistricts } from './store/repo.js';
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
  /** Paths asked for that could not be read (stored as failed scenes keyed by path). */
  unreadable: UnreadablePath[];
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

  const store = await openConfiguredStore(config);
  let runner: Runner | null = null;
  try {
    await upsertDistricts(store, [
      ...districts.map((d) => ({ id: d.id, name: d.name, role: 'district' as const, geometry: d.geometry, areaSquareMetres: d.areaSquareMetres, properties: d.properties })),
      { id: RURAL_ID, name: 'rural reference', role: 'rural' as const, geometry: rural.geometry, areaSquareMetres: rural.areaSquareMetres, properties: { description: ruralDescription } },
    ]);
    const runId = await startRun(store, { softwareVersion: VERSION, mode: config.mode, parameters: params });
    for (const u of unreadable) await markSceneFailed(store, { path: u.path, error: `${u.path}: ${u.reason}`, runId });
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
    const result = await runner.runFlow(root, {
      onProgress: options.onProgress ? (p) => options.onProgress!({ ...p, elapsedSeconds: (performance.now() - started) / 1000 }) : undefined,
      onNotice: options.onNotice,
    });
    const deriveResult = (result.results.get(root.id) as DeriveResult | undefined) ?? null;
    const deriveFailure = result.failures.find((f) => f.id === root.id);
    await finishRun(store, runId, deriveFailure ? { status: 'failed', error: deriveFailure.error } : { status: 'succeeded' });
    return {
      runId,
      mode: config.mode,
      scenes: files.length,
      duplicates,
      unreadable,
      failures: result.failures,
      derive: deriveResult,
      seconds: (performance.now() - started) / 1000,
    };
  } finally {
    if (runner) await runner.close();
    await store.close();
  }
}
