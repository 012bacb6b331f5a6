/**
 * Pipeline throughput: scenes per second for a 200-scene archive (1000 x 1000
 * pixels, 20 districts; pipeline-data.ts) through the whole job tree
 * (a scene job per file, then derive), in four configurations:
 *
 * - embedded_1, embedded_2: runPipeline with 1 and 2 worker threads, PGlite in
 *   a temporary data dir, each run in a fresh `node` process;
 * - distributed_1, distributed_2: 1 and 2 `heatledger worker` processes on
 *   Redis (fresh key prefix per run, keys deleted afterwards) and a fresh
 *   PostgreSQL database per run (dropped afterwards), fed by
 *   `heatledger ingest <archive> --json`.
 *
 * Scenes per second = scenes / the run's own `seconds` (from runPipeline's
 * start to its end: districts, hashing, store open, every job, derive); the
 * process wall time is printed beside it. Storage share: every process times
 * its repository (pipeline-register.ts, through `node --import`, registers the
 * wrapper of pipeline-timing-repo.ts), so the time inside storeProcessedScene / replaceDerivedFor
 * is measured, not estimated. Embedded: time with at least one write in
 * flight (PGlite runs them one at a time on the main thread) / run time.
 * Distributed: summed write time of all workers / (workers x run time).
 *
 * Runs alternate order between repetitions (forward, then backward, ...);
 * figures are medians. Nothing here asserts a time.
 *
 *     node dist/test/bench/pipeline.js [--json] [--pipeline-reps N] [--pipeline-configs list] [--pipeline-profile]
 *
 * or `npm run bench -- --pipeline` (after the zonal section).
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { existsSync, readdirSync, readFileSync, realpathSync, rmSync } from 'node:fs';
import { cpus, loadavg } from 'node:os';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import pg from 'pg';
import { ensurePipelineData, type PipelineBenchData } from './pipeline-data.js';
import { profileWindow, type WindowProfile } from './pipeline-profile.js';
import {
  benchQueuePrefix, benchStopping, benchTempDir, createBenchDatabase, sweepStaleTempDirs, deleteRedisPrefix, dropBenchDatabase, onCleanup,
  postgresReachable, redisReachable, sweepStale,
} from './pipeline-services.js';
import { RESULT_WRITES, type RepoTiming } from './pipeline-timing-repo.js';
import { median } from './timing.js';

const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), '../../..');
const WORK_DIR = join(ROOT, 'test/bench/.work/pipeline');
const CLI = join(ROOT, 'dist/workers/cli.js');
export const REGISTER = join(ROOT, 'dist/test/bench/pipeline-register.js');
const EMBEDDED_CHILD = join(ROOT, 'dist/test/bench/pipeline-embedded-child.js');
const NODE = process.execPath;
export const BENCH_REDIS_URL = 'redis://127.0.0.1:6379';
export const BENCH_POSTGRES_URL = 'postgres://postgres@127.0.0.1:5432/postgres';
/** A run taking longer than this is killed and reported as failed (a bench must never hang). */
export const RUN_TIMEOUT_MS = 300_000;

export type PipelineConfig = 'embedded_1' | 'embedded_2' | 'distributed_1' | 'distributed_2';
const CONFIGS: PipelineConfig[] = ['embedded_1', 'embedded_2', 'distributed_1', 'distributed_2'];

/** The figures of one run. */
export interface RunFigures {
  config: PipelineConfig;
  /** runPipeline's own seconds (the summary's `seconds`). */
  seconds: number;
  /** Spawn to exit of the process running runPipeline (embedded child, or `heatledger ingest`). */
  wallSeconds: number;
  scenesPerSecond: number;
  /**
   * The job phase: first repository call (the first ingest) to the end of the
   * last (derive's write), seconds; leaves out start-up (districts, hashing,
   * opening the store: a fresh PGlite directory runs initdb and the migrations).
   */
  jobsSeconds: number;
  jobsScenesPerSecond: number;
  /** Embedded only: runPipeline's start to the first repository call, and the last one to its return, seconds. */
  startupSeconds: number | null;
  finishSeconds: number | null;
  /** Summed time inside result writes (storeProcessedScene, replaceDerivedFor), ms, all processes. */
  writeMs: number;
  /** Time with at least one result write in flight, ms (union of the intervals, all processes). */
  writeBusyMs: number;
  storageFraction: number;
  /** Per repository method: calls, summed ms, rows; all processes. */
  methods: Record<string, { calls: number; totalMs: number; rows: number }>;
  zonalRows: number;
  derivedRows: number;
  derivedOk: number;
  failures: number;
  firstFailure: string | null;
}

/** What `npm run bench -- --pipeline` adds under the key `pipeline`. */
export interface PipelineFigures {
  scenes: number;
  repetitions: number;
  scenes_per_second: Record<PipelineConfig, number | null>;
  scaling: { embedded: number | null; distributed: number | null };
  /** The same over the job phase only (see RunFigures.jobsSeconds). */
  scenes_per_second_jobs: Record<PipelineConfig, number | null>;
  scaling_jobs: { embedded: number | null; distributed: number | null };
  /** Largest of the configurations' median storage fractions. */
  storage_fraction: { embedded: number | null; distributed: number | null };
  storage_fraction_by_config: Record<PipelineConfig, number | null>;
  storage_measurement: string;
  seconds: Record<PipelineConfig, number[]>;
  wall_seconds: Record<PipelineConfig, number[]>;
  /** Median seconds before the job phase, in it, after it (distributed: before + after as one, `outside`). */
  phase_seconds_median: Record<PipelineConfig, { jobs: number; startup: number | null; finish: number | null; outside: number } | null>;
  write_ms_median: Record<PipelineConfig, number | null>;
  repo_methods_ms_median: Record<PipelineConfig, Record<string, number> | null>;
  distributed_skipped: string | null;
  problems: string[];
  /** One embedded 1-thread run under --cpu-prof: per phase, per thread, busy time and the largest groups. */
  profile: ProfiledRun | null;
  machine: { cpus: number; loadavg_at_start: number[]; loadavg_at_end: number[] };
  section_seconds: number;
}

export type Phase = 'startup' | 'jobs' | 'finish';

export interface ProfiledRun {
  seconds: number;
  phases: Record<Phase, { seconds: number; threads: Record<string, WindowProfile> }>;
}

/** Options of the section, taken off the command line by `pipelineFlags`. */
export interface PipelineBenchOptions {
  repetitions?: number;
  /** Configurations to run; default all four. */
  configs?: PipelineConfig[];
  profile?: boolean;
  say?: (line: string) => void;
}

/**
 * Split the pipeline section's flags off a bench command line.
 * `--pipeline` or `--all` selects the section; `--pipeline-reps N` (1-9,
 * default 2), `--pipeline-configs a,b` (a subset of embedded_1, embedded_2,
 * distributed_1, distributed_2) and `--pipeline-profile` tune it. Returns the
 * remaining arguments.
 * @example pipelineFlags(['--json', '--pipeline']) // { argv: ['--json'], pipeline: true, options: {} }
 */
export function pipelineFlags(argv: readonly string[]): { argv: string[]; pipeline: boolean; options: PipelineBenchOptions } {
  const rest: string[] = [];
  const options: PipelineBenchOptions = {};
  let pipeline = false;
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i];
    if (a === '--pipeline' || a === '--all') pipeline = true;
    else if (a === '--pipeline-profile') options.profile = true;
    else if (a === '--pipeline-reps') options.repetitions = repetitionsFlag(a, argv[++i]);
    else if (a === '--pipeline-configs') options.configs = configsFlag(a, argv[++i], CONFIGS);
    else rest.push(a);
  }
  return { argv: rest, pipeline, options };
}

/** The value of a bench `--…-reps` flag: a whole number from 1 to 9. */
export function repetitionsFlag(flag: string, value: string | undefined): number {
  const n = Number(value);
  if (!Number.isInteger(n) || n < 1 || n > 9) throw new Error(`${flag} needs a whole number from 1 to 9, got "${value}"`);
  return n;
}

/** The value of a bench `--…-configs` flag: a comma-separated list drawn from `allowed`, without repeats. */
export function configsFlag<T extends string>(flag: string, value: string | undefined, allowed: readonly T[]): T[] {
  const list = (value ?? '').split(',').map((x) => x.trim()).filter(Boolean);
  if (!list.length || !list.every((x) => (allowed as readonly string[]).includes(x))) {
    throw new Error(`${flag} needs a comma-separated list of ${allowed.join(', ')}, got "${value}"`);
  }
  return [...new Set(list)] as T[];
}

/** Total length of the union of intervals [start, end], same units. */
export function unionLength(intervals: readonly [number, number][]): number {
  const s = [...intervals].sort((p, q) => p[0] - q[0]);
  let total = 0, curStart = -Infinity, curEnd = -Infinity;
  for (const [a, b] of s) {
    if (a > curEnd) { if (curEnd > curStart) total += curEnd - curStart; curStart = a; curEnd = b; }
    else if (b > curEnd) curEnd = b;
  }
  if (curEnd > curStart) total += curEnd - curStart;
  return total;
}

function mergeMethods(timings: RepoTiming[]): RunFigures['methods'] {
  const out: RunFigures['methods'] = {};
  for (const t of timings) {
    for (const [k, m] of Object.entries(t.methods)) {
      const o = (out[k] ??= { calls: 0, totalMs: 0, rows: 0 });
      o.calls += m.calls; o.totalMs += m.totalMs; o.rows += m.rows;
    }
  }
  return out;
}

/** Environment of a child: ours minus anything that selects a store or a queue. */
export function cleanEnv(extra: Record<string, string>): NodeJS.ProcessEnv {
  const env: NodeJS.ProcessEnv = {};
  for (const [k, v] of Object.entries(process.env)) {
    if (k === 'DATABASE_URL' || k === 'REDIS_URL' || k === 'NODE_OPTIONS' || k.startsWith('HEATLEDGER_') || k.startsWith('BENCH_')) continue;
    env[k] = v;
  }
  return { ...env, ...extra };
}

/**
 * How the bin starts node, read from its first line (`#!/usr/bin/env -S ...`,
 * workers/cli.ts): the node options and what `env` unsets and sets. The timed
 * children of the benches load the timed repository with `--import`, so they
 * run `node <these options> --import ... cli.js` in the environment the bin
 * would give them, and start as `heatledger` does.
 */
export function binStart(): { nodeArgs: string[]; env(base: NodeJS.ProcessEnv): NodeJS.ProcessEnv } {
  const first = readFileSync(CLI, 'utf8').split('\n', 1)[0];
  const m = /^#!\/usr\/bin\/env -S (.*)$/.exec(first);
  if (!m) throw new Error(`${CLI}: the first line is not \`#!/usr/bin/env -S ...\` (${first})`);
  const tokens = m[1].trim().split(/\s+/);
  const unset: string[] = [], set: [string, string][] = [];
  let i = 0;
  for (; i < tokens.length && tokens[i] !== 'node'; i++) {
    if (tokens[i] === '-u') unset.push(tokens[++i]);
    else if (/^[A-Z_][A-Z0-9_]*=/.test(tokens[i])) set.push([tokens[i].slice(0, tokens[i].indexOf('=')), tokens[i].slice(tokens[i].indexOf('=') + 1)]);
    else throw new Error(`${CLI}: cannot read \`${tokens[i]}\` in the first line`);
  }
  if (i === tokens.length) throw new Error(`${CLI}: the first line does not start node`);
  return {
    nodeArgs: tokens.slice(i + 1),
    env(base) {
      const env = { ...base };
      // env -S expands ${NAME} from the environment it was given, before -u takes effect
      const expanded = set.map(([k, v]) => [k, v.replace(/\$\{([A-Za-z_][A-Za-z0-9_]*)\}/g, (_, name: string) => base[name] ?? '')] as const);
      for (const k of unset) delete env[k];
      for (const [k, v] of expanded) env[k] = v;
      return env;
    },
  };
}

export interface ChildRun { code: number | null; signal: NodeJS.Signals | null; stdout: string; stderr: string; wallSeconds: number; timedOut: boolean }

/** Spawn with an IPC channel (children end when the bench goes away) and collect the output; SIGKILL after `timeoutMs`. */
export function runChild(args: string[], env: NodeJS.ProcessEnv, timeoutMs: number, command: string = NODE): { child: ChildProcess; done: Promise<ChildRun> } {
  const t0 = performance.now();
  const child = spawn(command, args, { cwd: ROOT, env, stdio: ['ignore', 'pipe', 'pipe', 'ipc'] });
  let stdout = '', stderr = '';
  child.stdout!.on('data', (d) => { stdout += d; });
  child.stderr!.on('data', (d) => { stderr += d; });
  const done = new Promise<ChildRun>((res) => {
    let timedOut = false;
    const timer = setTimeout(() => { timedOut = true; child.kill('SIGKILL'); }, timeoutMs);
    child.once('close', (code, signal) => {
      clearTimeout(timer);
      res({ code, signal, stdout, stderr, wallSeconds: (performance.now() - t0) / 1000, timedOut });
    });
  });
  return { child, done };
}

/** SIGTERM (then SIGKILL after `graceMs`) and wait for the exit. */
export function stopProcess(child: ChildProcess, graceMs = 15_000): Promise<void> {
  if (child.exitCode !== null || child.signalCode !== null) return Promise.resolve();
  return new Promise((res) => {
    const t = setTimeout(() => child.kill('SIGKILL'), graceMs);
    child.once('exit', () => { clearTimeout(t); res(); });
    child.kill('SIGTERM');
  });
}

export function describeExit(r: ChildRun): string {
  return `${r.timedOut ? `timed out after ${RUN_TIMEOUT_MS / 1000} s, ` : ''}exit ${r.code ?? r.signal}: ${r.stderr.trim().slice(-1500)}`;
}

export interface SummaryJson {
  scenes: number;
  seconds: number;
  failures: { name: string; error: string }[];
  derive: { rows: number; ok: number } | null;
}

function figuresOf(config: PipelineConfig, summary: SummaryJson, wallSeconds: number, timings: RepoTiming[], lanes: 'main-thread' | number, zonalRows: number): RunFigures {
  const intervals = timings.flatMap((t) => t.writeIntervals);
  const methods = mergeMethods(timings);
  const writeMs = RESULT_WRITES.reduce((s, k) => s + (methods[k]?.totalMs ?? 0), 0);
  const writeBusyMs = unionLength(intervals);
  const runMs = summary.seconds * 1000;
  const firsts = timings.map((t) => t.firstCallAt).filter((x): x is number => x !== null);
  const lasts = timings.map((t) => t.lastCallEnd).filter((x): x is number => x !== null);
  const jobsSeconds = firsts.length ? (Math.max(...lasts) - Math.min(...firsts)) / 1000 : NaN;
  return {
    config,
    seconds: summary.seconds,
    wallSeconds,
    scenesPerSecond: summary.scenes / summary.seconds,
    jobsSeconds,
    jobsScenesPerSecond: summary.scenes / jobsSeconds,
    startupSeconds: null,
    finishSeconds: null,
    writeMs,
    writeBusyMs,
    storageFraction: lanes === 'main-thread' ? writeBusyMs / runMs : writeMs / (lanes * runMs),
    methods,
    zonalRows,
    derivedRows: summary.derive?.rows ?? 0,
    derivedOk: summary.derive?.ok ?? 0,
    failures: summary.failures.length,
    firstFailure: summary.failures[0] ? `${summary.failures[0].name}: ${summary.failures[0].error}` : null,
  };
}

interface EmbeddedOutput {
  summary: SummaryJson;
  timing: RepoTiming | null;
  startedAt: number;
  endedAt: number;
  startedHrUs: number;
  endedHrUs: number;
}

/** One embedded run in a fresh process; `cpuProfileDir` adds --cpu-prof. */
async function embeddedRun(data: PipelineBenchData, threads: number, cpuProfileDir?: string): Promise<RunFigures & { clocks: EmbeddedOutput }> {
  if (benchStopping()) throw new Error('the bench is stopping');
  const dataDir = benchTempDir('pglite');
  let child: ChildProcess | null = null;
  const cleanup = onCleanup(async () => {
    if (child) await stopProcess(child, 5_000);
    rmSync(dataDir, { recursive: true, force: true });
  });
  try {
    const prof = cpuProfileDir ? ['--cpu-prof', '--cpu-prof-dir', cpuProfileDir, '--cpu-prof-interval', '500'] : [];
    const run = runChild([...prof, '--import', REGISTER, EMBEDDED_CHILD, data.archiveDir, data.districts, String(threads), dataDir], cleanEnv({}), RUN_TIMEOUT_MS);
    child = run.child;
    const r = await run.done;
    if (r.code !== 0) throw new Error(`embedded run (${threads} thread(s)) failed: ${describeExit(r)}`);
    const out = JSON.parse(r.stdout.trim().split('\n').pop()!) as EmbeddedOutput;
    const t = out.timing;
    if (!t || t.firstCallAt === null || t.lastCallEnd === null) throw new Error('the embedded run did not load the timed repository (pipeline-register.js); storage time unknown');
    const zonalRows = t.methods.storeProcessedScene?.rows ?? 0;
    const f = figuresOf(threads === 1 ? 'embedded_1' : 'embedded_2', out.summary, r.wallSeconds, [t], 'main-thread', zonalRows);
    return { ...f, startupSeconds: (t.firstCallAt - out.startedAt) / 1000, finishSeconds: (out.endedAt - t.lastCallEnd) / 1000, clocks: out };
  } finally {
    await cleanup();
  }
}

/** Start `heatledger worker` (timed repository; node started as the bin starts it) and wait for its "serving" line; `cpu` pins it to that processor (taskset). */
export function startWorker(workerEnv: NodeJS.ProcessEnv, cpu?: number): Promise<ChildProcess> {
  const bin = binStart();
  const argv = [NODE, ...bin.nodeArgs, '--import', REGISTER, CLI, 'worker'];
  const env = bin.env(workerEnv);
  const child = cpu === undefined
    ? spawn(argv[0], argv.slice(1), { cwd: ROOT, env, stdio: ['ignore', 'ignore', 'pipe', 'ipc'] })
    : spawn('taskset', ['-c', String(cpu), ...argv], { cwd: ROOT, env, stdio: ['ignore', 'ignore', 'pipe', 'ipc'] });
  let err = '';
  return new Promise((res, rej) => {
    const t = setTimeout(() => { child.kill('SIGKILL'); rej(new Error(`heatledger worker did not report "serving" within 30 s: ${err.trim()}`)); }, 30_000);
    child.stderr!.on('data', (d) => {
      err += d;
      if (err.includes('heatledger worker: serving')) { clearTimeout(t); res(child); }
    });
    child.once('exit', (code, signal) => { clearTimeout(t); rej(new Error(`heatledger worker exited (${code ?? signal}) before serving: ${err.trim()}`)); });
  });
}

async function serverCounts(url: string): Promise<{ processed: number; zonal: number; derived: number }> {
  const c = new pg.Client({ connectionString: url });
  await c.connect();
  try {
    const n = async (sql: string) => Number((await c.query<{ n: string }>(sql)).rows[0].n);
    return {
      processed: await n(`SELECT count(*) AS n FROM scenes WHERE status = 'processed'`),
      zonal: await n('SELECT count(*) AS n FROM zonal_stats'),
      derived: await n('SELECT count(*) AS n FROM derived_metrics'),
    };
  } finally {
    await c.end();
  }
}

/** One distributed run: fresh database and prefix, `workers` worker processes, `heatledger ingest`. */
async function distributedRun(data: PipelineBenchData, workers: number): Promise<RunFigures> {
  const db = await createBenchDatabase(BENCH_POSTGRES_URL);
  const prefix = benchQueuePrefix();
  const timingDir = benchTempDir('timing');
  const children: ChildProcess[] = [];
  const cleanup = onCleanup(async () => {
    await Promise.all(children.map((c) => stopProcess(c, 10_000)));
    await deleteRedisPrefix(BENCH_REDIS_URL, prefix);
    await dropBenchDatabase(BENCH_POSTGRES_URL, db.name);
    rmSync(timingDir, { recursive: true, force: true });
  });
  try {
    const base = { REDIS_URL: BENCH_REDIS_URL, DATABASE_URL: db.url, HEATLEDGER_QUEUE_PREFIX: prefix, BENCH_EXIT_WITH_PARENT: '1' };
    // one after the other: the first one migrates the fresh database
    for (let k = 0; k < workers; k++) {
      children.push(await startWorker(cleanEnv({ ...base, BENCH_REPO_TIMING_FILE: join(timingDir, `worker-${k}.json`) })));
    }
    const ingest = runChild(
      ['--import', REGISTER, CLI, 'ingest', data.archiveDir, '--districts', data.districts, '--json', '--no-progress'],
      cleanEnv(base), RUN_TIMEOUT_MS,
    );
    children.push(ingest.child);
    const r = await ingest.done;
    if (r.code !== 0) throw new Error(`heatledger ingest with ${workers} worker(s) failed: ${describeExit(r)}`);
    const summary = JSON.parse(r.stdout) as SummaryJson;
    // graceful stop: each worker writes its timing file on exit
    await Promise.all(children.map((c) => stopProcess(c, 15_000)));
    const timings: RepoTiming[] = [];
    for (let k = 0; k < workers; k++) {
      const f = join(timingDir, `worker-${k}.json`);
      if (!existsSync(f)) throw new Error(`worker ${k + 1} wrote no repository timing (${f}); did it stop gracefully?`);
      timings.push(JSON.parse(readFileSync(f, 'utf8')) as RepoTiming);
    }
    const counts = await serverCounts(db.url);
    const fig = figuresOf(workers === 1 ? 'distributed_1' : 'distributed_2', summary, r.wallSeconds, timings, workers, counts.zonal);
    if (counts.derived !== fig.derivedRows) fig.firstFailure ??= `derived_metrics holds ${counts.derived} rows but derive reported ${fig.derivedRows}`;
    if (counts.processed !== summary.scenes) fig.firstFailure ??= `${counts.processed} of ${summary.scenes} scenes are 'processed' in the database`;
    return fig;
  } finally {
    await cleanup();
  }
}

/**
 * Profile one embedded run: its .cpuprofile files (one per thread; Node names
 * them CPU.<date>.<time>.<pid>.<thread id>.<seq>.cpuprofile, thread 0 = main)
 * cut into start-up, job phase and finish by the run's own clocks.
 */
async function profiledEmbeddedRun(data: PipelineBenchData, dir: string): Promise<ProfiledRun> {
  rmSync(dir, { recursive: true, force: true });
  const f = await embeddedRun(data, 1, dir);
  const c = f.clocks;
  const t = c.timing!;
  const windows: Record<Phase, [number, number]> = {
    startup: [c.startedHrUs, t.firstCallHrUs!],
    jobs: [t.firstCallHrUs!, t.lastCallEndHrUs!],
    finish: [t.lastCallEndHrUs!, c.endedHrUs],
  };
  const files = readdirSync(dir).filter((name) => name.endsWith('.cpuprofile'));
  const phases = {} as ProfiledRun['phases'];
  for (const phase of Object.keys(windows) as Phase[]) {
    const [w0, w1] = windows[phase];
    const threads: Record<string, WindowProfile> = {};
    for (const name of files) {
      const tid = Number(name.split('.').at(-3));
      const w = await profileWindow(join(dir, name), ROOT, windows[phase]);
      // leave out threads with nothing to do in the window (e.g. a loader thread of --import)
      if (tid === 0 || w.busyMs > 0.05 * w.windowMs) threads[tid === 0 ? 'main' : `thread ${tid}`] = w;
    }
    phases[phase] = { seconds: (w1 - w0) / 1e6, threads };
  }
  return { seconds: f.seconds, phases };
}

const s2 = (x: number) => x.toFixed(2);
const pct = (x: number) => `${(100 * x).toFixed(1)}%`;

function runLine(f: RunFigures): string {
  const m = f.methods;
  const ms = (k: string) => (m[k] ? `${k} ${m[k].calls}x ${m[k].totalMs.toFixed(0)} ms` : null);
  return `  ${f.config.padEnd(13)} ${s2(f.scenesPerSecond)} scenes/s  (run ${s2(f.seconds)} s, process wall ${s2(f.wallSeconds)} s; ` +
    `job phase ${s2(f.jobsSeconds)} s = ${s2(f.jobsScenesPerSecond)} scenes/s` +
    (f.startupSeconds !== null ? `, before it ${s2(f.startupSeconds)} s, after it ${s2(f.finishSeconds!)} s); ` : `, outside it ${s2(f.seconds - f.jobsSeconds)} s); `) +
    `result writes ${f.writeMs.toFixed(0)} ms summed, ${f.writeBusyMs.toFixed(0)} ms busy -> storage ${pct(f.storageFraction)}; ` +
    [ms('registerSceneReporting'), ms('listDistricts')].filter(Boolean).join(', ') +
    `; ${f.zonalRows} zonal rows, ${f.derivedRows} derived (${f.derivedOk} complete)` +
    (f.failures ? `; ${f.failures} FAILED job(s), first: ${f.firstFailure}` : f.firstFailure ? `; PROBLEM: ${f.firstFailure}` : '');
}

/**
 * Run the pipeline section and return its figures (printing human lines on the way).
 * @param options repetitions (default 2), profile (one extra embedded 1-thread run under --cpu-prof), say
 */
export async function runPipelineBench(options: PipelineBenchOptions = {}): Promise<PipelineFigures> {
  const say = options.say ?? ((line: string) => { process.stdout.write(line + '\n'); });
  const reps = options.repetitions ?? 2;
  const started = performance.now();
  const loadStart = loadavg();
  for (const f of [CLI, REGISTER, EMBEDDED_CHILD]) {
    if (!existsSync(f)) throw new Error(`${f} is missing; run \`npm run build\` first (npm run bench does)`);
  }
  say(`\n[pipeline] ${cpus().length} CPU(s), load average ${loadStart.map((x) => x.toFixed(2)).join(' ')} (a shared machine: figures vary from run to run)`);
  const data = await ensurePipelineData(WORK_DIR, say);
  if (data.generated) say(`  generated in ${data.generateSeconds.toFixed(1)} s`);
  say(`  archive: ${data.scenes} scenes in ${data.archiveDir} (${(data.archiveBytes / 1e6).toFixed(0)} MB), districts ${data.districts} (20)`);

  const problems: string[] = [];
  const staleDirs = sweepStaleTempDirs();
  if (staleDirs) say(`  removed ${staleDirs} temporary folder(s) an earlier (killed) bench left`);
  let distributedSkipped: string | null = null;
  if (!(await redisReachable(BENCH_REDIS_URL))) distributedSkipped = `no Redis at ${BENCH_REDIS_URL}`;
  else if (!(await postgresReachable(BENCH_POSTGRES_URL))) distributedSkipped = `no PostgreSQL at ${BENCH_POSTGRES_URL}`;
  if (distributedSkipped) say(`  distributed runs skipped: ${distributedSkipped}`);
  else {
    const swept = await sweepStale(BENCH_POSTGRES_URL, BENCH_REDIS_URL);
    if (swept.databases.length || swept.prefixes.length) {
      say(`  removed what an earlier (killed) bench left: ${swept.databases.length} database(s), ${swept.prefixes.length} Redis prefix(es)`);
    }
  }
  const configs = (options.configs ?? CONFIGS).filter((c) => !(distributedSkipped && c.startsWith('distributed')));
  const runs: Record<PipelineConfig, RunFigures[]> = { embedded_1: [], embedded_2: [], distributed_1: [], distributed_2: [] };
  for (let rep = 1; rep <= reps; rep++) {
    const order = rep % 2 === 1 ? configs : [...configs].reverse();
    say(`  repetition ${rep} of ${reps}: ${order.join(', ')}`);
    for (const c of order) {
      if (benchStopping()) break;
      try {
        const f = c.startsWith('embedded')
          ? await embeddedRun(data, c === 'embedded_1' ? 1 : 2)
          : await distributedRun(data, c === 'distributed_1' ? 1 : 2);
        runs[c].push(f);
        say(runLine(f));
        if (f.failures || f.firstFailure) problems.push(`${c} repetition ${rep}: ${f.firstFailure}`);
      } catch (e) {
        const text = `${c} repetition ${rep}: ${(e as Error).message}`;
        problems.push(text);
        say(`  ${text}`);
      }
    }
  }

  let profile: PipelineFigures['profile'] = null;
  if (options.profile && !benchStopping()) {
    try {
      profile = await profiledEmbeddedRun(data, join(WORK_DIR, 'cpuprofile-embedded_1'));
      say(`  CPU profile of one embedded 1-thread run (${s2(profile.seconds)} s, not part of the medians); self time per phase and thread:`);
      for (const [phase, p] of Object.entries(profile.phases)) {
        for (const [thread, w] of Object.entries(p.threads)) {
          say(`    ${phase} (${s2(p.seconds)} s), ${thread}: busy ${w.busyMs.toFixed(0)} ms; ${w.byModule.map((m) => `${m.name} ${m.ms.toFixed(0)}`).join('; ')}`);
          if (phase === 'jobs') say(`      by function: ${w.byFunction.map((m) => `${m.name} ${m.ms.toFixed(0)}`).join('; ')}`);
        }
      }
    } catch (e) {
      problems.push(`profiled run: ${(e as Error).message}`);
      say(`  profiled run failed: ${(e as Error).message}`);
    }
  }

  const med = (c: PipelineConfig, pick: (f: RunFigures) => number) => (runs[c].length ? median(runs[c].map(pick)) : null);
  const sps = Object.fromEntries(CONFIGS.map((c) => [c, med(c, (f) => f.scenesPerSecond)])) as Record<PipelineConfig, number | null>;
  const ratio = (a: number | null, b: number | null) => (a !== null && b !== null ? a / b : null);
  const spsJobs = Object.fromEntries(CONFIGS.map((c) => [c, med(c, (f) => f.jobsScenesPerSecond)])) as Record<PipelineConfig, number | null>;
  const storage = Object.fromEntries(CONFIGS.map((c) => [c, med(c, (f) => f.storageFraction)])) as Record<PipelineConfig, number | null>;
  const maxOf = (...xs: (number | null)[]) => { const v = xs.filter((x): x is number => x !== null); return v.length ? Math.max(...v) : null; };
  const methodMedians = (c: PipelineConfig) => {
    if (!runs[c].length) return null;
    const names = [...new Set(runs[c].flatMap((f) => Object.keys(f.methods)))].sort();
    return Object.fromEntries(names.map((k) => [k, median(runs[c].map((f) => f.methods[k]?.totalMs ?? 0))]));
  };
  const figures: PipelineFigures = {
    scenes: data.scenes,
    repetitions: reps,
    scenes_per_second: sps,
    scaling: { embedded: ratio(sps.embedded_2, sps.embedded_1), distributed: ratio(sps.distributed_2, sps.distributed_1) },
    scenes_per_second_jobs: spsJobs,
    scaling_jobs: { embedded: ratio(spsJobs.embedded_2, spsJobs.embedded_1), distributed: ratio(spsJobs.distributed_2, spsJobs.distributed_1) },
    storage_fraction: { embedded: maxOf(storage.embedded_1, storage.embedded_2), distributed: maxOf(storage.distributed_1, storage.distributed_2) },
    storage_fraction_by_config: storage,
    storage_measurement:
      'measured: every process times its repository (wrapper registered by a node --import preload); embedded = time with a result write ' +
      '(storeProcessedScene/replaceDerivedFor) in flight on the PGlite main thread / run seconds; distributed = summed write time of the workers / (workers x run seconds)',
    seconds: Object.fromEntries(CONFIGS.map((c) => [c, runs[c].map((f) => f.seconds)])) as Record<PipelineConfig, number[]>,
    wall_seconds: Object.fromEntries(CONFIGS.map((c) => [c, runs[c].map((f) => f.wallSeconds)])) as Record<PipelineConfig, number[]>,
    phase_seconds_median: Object.fromEntries(CONFIGS.map((c) => [c, runs[c].length ? {
      jobs: med(c, (f) => f.jobsSeconds)!,
      startup: c.startsWith('embedded') ? med(c, (f) => f.startupSeconds!) : null,
      finish: c.startsWith('embedded') ? med(c, (f) => f.finishSeconds!) : null,
      outside: med(c, (f) => f.seconds - f.jobsSeconds)!,
    } : null])) as PipelineFigures['phase_seconds_median'],
    write_ms_median: Object.fromEntries(CONFIGS.map((c) => [c, med(c, (f) => f.writeMs)])) as Record<PipelineConfig, number | null>,
    repo_methods_ms_median: Object.fromEntries(CONFIGS.map((c) => [c, methodMedians(c)])) as Record<PipelineConfig, Record<string, number> | null>,
    distributed_skipped: distributedSkipped,
    problems,
    profile,
    machine: { cpus: cpus().length, loadavg_at_start: loadStart, loadavg_at_end: loadavg() },
    section_seconds: (performance.now() - started) / 1000,
  };
  const show = (x: number | null, f: (v: number) => string = s2) => (x === null ? 'n/a' : f(x));
  say(`  medians, scenes/s: embedded ${show(sps.embedded_1)} (1 thread) / ${show(sps.embedded_2)} (2 threads), distributed ${show(sps.distributed_1)} (1 worker) / ${show(sps.distributed_2)} (2 workers)`);
  say(`  scaling 2/1 (goal >= 1.8): embedded ${show(figures.scaling.embedded)}, distributed ${show(figures.scaling.distributed)}` +
    `; job phase only: embedded ${show(figures.scaling_jobs.embedded)}, distributed ${show(figures.scaling_jobs.distributed)}`);
  say(`  storage share of the run (goal <= 10%): embedded ${show(storage.embedded_1, pct)} / ${show(storage.embedded_2, pct)}, distributed ${show(storage.distributed_1, pct)} / ${show(storage.distributed_2, pct)}`);
  if (problems.length) say(`  problems: ${problems.length}; first: ${problems[0]}`);
  say(`  pipeline section took ${figures.section_seconds.toFixed(0)} s`);
  return figures;
}

// Run directly: node dist/test/bench/pipeline.js [--json] [--pipeline-reps N] [--pipeline-profile]
const invokedDirectly = process.argv[1] !== undefined && realpathSync(process.argv[1]) === fileURLToPath(import.meta.url);
if (invokedDirectly) {
  try {
    const { argv, options } = pipelineFlags(process.argv.slice(2));
    const json = argv.includes('--json');
    const unknown = argv.filter((a) => a !== '--json');
    if (unknown.length) throw new Error(`unknown option "${unknown[0]}" (options: --json, --pipeline-reps N, --pipeline-configs list, --pipeline-profile)`);
    const figures = await runPipelineBench(options);
    if (json) process.stdout.write(JSON.stringify({ pipeline: figures }) + '\n');
  } catch (e) {
    process.stderr.write(`bench: ${(e as Error).message}\n`);
    process.exitCode = 1;
  }
}
