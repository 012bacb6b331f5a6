/**
 * Shared pieces of the pipeline integration tests: a compiled dist/ (worker
 * threads, worker processes and the CLI run compiled JavaScript), a small
 * generated archive, the CLI and `heatledger worker` as child processes,
 * throw-away PostgreSQL databases and Redis key prefixes, and an external
 * zonal reference computed with rasterio/NumPy (Debian's /usr/bin/python3).
 */
import { execFileSync, spawn, type ChildProcess } from 'node:child_process';
import { randomUUID } from 'node:crypto';
import { existsSync, mkdirSync, readdirSync, rmdirSync, statSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import pg from 'pg';
import { Redis } from 'ioredis';
import { generateArchive, type ArchiveOptions, type ArchiveResult } from '../../demo-data/generate.js';
import { testDatabaseUrl } from './services.js';
import { usableTemplate } from '../../workers/store/template.js';

export const repoRoot = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');
export const cliPath = path.join(repoRoot, 'dist/workers/cli.js');

/** The small archive every pipeline test uses: 2 summers x 3 day/night pairs + 2 albedo scenes = 14 files. */
export const SMALL_ARCHIVE: ArchiveOptions = { years: 2, pairsPerYear: 3, pixelSizeMetres: 250 };
// 250 m pixels on the 300 m block grid: pixel centres sit at least 25 m from every
// district edge (origin offsets 11875 m / 22075 m are 25 mod 50), so the
// pixel-centre rule has no ties and an outside rasterizer must agree exactly
// (derived from the CITY_GRID origin, block size and the 12 km margin).

const SOURCE_DIRS = ['workers', 'api', 'demo-data', 'test/support'];

/** Newest modification time (ms) of the files under `dir` whose names pass `keep`. */
export function newestMtimeMs(dir: string, keep: (name: string) => boolean = () => true): number {
  let newest = 0;
  for (const e of readdirSync(dir, { withFileTypes: true })) {
    const p = path.join(dir, e.name);
    if (e.isDirectory()) newest = Math.max(newest, newestMtimeMs(p, keep));
    else if (keep(e.name)) newest = Math.max(newest, statSync(p).mtimeMs);
  }
  return newest;
}

function distStale(): boolean {
  if (!existsSync(cliPath) || !existsSync(path.join(repoRoot, 'dist/workers/run/registry.js'))) return true;
  const built = statSync(path.join(repoRoot, 'dist/workers/run/registry.js')).mtimeMs;
  return SOURCE_DIRS.some((d) => newestMtimeMs(path.join(repoRoot, d), (name) => name.endsWith('.ts')) > built);
}

/**
 * Run `build` while holding the lock folder dist/.<name>.lock, so test files
 * that start together do not build over each other.
 */
export async function withBuildLock(name: string, build: () => void): Promise<void> {
  const lock = path.join(repoRoot, 'dist', `.${name}.lock`);
  mkdirSync(path.dirname(lock), { recursive: true });
  const deadline = Date.now() + 900_000;
  for (;;) {
    try {
      mkdirSync(lock);
      break;
    } catch {
      // a lock older than 15 minutes belongs to a dead run (a compile on a loaded machine can take minutes)
      try { if (Date.now() - statSync(lock).mtimeMs > 900_000) rmdirSync(lock); } catch { /* gone already */ }
      if (Date.now() > deadline) throw new Error(`waited 15 minutes for ${lock}`);
      await new Promise((r) => setTimeout(r, 250));
    }
  }
  try {
    build();
  } finally {
    rmdirSync(lock);
  }
}

/**
 * Compile the tree with `npx tsc -p tsconfig.json` (and the CLI's start-up
 * bundle) when dist/ is missing or older than a source. Type errors elsewhere
 * in the tree still emit.
 */
export async function ensurePipelineBuild(): Promise<void> {
  await withBuildLock('pipeline-test-build', () => {
    if (distStale()) {
      try {
        execFileSync('npx', ['tsc', '-p', 'tsconfig.json'], { cwd: repoRoot, stdio: 'pipe', timeout: 840_000 });
      } catch {
        // tsc exits non-zero on type errors in files being edited by others; it still emits
      }
      if (!existsSync(cliPath)) throw new Error('dist/workers/cli.js is missing after `npx tsc -p tsconfig.json`');
      // the command line's start-up bundle and code cache, as `npm run build` makes them (the bin
      // would otherwise see a bundle older than the modules compiled now and load those instead)
      execFileSync(process.execPath, [path.join(repoRoot, 'dist/workers/cli-bundle-build.js')], { cwd: repoRoot, stdio: 'pipe', timeout: 840_000 });
    }
    // the embedded store's template, as `npm run build` makes it (a new store of a CLI child starts from it)
    if (!usableTemplate()) {
      execFileSync(process.execPath, [path.join(repoRoot, 'dist/workers/store/template-build.js')], { cwd: repoRoot, stdio: 'pipe', timeout: 840_000 });
    }
  });
}

/** Generate the seeded demo archive (small options) into `dir`. */
export function makeArchive(dir: string, options: ArchiveOptions = SMALL_ARCHIVE): Promise<ArchiveResult> {
  return generateArchive(dir, options);
}

/** process.env without anything that selects a store or a queue, so each child gets exactly what a test sets. */
export function cleanEnv(extra: Record<string, string> = {}): NodeJS.ProcessEnv {
  const env: NodeJS.ProcessEnv = {};
  for (const [k, v] of Object.entries(process.env)) {
    if (k === 'DATABASE_URL' || k === 'REDIS_URL' || k.startsWith('HEATLEDGER_') || k.startsWith('VITEST') || k === 'NODE_OPTIONS') continue;
    env[k] = v;
  }
  return { ...env, ...extra };
}

export interface CliResult {
  code: number | null;
  signal: NodeJS.Signals | null;
  stdout: string;
  stderr: string;
  /** Wall time, milliseconds. */
  ms: number;
  timedOut: boolean;
}

const children = new Set<ChildProcess>();

/** Spawn the CLI with piped output: `node dist/workers/cli.js <args>`, or ('bin') the file itself, by its first line. */
function spawnCli(args: string[], env: NodeJS.ProcessEnv, how: 'node' | 'bin'): ChildProcess {
  const child = how === 'bin'
    ? spawn(cliPath, args, { cwd: repoRoot, env, stdio: ['ignore', 'pipe', 'pipe'] })
    : spawn(process.execPath, [cliPath, ...args], { cwd: repoRoot, env, stdio: ['ignore', 'pipe', 'pipe'] });
  children.add(child);
  return child;
}

/**
 * Run `node dist/workers/cli.js <args>`, or with `how` 'bin' the file itself, by its
 * first line, as the `heatledger` link runs it; kills it (SIGKILL) after `timeoutMs` and says so.
 */
export function runCli(args: string[], env: NodeJS.ProcessEnv, timeoutMs = 480_000, how: 'node' | 'bin' = 'node'): Promise<CliResult> {
  const started = performance.now();
  const child = spawnCli(args, env, how);
  let stdout = '';
  let stderr = '';
  child.stdout!.on('data', (d) => { stdout += d; });
  child.stderr!.on('data', (d) => { stderr += d; });
  return new Promise((resolve) => {
    let timedOut = false;
    const timer = setTimeout(() => { timedOut = true; child.kill('SIGKILL'); }, timeoutMs);
    // 'close', not 'exit': it comes after the child's output pipes have been read to the end
    child.once('close', (code, signal) => {
      clearTimeout(timer);
      children.delete(child);
      resolve({ code, signal, stdout, stderr, ms: performance.now() - started, timedOut });
    });
  });
}

/** Run the CLI and insist on exit code 0; returns stdout. */
export async function cliOk(args: string[], env: NodeJS.ProcessEnv, timeoutMs = 480_000): Promise<string> {
  const r = await runCli(args, env, timeoutMs);
  if (r.code !== 0) {
    throw new Error(`heatledger ${args.join(' ')} exited ${r.code ?? r.signal}${r.timedOut ? ' (timed out)' : ''}: ${r.stderr.slice(0, 2000)}`);
  }
  return r.stdout;
}

export interface WorkerProcess {
  child: ChildProcess;
  stderr(): string;
}

export interface StartedCli {
  child: ChildProcess;
  stdout(): string;
  stderr(): string;
}

/**
 * Start `node dist/workers/cli.js <args>` (`how` as for runCli) and wait until its standard error
 * matches `ready` (a condition, not a delay). Rejects when the child exits
 * first or when `startTimeoutMs` passes: generous, since a loaded machine
 * can take long to start a Node process.
 */
export function startCliUntil(args: string[], env: NodeJS.ProcessEnv, ready: RegExp, startTimeoutMs = 180_000, how: 'node' | 'bin' = 'node'): Promise<StartedCli> {
  const child = spawnCli(args, env, how);
  child.once('exit', () => children.delete(child));
  let out = '';
  let err = '';
  child.stdout!.on('data', (d) => { out += d; });
  return new Promise((resolve, reject) => {
    const t = setTimeout(() => reject(new Error(`heatledger ${args[0]} did not print ${ready} within ${startTimeoutMs} ms: ${err}`)), startTimeoutMs);
    const onExit = (code: number | null, signal: NodeJS.Signals | null) => { clearTimeout(t); reject(new Error(`heatledger ${args[0]} exited (${code ?? signal}) before ${ready}: ${err}`)); };
    child.stderr!.on('data', (d) => {
      err += d;
      if (ready.test(err)) {
        clearTimeout(t);
        child.off('exit', onExit);
        resolve({ child, stdout: () => out, stderr: () => err });
      }
    });
    child.once('exit', onExit);
  });
}

/** Start `node dist/workers/cli.js worker` and wait for its "serving" line. */
export async function startCliWorker(env: NodeJS.ProcessEnv, startTimeoutMs = 180_000): Promise<WorkerProcess> {
  const started = await startCliUntil(['worker'], env, /heatledger worker: serving/, startTimeoutMs);
  return { child: started.child, stderr: started.stderr };
}

/**
 * Wait until `check()` gives a value other than `undefined` or `false`, looking again every
 * `everyMs`; returns that value. Fails after `timeoutMs` (generous: a condition, not a delay).
 * An error thrown by `check` ends the wait with that error.
 */
export async function waitFor<T>(
  check: () => T | undefined | false | Promise<T | undefined | false>,
  what: string,
  timeoutMs = 240_000,
  everyMs = 100,
): Promise<T> {
  const deadline = Date.now() + timeoutMs;
  for (;;) {
    const v = await check();
    if (v !== undefined && v !== false) return v;
    if (Date.now() > deadline) throw new Error(`waited ${timeoutMs} ms for ${what}`);
    await new Promise((r) => setTimeout(r, everyMs));
  }
}

/** Send `signal` and wait for the exit (at most `timeoutMs`, then SIGKILL); returns how it ended and how long it took. */
export function stopChild(child: ChildProcess, signal: NodeJS.Signals, timeoutMs = 120_000): Promise<{ code: number | null; signal: NodeJS.Signals | null; ms: number; forced: boolean }> {
  const started = performance.now();
  if (child.exitCode !== null || child.signalCode !== null) {
    return Promise.resolve({ code: child.exitCode, signal: child.signalCode, ms: 0, forced: false });
  }
  return new Promise((resolve) => {
    let forced = false;
    const t = setTimeout(() => { forced = true; child.kill('SIGKILL'); }, timeoutMs);
    child.once('exit', (code, sig) => { clearTimeout(t); resolve({ code, signal: sig, ms: performance.now() - started, forced }); });
    child.kill(signal);
  });
}

/** SIGKILL every child this module started that is still running (afterAll). */
export async function killAllChildren(): Promise<void> {
  await Promise.all([...children].map((c) => stopChild(c, 'SIGKILL', 5_000)));
}

export interface TempDatabase {
  name: string;
  url: string;
  drop(): Promise<void>;
}

/** A fresh, randomly named database on the test server (created through the `postgres` database). */
export async function createTempDatabase(tag: string): Promise<TempDatabase> {
  const name = `hlp_${tag}_${randomUUID().replaceAll('-', '').slice(0, 10)}`;
  const adminUrl = new URL(testDatabaseUrl);
  adminUrl.pathname = '/postgres';
  const admin = new pg.Client({ connectionString: adminUrl.href });
  await admin.connect();
  try {
    await admin.query(`CREATE DATABASE ${name}`);
  } finally {
    await admin.end();
  }
  const u = new URL(testDatabaseUrl);
  u.pathname = `/${name}`;
  return {
    name,
    url: u.href,
    async drop() {
      const a = new pg.Client({ connectionString: adminUrl.href });
      await a.connect();
      try {
        await a.query(`DROP DATABASE IF EXISTS ${name} WITH (FORCE)`);
      } finally {
        await a.end();
      }
    },
  };
}

/** Delete every Redis key under `prefix:`. */
export async function cleanRedisPrefix(redisUrl: string, prefix: string): Promise<number> {
  const r = new Redis(redisUrl, { maxRetriesPerRequest: 1, lazyConnect: true });
  let deleted = 0;
  try {
    await r.connect();
    let cursor = '0';
    do {
      const [next, keys] = await r.scan(cursor, 'MATCH', `${prefix}:*`, 'COUNT', 500);
      cursor = next;
      if (keys.length) deleted += await r.del(...keys);
    } while (cursor !== '0');
  } finally {
    r.disconnect();
  }
  return deleted;
}

/** A unique Redis key prefix for one test. */
export function uniquePrefix(tag: string): string {
  return `hlp-${tag}-${randomUUID().slice(0, 8)}`;
}

/** Row counts of the result tables, by SQL on a server database. */
export async function serverCounts(databaseUrl: string): Promise<{ scenes: number; zonal: number; derived: number; zonalDuplicates: number }> {
  const c = new pg.Client({ connectionString: databaseUrl });
  await c.connect();
  try {
    const q = async (sql: string) => Number((await c.query<{ n: string }>(sql)).rows[0].n);
    return {
      scenes: await q('SELECT count(*) AS n FROM scenes'),
      zonal: await q('SELECT count(*) AS n FROM zonal_stats'),
      derived: await q('SELECT count(*) AS n FROM derived_metrics'),
      // the primary key forbids duplicates; counted anyway so a schema change cannot hide them
      zonalDuplicates: await q('SELECT count(*) AS n FROM (SELECT scene_id, district_id FROM zonal_stats GROUP BY 1, 2 HAVING count(*) > 1) d'),
    };
  } finally {
    await c.end();
  }
}

/** One pass of one district in the external reference. */
export interface ReferencePass {
  scene: string;
  district: string;
  pixels: number;
  valid: number;
  meanKelvin: number | null;
}

/**
 * District means of LST scenes computed outside the project: rasterio reads
 * each GeoTIFF (GDAL 3.6 decoder), rasterio.warp.transform_geom reprojects each
 * district (GDAL/PROJ), rasterio.features.rasterize burns it with GDAL's
 * default pixel-centre rule (all_touched=False), and NumPy takes the mean of
 * the pixels that are not GDAL nodata, scaled with the band's scale/offset.
 */
export function rasterioDistrictMeans(scenes: string[], districtsPath: string): ReferencePass[] {
  const code = `
import json, sys
import numpy as np
import rasterio
from rasterio.features import rasterize
from rasterio.warp import transform_geom
scenes = json.loads(sys.argv[1])
fc = json.load(open(sys.argv[2]))
out = []
for path in scenes:
    with rasterio.open(path) as ds:
        band = ds.read(1).astype(np.float64)
        scale = ds.scales[0] if ds.scales else 1.0
        offset = ds.offsets[0] if ds.offsets else 0.0
        nodata = ds.nodata
        for f in fc['features']:
            geom = transform_geom('EPSG:4326', ds.crs, f['geometry'])
            mask = rasterize([(geom, 1)], out_shape=band.shape, transform=ds.transform, fill=0, all_touched=False, dtype='uint8').astype(bool)
            vals = band[mask]
            good = vals[vals != nodata] if nodata is not None else vals
            mean = float(np.mean(good * scale + offset)) if good.size else None
            out.append({'scene': path, 'district': f['properties']['id'], 'pixels': int(mask.sum()), 'valid': int(good.size), 'meanKelvin': mean})
print(json.dumps(out))
`;
  return JSON.parse(execFileSync('/usr/bin/python3', ['-c', code, JSON.stringify(scenes), districtsPath], { encoding: 'utf8', maxBuffer: 64 << 20 }));
}

export interface TcpProxy {
  port: number;
  /** Stop listening and cut every open connection: the target is unreachable through the proxy from now on. */
  close(): Promise<void>;
}

/** A TCP forwarder 127.0.0.1:<random port> → host:port, to make a server vanish for some clients only. */
export async function startTcpProxy(targetHost: string, targetPort: number): Promise<TcpProxy> {
  const net = await import('node:net');
  const sockets = new Set<import('node:net').Socket>();
  const server = net.createServer((client) => {
    const upstream = net.connect(targetPort, targetHost);
    sockets.add(client);
    sockets.add(upstream);
    const end = () => { client.destroy(); upstream.destroy(); sockets.delete(client); sockets.delete(upstream); };
    client.on('error', end); upstream.on('error', end);
    client.on('close', end); upstream.on('close', end);
    client.pipe(upstream);
    upstream.pipe(client);
  });
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
  const port = (server.address() as import('node:net').AddressInfo).port;
  return {
    port,
    close: () => new Promise<void>((resolve) => {
      for (const s of sockets) s.destroy();
      server.close(() => resolve());
    }),
  };
}
