/**
 * `npm run bench -- --archive`: a whole archive (200 scenes of 1000 x 1000,
 * day and night, 20 districts and a rural ring; pipeline-data.ts) through
 * `heatledger ingest`, against a careful Python peer (peer_archive.py:
 * rasterio + NumPy, masks once per grid, rows by COPY through psycopg2) that
 * writes to the same PostgreSQL server.
 *
 * Servers: a private PostgreSQL cluster (fsync on, as in production) and a
 * private Redis, on ports 25900-25999, so that every CPU second they use in a
 * run is the run's own (the shared servers serve other work too).
 *
 * Configurations, alternating order between repetitions:
 * - peer:            peer_archive.py into a fresh database of the private server;
 * (Our processes start as the bin starts them: binStart() in pipeline.ts.)
 * - embedded:        `heatledger ingest --data-dir D` into an embedded store opened
 *                    once beforehand (an existing store, as for every ingest but the first);
 * - embedded_fresh:  the same into a new data directory (the first ingest of a store);
 * - distributed_1/2: 1 or 2 `heatledger worker` processes pinned to separate
 *                    processors (taskset), fed by `heatledger ingest` (not pinned),
 *                    on a fresh database and Redis prefix.
 * Scenes per second = scenes / wall seconds of the ingest command (the peer: of
 * its process). CPU seconds per scene from /proc (proc-cpu.ts): the processes
 * we spawned and waited for (ingest command, peer), the workers (read before
 * they stop), the PostgreSQL cluster (postmaster, its live and exited
 * backends) and Redis.
 * Storage share: every process times its repository (pipeline-register.js);
 * embedded = time with a result write in flight / run time, distributed =
 * summed write time / (workers x run time). Writes measured apart: one
 * multi-row statement per scene (the store's way), COPY per scene
 * (pg-copy-streams) and one INSERT per row, on the private server.
 * Scale-out: scale-model.ts fitted to distributed_1 and distributed_2 and the
 * per-scene CPU of PostgreSQL, Redis and the ingest command.
 *
 * Figures, not assertions: nothing here fails on a time.
 */
import { type ChildProcess } from 'node:child_process';
import { existsSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { cpus, loadavg } from 'node:os';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { spawn } from 'node:child_process';
import pg from 'pg';
import { from as copyFrom } from 'pg-copy-streams';
import { ensurePipelineData, ruralRingCollection } from './pipeline-data.js';
import {
  REGISTER, RUN_TIMEOUT_MS, binStart, cleanEnv, configsFlag, describeExit, repetitionsFlag, runChild, startWorker, stopProcess, unionLength, type SummaryJson,
} from './pipeline.js';
import { benchQueuePrefix, benchTempDir, createBenchDatabase, onCleanup } from './pipeline-services.js';
import type { RepoTiming } from './pipeline-timing-repo.js';
import { RESULT_WRITES } from './pipeline-timing-repo.js';
import { procTimes, reapedChildrenCpuSeconds, serverCpuSeconds } from './proc-cpu.js';
import { fitScaleModel, type ScalePrediction } from './scale-model.js';
import { median } from './timing.js';
import { postgresBinDir, startPrivatePostgres, type PrivatePostgres } from '../support/private-postgres.js';

const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), '../../..');
const WORK_DIR = join(ROOT, 'test/bench/.work/pipeline');
const CLI = join(ROOT, 'dist/workers/cli.js');
const STORE_MODULE = join(ROOT, 'dist/workers/store/store.js');
const PEER = join(ROOT, 'test/bench/peer_archive.py');
const PYTHON = '/usr/bin/python3';
const NODE = process.execPath;
const POSTGRES_PORTS = [25900, 25949] as const;
const REDIS_PORTS = [25950, 25999] as const;

export type ArchiveConfig = 'peer' | 'embedded' | 'embedded_fresh' | 'distributed_1' | 'distributed_2';
export const ARCHIVE_CONFIGS: ArchiveConfig[] = ['peer', 'embedded', 'embedded_fresh', 'distributed_1', 'distributed_2'];

export interface ArchiveOptions {
  repetitions?: number;
  configs?: ArchiveConfig[];
  say?: (line: string) => void;
}

/** CPU seconds of one run, per process group. */
export interface CpuSplit {
  /** The ingest command (embedded: everything, PGlite included) or the peer. */
  command: number;
  workers: number;
  postgres: number;
  redis: number;
}

export interface ArchiveRun {
  config: ArchiveConfig;
  scenes: number;
  wallSeconds: number;
  scenesPerSecond: number;
  cpu: CpuSplit;
  cpuPerScene: number;
  /** Result writes: summed ms, and their share of the run (null for the peer, timed by itself). */
  writeMs: number | null;
  storageFraction: number | null;
  zonalRows: number;
  problem: string | null;
}

export interface WriteMethodFigures {
  method: 'multi-row statement' | 'COPY' | 'one INSERT per row';
  msPerScene: number;
  postgresCpuMsPerScene: number;
  clientCpuMsPerScene: number;
}

export interface ArchiveFigures {
  scenes: number;
  repetitions: number;
  scenes_per_second: Record<ArchiveConfig, number | null>;
  ratio_over_peer: Record<ArchiveConfig, number | null>;
  cpu_seconds_per_scene: Record<ArchiveConfig, number | null>;
  cpu_split_per_scene_ms: Record<ArchiveConfig, CpuSplit | null>;
  distributed_over_embedded_cpu: number | null;
  storage_fraction: Record<ArchiveConfig, number | null>;
  /** PostgreSQL server CPU / all CPU of the run (distributed and peer). */
  storage_cpu_fraction: Record<ArchiveConfig, number | null>;
  writes: WriteMethodFigures[] | null;
  scale_model: (ScalePrediction & { inputs: Record<string, number> }) | null;
  runs: ArchiveRun[];
  problems: string[];
  skipped: string | null;
  machine: { cpus: number; loadavg_at_start: number[]; loadavg_at_end: number[] };
  section_seconds: number;
}

/**
 * Split the section's flags off a bench command line: `--archive`,
 * `--archive-reps N` (1-9, default 2), `--archive-configs a,b`.
 */
export function archiveFlags(argv: readonly string[]): { argv: string[]; archive: boolean; options: ArchiveOptions } {
  const rest: string[] = [];
  const options: ArchiveOptions = {};
  let archive = false;
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i];
    if (a === '--archive') archive = true;
    else if (a === '--archive-reps') options.repetitions = repetitionsFlag(a, argv[++i]);
    else if (a === '--archive-configs') options.configs = configsFlag(a, argv[++i], ARCHIVE_CONFIGS);
    else rest.push(a);
  }
  return { argv: rest, archive, options };
}

interface PrivateRedis { port: number; pid: number; url: string; stop(): Promise<void> }

/** A private redis-server (no persistence) on a free port of 25950-25999. */
async function startPrivateRedis(): Promise<PrivateRedis> {
  const net = await import('node:net');
  const free = (port: number) => new Promise<boolean>((res) => {
    const s = net.createServer();
    s.once('error', () => res(false));
    s.listen(port, '127.0.0.1', () => s.close(() => res(true)));
  });
  for (let port = REDIS_PORTS[0]; port <= REDIS_PORTS[1]; port++) {
    if (!(await free(port))) continue;
    const child = spawn('redis-server', ['--port', String(port), '--bind', '127.0.0.1', '--save', '', '--appendonly', 'no'], { stdio: ['ignore', 'pipe', 'pipe'] });
    const ready = await new Promise<boolean>((res) => {
      let out = '';
      const t = setTimeout(() => res(false), 15_000);
      child.stdout!.on('data', (d) => { out += d; if (out.includes('Ready to accept connections')) { clearTimeout(t); res(true); } });
      child.once('exit', () => { clearTimeout(t); res(false); });
    });
    if (!ready) { child.kill('SIGKILL'); continue; }
    child.stdout!.resume();
    child.stderr!.resume();
    return {
      port, pid: child.pid!, url: `redis://127.0.0.1:${port}`,
      stop: () => new Promise((res) => { if (child.exitCode !== null) return res(); child.once('exit', () => res()); child.kill('SIGTERM'); }),
    };
  }
  throw new Error(`no free port for redis-server in ${REDIS_PORTS[0]}-${REDIS_PORTS[1]}`);
}

function readTiming(file: string): RepoTiming | null {
  return existsSync(file) ? (JSON.parse(readFileSync(file, 'utf8')) as RepoTiming) : null;
}

function writeMsOf(timings: RepoTiming[]): number {
  return timings.reduce((s, t) => s + RESULT_WRITES.reduce((u, k) => u + (t.methods[k]?.totalMs ?? 0), 0), 0);
}

interface Setup {
  archiveDir: string;
  districts: string;
  rural: string;
  scenes: number;
  pg: PrivatePostgres | null;
  redis: PrivateRedis | null;
}

async function zonalCount(url: string, table: string): Promise<number> {
  const c = new pg.Client({ connectionString: url });
  await c.connect();
  try {
    return Number((await c.query<{ n: string }>(`SELECT count(*) AS n FROM ${table}`)).rows[0].n);
  } finally {
    await c.end();
  }
}

async function dropDatabase(pgServer: PrivatePostgres, name: string): Promise<void> {
  const c = new pg.Client({ connectionString: pgServer.url('postgres') });
  await c.connect();
  try { await c.query(`DROP DATABASE IF EXISTS ${name} WITH (FORCE)`); } finally { await c.end(); }
}

async function peerRun(s: Setup): Promise<ArchiveRun> {
  const pgServer = s.pg!;
  const db = await createBenchDatabase(pgServer.url('postgres'));
  try {
    const pg0 = serverCpuSeconds(pgServer.postmasterPid());
    const c0 = reapedChildrenCpuSeconds();
    const r = await runChild([PEER, s.archiveDir, s.districts, s.rural, db.url], cleanEnv({}), RUN_TIMEOUT_MS, PYTHON).done;
    const command = reapedChildrenCpuSeconds() - c0;
    const postgres = serverCpuSeconds(pgServer.postmasterPid()) - pg0;
    if (r.code !== 0) throw new Error(`peer_archive.py failed: ${describeExit(r)}`);
    const out = JSON.parse(r.stdout.trim().split('\n').pop()!) as { scenes: number; zonal_rows: number };
    const zonalRows = await zonalCount(db.url, 'peer_zonal');
    const cpu = { command, workers: 0, postgres, redis: 0 };
    return {
      config: 'peer', scenes: out.scenes, wallSeconds: r.wallSeconds, scenesPerSecond: out.scenes / r.wallSeconds, cpu,
      cpuPerScene: (command + postgres) / out.scenes, writeMs: null, storageFraction: null, zonalRows,
      problem: zonalRows === out.zonal_rows ? null : `peer_zonal holds ${zonalRows} rows, the peer reported ${out.zonal_rows}`,
    };
  } finally {
    await dropDatabase(pgServer, db.name);
  }
}

async function embeddedRun(s: Setup, fresh: boolean): Promise<ArchiveRun> {
  const dataDir = benchTempDir('pglite');
  const timingFile = join(benchTempDir('timing'), 'embedded.json');
  const cleanup = onCleanup(async () => {
    rmSync(dataDir, { recursive: true, force: true });
    rmSync(dirname(timingFile), { recursive: true, force: true });
  });
  try {
    if (!fresh) {
      // an existing store: created and migrated beforehand, as every ingest but the first finds it
      const prep = await runChild(['--input-type=module', '-e', `const { openStore } = await import(${JSON.stringify(STORE_MODULE)}); const s = await openStore({ dataDir: ${JSON.stringify(dataDir)} }); await s.close();`], cleanEnv({}), RUN_TIMEOUT_MS).done;
      if (prep.code !== 0) throw new Error(`preparing the embedded store failed: ${describeExit(prep)}`);
    }
    const c0 = reapedChildrenCpuSeconds();
    const bin = binStart();
    const r = await runChild(
      [...bin.nodeArgs, '--import', REGISTER, CLI, 'ingest', s.archiveDir, '--districts', s.districts, '--rural', s.rural, '--json', '--no-progress', '--data-dir', dataDir],
      bin.env(cleanEnv({ BENCH_REPO_TIMING_FILE: timingFile })), RUN_TIMEOUT_MS,
    ).done;
    const command = reapedChildrenCpuSeconds() - c0;
    if (r.code !== 0) throw new Error(`embedded ingest failed: ${describeExit(r)}`);
    const summary = JSON.parse(r.stdout) as SummaryJson;
    const t = readTiming(timingFile);
    const busyMs = t ? unionLength(t.writeIntervals) : null;
    const zonalRows = t?.methods.storeProcessedScene?.rows ?? 0;
    return {
      config: fresh ? 'embedded_fresh' : 'embedded', scenes: summary.scenes, wallSeconds: r.wallSeconds,
      scenesPerSecond: summary.scenes / r.wallSeconds, cpu: { command, workers: 0, postgres: 0, redis: 0 }, cpuPerScene: command / summary.scenes,
      writeMs: t ? writeMsOf([t]) : null, storageFraction: busyMs === null ? null : busyMs / (r.wallSeconds * 1000), zonalRows,
      problem: summary.failures.length ? `${summary.failures.length} failure(s), first: ${summary.failures[0].error}` : t ? null : 'no repository timing (pipeline-register.js not loaded)',
    };
  } finally {
    await cleanup();
  }
}

async function distributedRun(s: Setup, workers: number): Promise<ArchiveRun> {
  const pgServer = s.pg!, redis = s.redis!;
  const db = await createBenchDatabase(pgServer.url('postgres'));
  const prefix = benchQueuePrefix();
  const timingDir = benchTempDir('timing');
  const children: ChildProcess[] = [];
  const cleanup = onCleanup(async () => {
    await Promise.all(children.map((c) => stopProcess(c, 10_000)));
    await dropDatabase(pgServer, db.name);
    rmSync(timingDir, { recursive: true, force: true });
  });
  try {
    const base = { REDIS_URL: redis.url, DATABASE_URL: db.url, HEATLEDGER_QUEUE_PREFIX: prefix, BENCH_EXIT_WITH_PARENT: '1' };
    const ncpu = cpus().length;
    for (let k = 0; k < workers; k++) {
      children.push(await startWorker(cleanEnv({ ...base, BENCH_REPO_TIMING_FILE: join(timingDir, `worker-${k}.json`) }), k % ncpu));
    }
    const workerCpu = () => children.reduce((sum, c) => sum + (procTimes(c.pid!)?.self ?? NaN), 0);
    const pg0 = serverCpuSeconds(pgServer.postmasterPid()), r0 = serverCpuSeconds(redis.pid), w0 = workerCpu(), c0 = reapedChildrenCpuSeconds();
    const bin = binStart();
    const ingest = runChild([...bin.nodeArgs, '--import', REGISTER, CLI, 'ingest', s.archiveDir, '--districts', s.districts, '--rural', s.rural, '--json', '--no-progress'], bin.env(cleanEnv(base)), RUN_TIMEOUT_MS);
    const r = await ingest.done;
    const command = reapedChildrenCpuSeconds() - c0;
    const cpu: CpuSplit = { command, workers: workerCpu() - w0, postgres: serverCpuSeconds(pgServer.postmasterPid()) - pg0, redis: serverCpuSeconds(redis.pid) - r0 };
    if (r.code !== 0) throw new Error(`distributed ingest (${workers} worker(s)) failed: ${describeExit(r)}`);
    const summary = JSON.parse(r.stdout) as SummaryJson;
    await Promise.all(children.map((c) => stopProcess(c, 15_000)));
    const timings = Array.from({ length: workers }, (_, k) => readTiming(join(timingDir, `worker-${k}.json`))).filter((t): t is RepoTiming => t !== null);
    const writeMs = writeMsOf(timings);
    const zonalRows = await zonalCount(db.url, 'zonal_stats');
    return {
      config: workers === 1 ? 'distributed_1' : 'distributed_2', scenes: summary.scenes, wallSeconds: r.wallSeconds,
      scenesPerSecond: summary.scenes / r.wallSeconds, cpu, cpuPerScene: (cpu.command + cpu.workers + cpu.postgres + cpu.redis) / summary.scenes,
      writeMs, storageFraction: writeMs / (workers * r.wallSeconds * 1000), zonalRows,
      problem: summary.failures.length ? `${summary.failures.length} failure(s), first: ${summary.failures[0].error}` : timings.length < workers ? 'a worker wrote no repository timing' : null,
    };
  } finally {
    await cleanup();
  }
}

/** One scene's zonal rows as the store writes them (21 targets, the columns of zonal_stats). */
function syntheticRows(scene: number): (string | number)[][] {
  const rows: (string | number)[][] = [];
  for (let k = 0; k < 21; k++) {
    const m = 290 + ((scene * 31 + k * 7) % 100) / 10;
    rows.push([scene, k === 20 ? 'rural' : `W${String(k + 1).padStart(2, '0')}`, 6400, 6100 - k, (6100 - k) / 6400, m, 1.5, m - 4, m + 4, m, m - 2, m + 2, 300, 0, 0, 'centre']);
  }
  return rows;
}

const WRITE_TABLE = `CREATE TABLE w (scene_id bigint, district_id text, pixels double precision, valid double precision,
  valid_fraction double precision, mean_k double precision, std_k double precision, min_k double precision, max_k double precision,
  median_k double precision, p10_k double precision, p90_k double precision, nodata_count bigint, masked_count bigint,
  implausible_count bigint, coverage_rule text, PRIMARY KEY (scene_id, district_id))`;
const TYPES = ['bigint', 'text', 'float8', 'float8', 'float8', 'float8', 'float8', 'float8', 'float8', 'float8', 'float8', 'float8', 'bigint', 'bigint', 'bigint', 'text'];
const UNNEST_INSERT = `INSERT INTO w SELECT * FROM unnest(${TYPES.map((t, i) => `$${i + 1}::${t}[]`).join(', ')})`;
const ROW_INSERT = `INSERT INTO w VALUES (${TYPES.map((t, i) => `$${i + 1}::${t}`).join(', ')})`;

/** Per-scene writes of `scenes` scenes' rows, one transaction each, by each method. */
async function measureWrites(pgServer: PrivatePostgres, scenes = 200): Promise<WriteMethodFigures[]> {
  const db = await createBenchDatabase(pgServer.url('postgres'));
  const c = new pg.Client({ connectionString: db.url });
  await c.connect();
  try {
    const out: WriteMethodFigures[] = [];
    const methods: [WriteMethodFigures['method'], (rows: (string | number)[][]) => Promise<void>][] = [
      ['multi-row statement', async (rows) => { await c.query(UNNEST_INSERT, TYPES.map((_, j) => rows.map((r) => r[j]))); }],
      ['COPY', (rows) => new Promise<void>((res, rej) => {
        const stream = c.query(copyFrom('COPY w FROM STDIN'));
        stream.on('finish', () => res());
        stream.on('error', rej);
        stream.end(rows.map((r) => r.join('\t')).join('\n') + '\n');
      })],
      ['one INSERT per row', async (rows) => { for (const r of rows) await c.query(ROW_INSERT, r); }],
    ];
    // rounds alternate the order of the methods, so a change in the machine's load falls on all of them
    const totals = methods.map(() => ({ ms: 0, pg: 0, client: 0 }));
    const rounds = 4, perRound = Math.ceil(scenes / rounds);
    for (let k = 0; k < methods.length; k++) {
      await c.query(`DROP TABLE IF EXISTS w${k}`);
      await c.query(WRITE_TABLE.replace('CREATE TABLE w ', `CREATE TABLE w${k} `));
    }
    let scene = 0;
    for (let round = 0; round < rounds; round++) {
      const order = round % 2 === 0 ? [0, 1, 2] : [2, 1, 0];
      const first = scene;
      for (const k of order) {
        const [, write] = methods[k];
        await c.query(`ALTER TABLE IF EXISTS w${k} RENAME TO w`);
        const pg0 = serverCpuSeconds(pgServer.postmasterPid());
        const u0 = process.cpuUsage();
        const t0 = performance.now();
        for (let sc = first + 1; sc <= first + perRound; sc++) {
          await c.query('BEGIN');
          await write(syntheticRows(sc));
          await c.query('COMMIT');
        }
        totals[k].ms += performance.now() - t0;
        const u = process.cpuUsage(u0);
        totals[k].client += (u.user + u.system) / 1000;
        totals[k].pg += (serverCpuSeconds(pgServer.postmasterPid()) - pg0) * 1000;
        await c.query(`ALTER TABLE w RENAME TO w${k}`);
      }
      scene += perRound;
    }
    for (const [k, [method]] of methods.entries()) {
      out.push({ method, msPerScene: totals[k].ms / scene, postgresCpuMsPerScene: totals[k].pg / scene, clientCpuMsPerScene: totals[k].client / scene });
    }
    return out;
  } finally {
    await c.end();
    await dropDatabase(pgServer, db.name);
  }
}

const s2 = (x: number) => x.toFixed(2);
const pct = (x: number | null) => (x === null ? 'n/a' : `${(100 * x).toFixed(1)}%`);
const msOf = (x: number) => `${(x * 1000).toFixed(1)} ms`;

function runLine(r: ArchiveRun): string {
  const c = r.cpu;
  const split = r.config.startsWith('distributed')
    ? `workers ${msOf(c.workers / r.scenes)}, PostgreSQL ${msOf(c.postgres / r.scenes)}, Redis ${msOf(c.redis / r.scenes)}, ingest command ${msOf(c.command / r.scenes)}`
    : r.config === 'peer' ? `python ${msOf(c.command / r.scenes)}, PostgreSQL ${msOf(c.postgres / r.scenes)}` : `ingest command (PGlite inside) ${msOf(c.command / r.scenes)}`;
  return `  ${r.config.padEnd(15)} ${s2(r.scenesPerSecond)} scenes/s (wall ${s2(r.wallSeconds)} s); CPU ${msOf(r.cpuPerScene)} per scene: ${split}` +
    (r.storageFraction !== null ? `; result writes ${r.writeMs!.toFixed(0)} ms -> storage ${pct(r.storageFraction)}` : '') +
    `; ${r.zonalRows} zonal rows` + (r.problem ? `; PROBLEM: ${r.problem}` : '');
}

/** Run the archive section; prints lines on the way and returns the figures. */
export async function runArchiveBench(options: ArchiveOptions = {}): Promise<ArchiveFigures> {
  const say = options.say ?? ((line: string) => { process.stdout.write(line + '\n'); });
  const reps = options.repetitions ?? 2;
  const started = performance.now();
  const loadStart = loadavg();
  say(`\n[archive] ${cpus().length} CPU(s), load average ${loadStart.map((x) => x.toFixed(2)).join(' ')} (a shared machine: figures vary from run to run)`);
  const data = await ensurePipelineData(WORK_DIR, say);
  const rural = join(WORK_DIR, 'rural.geojson');
  writeFileSync(rural, JSON.stringify(ruralRingCollection()) + '\n');
  say(`  archive: ${data.scenes} scenes (${(data.archiveBytes / 1e6).toFixed(0)} MB), 20 districts, rural ring ${rural}`);

  const problems: string[] = [];
  let skipped: string | null = null;
  const setup: Setup = { archiveDir: data.archiveDir, districts: data.districts, rural, scenes: data.scenes, pg: null, redis: null };
  const stopServers = onCleanup(async () => {
    await setup.redis?.stop();
    await setup.pg?.destroy();
  });
  if (!postgresBinDir()) skipped = 'PostgreSQL server binaries (initdb, pg_ctl) are not installed: peer and distributed runs skipped';
  else if (!existsSync(PYTHON)) skipped = `${PYTHON} is missing: peer skipped`;
  try {
    if (postgresBinDir()) {
      setup.pg = await startPrivatePostgres('bench', { ports: POSTGRES_PORTS, durable: true });
      try {
        setup.redis = await startPrivateRedis();
      } catch (e) {
        skipped = `redis-server: ${(e as Error).message}: distributed runs skipped`;
      }
      say(`  private servers: PostgreSQL on port ${setup.pg.port} (fsync on)${setup.redis ? `, Redis on port ${setup.redis.port}` : ''}`);
    }
    const wanted = options.configs ?? ARCHIVE_CONFIGS;
    const configs = wanted.filter((c) => (c === 'peer' ? setup.pg && existsSync(PYTHON) : c.startsWith('distributed') ? setup.pg && setup.redis : true));
    const runs: ArchiveRun[] = [];
    for (let rep = 1; rep <= reps; rep++) {
      const order = rep % 2 === 1 ? configs : [...configs].reverse();
      say(`  repetition ${rep} of ${reps}: ${order.join(', ')} (load average ${loadavg()[0].toFixed(2)})`);
      for (const c of order) {
        try {
          const r = c === 'peer' ? await peerRun(setup)
            : c === 'embedded' || c === 'embedded_fresh' ? await embeddedRun(setup, c === 'embedded_fresh')
            : await distributedRun(setup, c === 'distributed_1' ? 1 : 2);
          runs.push(r);
          say(runLine(r));
          if (r.problem) problems.push(`${c} repetition ${rep}: ${r.problem}`);
        } catch (e) {
          problems.push(`${c} repetition ${rep}: ${(e as Error).message}`);
          say(`  ${c} repetition ${rep}: ${(e as Error).message}`);
        }
      }
    }
    let writes: WriteMethodFigures[] | null = null;
    if (setup.pg) {
      writes = await measureWrites(setup.pg);
      say(`  result writes on the PostgreSQL server, 21 rows per scene, one transaction each, 200 scenes per method in 4 alternating rounds:`);
      for (const w of writes) say(`    ${w.method.padEnd(20)} ${w.msPerScene.toFixed(2)} ms per scene; PostgreSQL CPU ${w.postgresCpuMsPerScene.toFixed(2)} ms, client CPU ${w.clientCpuMsPerScene.toFixed(2)} ms`);
    }

    const of = (c: ArchiveConfig) => runs.filter((r) => r.config === c && !r.problem);
    const med = (c: ArchiveConfig, pick: (r: ArchiveRun) => number) => (of(c).length ? median(of(c).map(pick)) : null);
    const all = Object.fromEntries.bind(Object) as <T>(e: [ArchiveConfig, T][]) => Record<ArchiveConfig, T>;
    const sps = all(ARCHIVE_CONFIGS.map((c) => [c, med(c, (r) => r.scenesPerSecond)]));
    const cps = all(ARCHIVE_CONFIGS.map((c) => [c, med(c, (r) => r.cpuPerScene)]));
    const split = all(ARCHIVE_CONFIGS.map((c) => [c, of(c).length ? {
      command: med(c, (r) => (1000 * r.cpu.command) / r.scenes)!, workers: med(c, (r) => (1000 * r.cpu.workers) / r.scenes)!,
      postgres: med(c, (r) => (1000 * r.cpu.postgres) / r.scenes)!, redis: med(c, (r) => (1000 * r.cpu.redis) / r.scenes)!,
    } : null]));
    const ratio = all(ARCHIVE_CONFIGS.map((c) => [c, sps[c] !== null && sps.peer !== null ? sps[c]! / sps.peer! : null]));
    const storage = all(ARCHIVE_CONFIGS.map((c) => [c, med(c, (r) => r.storageFraction ?? NaN)]));
    const distributedCpu = cps.distributed_1 ?? cps.distributed_2;
    const distOverEmb = distributedCpu !== null && cps.embedded !== null ? distributedCpu / cps.embedded : null;

    let scale: ArchiveFigures['scale_model'] = null;
    if (sps.distributed_1 !== null && sps.distributed_2 !== null) {
      const dist = [...of('distributed_1'), ...of('distributed_2')];
      const perScene = (pick: (r: ArchiveRun) => number) => median(dist.map((r) => pick(r) / r.scenes));
      const inputs = {
        x1: sps.distributed_1, x2: sps.distributed_2,
        postgresCpuPerScene: perScene((r) => r.cpu.postgres), redisCpuPerScene: perScene((r) => r.cpu.redis),
        cliCpuPerScene: perScene((r) => r.cpu.command), workerCpuPerScene: perScene((r) => r.cpu.workers), postgresCores: 4,
      };
      scale = { ...fitScaleModel(inputs), inputs };
    }

    const show = (x: number | null, f: (v: number) => string = s2) => (x === null ? 'n/a' : f(x));
    say(`  medians, scenes/s: peer ${show(sps.peer)}; embedded ${show(sps.embedded)} (x${show(ratio.embedded)} the peer), first ingest into a new store ${show(sps.embedded_fresh)} (x${show(ratio.embedded_fresh)}); ` +
      `distributed 1 worker ${show(sps.distributed_1)} (x${show(ratio.distributed_1)}), 2 workers ${show(sps.distributed_2)} (x${show(ratio.distributed_2)})  [goal: x2 the peer]`);
    say(`  CPU per scene, all processes: peer ${show(cps.peer, msOf)}, embedded ${show(cps.embedded, msOf)}, distributed ${show(cps.distributed_1, msOf)} (1 worker) / ${show(cps.distributed_2, msOf)} (2); ` +
      `distributed / embedded ${show(distOverEmb)} [goal <= 1.25]`);
    const pgShare = (c: ArchiveConfig) => (split[c] ? split[c]!.postgres / (split[c]!.command + split[c]!.workers + split[c]!.postgres + split[c]!.redis) : null);
    say(`  storage share: of the run's time (a result write in flight) embedded ${pct(storage.embedded)}, distributed ${pct(storage.distributed_1)} / ${pct(storage.distributed_2)}; ` +
      `of all CPU (the PostgreSQL server) distributed ${pct(pgShare('distributed_1'))} / ${pct(pgShare('distributed_2'))}, peer ${pct(pgShare('peer'))} [goal <= 10%]`);
    if (scale) {
      say(`  scale-out model: ${scale.model}`);
      say(`    inputs: X(1) = ${s2(scale.inputs.x1)}, X(2) = ${s2(scale.inputs.x2)} scenes/s (workers pinned to separate processors); per scene CPU: workers ${msOf(scale.inputs.workerCpuPerScene)}, PostgreSQL ${msOf(scale.inputs.postgresCpuPerScene)}, Redis ${msOf(scale.inputs.redisCpuPerScene)}, ingest command ${msOf(scale.inputs.cliCpuPerScene)}; PostgreSQL given ${scale.inputs.postgresCores} cores`);
      say(`    throughput fit: lambda ${s2(scale.throughputFit.lambda)} scenes/s, sigma ${scale.throughputFit.sigmaRaw.toFixed(3)}${scale.fallbackReason ? ` -- not used: ${scale.fallbackReason}` : ''}`);
      say(`    prediction from the ${scale.fit} fit: lambda ${s2(scale.lambda)} scenes/s per worker, sigma ${scale.sigma.toFixed(3)}, Amdahl asymptote ${Number.isFinite(scale.asymptote) ? `${s2(scale.asymptote)} scenes/s` : 'none'}`);
      say(`    ceilings: ${scale.ceilings.map((c) => `${c.name} ${s2(c.scenesPerSecond)} scenes/s${c.saturatesAtWorkers !== null ? ` (reached at ~${c.saturatesAtWorkers.toFixed(0)} workers)` : ' (not reached)'}`).join('; ')}`);
      const line = (ps: { workers: number; predicted: number; boundBy: string }[]) =>
        ps.map((p) => `${p.workers}: ${s2(p.predicted)}${p.boundBy.startsWith('workers') ? '' : ` (${p.boundBy})`}`).join(', ');
      say(`    predicted scenes/s (${scale.fit} fit): ${line(scale.predictions)}`);
      if (scale.fit === 'throughput' && scale.demandPredictions) {
        say(`    with a core for each worker (demand bounds, lambda ${s2(1 / scale.inputs.workerCpuPerScene)}, sigma 0): ${line(scale.demandPredictions)}`);
      }
      say(`    saturates first: ${scale.bottleneck ? `${scale.bottleneck.name} at ~${scale.bottleneck.saturatesAtWorkers!.toFixed(0)} workers` : 'nothing within reach; contention alone bounds it'}`);
    }
    if (problems.length) say(`  problems: ${problems.length}; first: ${problems[0]}`);
    const figures: ArchiveFigures = {
      scenes: data.scenes, repetitions: reps, scenes_per_second: sps, ratio_over_peer: ratio, cpu_seconds_per_scene: cps,
      cpu_split_per_scene_ms: split, distributed_over_embedded_cpu: distOverEmb, storage_fraction: storage,
      storage_cpu_fraction: all(ARCHIVE_CONFIGS.map((c) => [c, c === 'embedded' || c === 'embedded_fresh' ? null : pgShare(c)])), writes, scale_model: scale,
      runs, problems, skipped, machine: { cpus: cpus().length, loadavg_at_start: loadStart, loadavg_at_end: loadavg() },
      section_seconds: (performance.now() - started) / 1000,
    };
    say(`  archive section took ${figures.section_seconds.toFixed(0)} s; load average at the end ${loadavg().map((x) => x.toFixed(2)).join(' ')}`);
    return figures;
  } finally {
    await stopServers();
  }
}
