/**
 * Services of the distributed pipeline bench: throw-away PostgreSQL databases
 * and Redis key prefixes, named after the bench's process id so that a sweep
 * at start can remove what a killed bench left (its process is gone), and a
 * registry of clean-up steps that also runs on SIGINT/SIGTERM.
 */
import { randomUUID } from 'node:crypto';
import { mkdtempSync, readdirSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import pg from 'pg';
import { Redis } from 'ioredis';
import { cleanRedisPrefix } from '../support/pipeline-harness.js';

export const BENCH_DATABASE_PREFIX = 'hlbench_';
export const BENCH_QUEUE_PREFIX = 'hlbench-';

/** The database server URL of a database name on the server of `serverUrl`. */
export function databaseUrl(serverUrl: string, name: string): string {
  const u = new URL(serverUrl);
  u.pathname = `/${name}`;
  return u.href;
}

function alive(pid: number): boolean {
  if (pid === process.pid) return true;
  try {
    process.kill(pid, 0);
    return true;
  } catch (e) {
    return (e as NodeJS.ErrnoException).code === 'EPERM';
  }
}

async function withAdmin<T>(serverUrl: string, body: (c: pg.Client) => Promise<T>): Promise<T> {
  const c = new pg.Client({ connectionString: databaseUrl(serverUrl, 'postgres'), connectionTimeoutMillis: 5_000 });
  await c.connect();
  try {
    return await body(c);
  } finally {
    await c.end();
  }
}

/** A fresh, randomly named database (created through the `postgres` database); returns its name and URL. */
export async function createBenchDatabase(serverUrl: string): Promise<{ name: string; url: string }> {
  if (stopping) throw new Error('the bench is stopping');
  const name = `${BENCH_DATABASE_PREFIX}${process.pid}_${randomUUID().replaceAll('-', '').slice(0, 10)}`;
  await withAdmin(serverUrl, (c) => c.query(`CREATE DATABASE ${name}`));
  return { name, url: databaseUrl(serverUrl, name) };
}

/** Drop a bench database, closing its sessions (PostgreSQL 13+ FORCE). */
export async function dropBenchDatabase(serverUrl: string, name: string): Promise<void> {
  if (!/^hlbench_\d+_[0-9a-f]{10}$/.test(name)) throw new Error(`refusing to drop "${name}": not a bench database`);
  await withAdmin(serverUrl, (c) => c.query(`DROP DATABASE IF EXISTS ${name} WITH (FORCE)`));
}

/** A unique Redis key prefix for one distributed run. */
export function benchQueuePrefix(): string {
  return `${BENCH_QUEUE_PREFIX}${process.pid}-${randomUUID().slice(0, 8)}`;
}

/** Delete every Redis key under `prefix:`; returns how many (the test harness's helper). */
export const deleteRedisPrefix = cleanRedisPrefix;

/** Whether Redis answers PING within a few seconds. */
export async function redisReachable(redisUrl: string): Promise<boolean> {
  const r = new Redis(redisUrl, { maxRetriesPerRequest: 0, lazyConnect: true, connectTimeout: 3_000, retryStrategy: () => null });
  r.on('error', () => undefined);
  try {
    await r.connect();
    return (await r.ping()) === 'PONG';
  } catch {
    return false;
  } finally {
    r.disconnect();
  }
}

/** Whether the PostgreSQL server accepts a connection to its `postgres` database. */
export async function postgresReachable(serverUrl: string): Promise<boolean> {
  try {
    await withAdmin(serverUrl, (c) => c.query('SELECT 1'));
    return true;
  } catch {
    return false;
  }
}

/**
 * Remove databases and Redis prefixes that earlier benches left behind: only
 * those named after a process id that no longer runs. Returns what went.
 */
export async function sweepStale(serverUrl: string, redisUrl: string): Promise<{ databases: string[]; prefixes: string[] }> {
  const databases: string[] = [];
  const names = await withAdmin(serverUrl, async (c) =>
    (await c.query<{ datname: string }>(`SELECT datname FROM pg_database WHERE datname LIKE 'hlbench\\_%'`)).rows.map((r) => r.datname));
  for (const name of names) {
    const m = /^hlbench_(\d+)_[0-9a-f]{10}$/.exec(name);
    if (m && !alive(Number(m[1]))) { await dropBenchDatabase(serverUrl, name); databases.push(name); }
  }
  const prefixes = new Set<string>();
  const r = new Redis(redisUrl, { maxRetriesPerRequest: 1, lazyConnect: true, connectTimeout: 5_000 });
  try {
    await r.connect();
    let cursor = '0';
    do {
      const [next, keys] = await r.scan(cursor, 'MATCH', `${BENCH_QUEUE_PREFIX}*`, 'COUNT', 1000);
      cursor = next;
      for (const k of keys) {
        const m = /^(hlbench-(\d+)-[0-9a-f]{8}):/.exec(k);
        if (m && !alive(Number(m[2]))) prefixes.add(m[1]);
      }
    } while (cursor !== '0');
  } finally {
    r.disconnect();
  }
  for (const p of prefixes) await deleteRedisPrefix(redisUrl, p);
  return { databases, prefixes: [...prefixes] };
}

/** A temporary folder `hlbench-<what>-<pid>-XXXXXX` under the system temp dir (the caller removes it). */
export function benchTempDir(what: 'pglite' | 'timing'): string {
  return mkdtempSync(join(tmpdir(), `hlbench-${what}-${process.pid}-`));
}

/** Remove bench temp folders whose process no longer runs; returns how many. */
export function sweepStaleTempDirs(): number {
  let n = 0;
  for (const name of readdirSync(tmpdir())) {
    const m = /^hlbench-(?:pglite|timing)-(\d+)-[A-Za-z0-9]{6}$/.exec(name);
    if (m && !alive(Number(m[1]))) { rmSync(join(tmpdir(), name), { recursive: true, force: true }); n++; }
  }
  return n;
}

type Cleanup = () => Promise<void>;
const cleanups = new Set<Cleanup>();
let signalsInstalled = false;
let stopping = false;

/** True once SIGINT/SIGTERM arrived: start nothing new. */
export function benchStopping(): boolean {
  return stopping;
}

async function runAllCleanups(): Promise<void> {
  for (const c of [...cleanups].reverse()) {
    cleanups.delete(c);
    await c().catch((e) => process.stderr.write(`bench: clean-up failed: ${(e as Error).message}\n`));
  }
}

/**
 * Register a clean-up step; it runs when the returned function is called, or
 * on SIGINT/SIGTERM of the bench (then the bench exits 130/143).
 */
export function onCleanup(step: Cleanup): () => Promise<void> {
  if (!signalsInstalled) {
    signalsInstalled = true;
    for (const [sig, code] of [['SIGINT', 130], ['SIGTERM', 143]] as const) {
      process.on(sig, () => {
        stopping = true;
        process.stderr.write(`bench: ${sig}, cleaning up ...\n`);
        void runAllCleanups().finally(() => process.exit(code));
      });
    }
  }
  let done = false;
  const run = async () => {
    if (done) return;
    done = true;
    cleanups.delete(wrapped);
    await step();
  };
  const wrapped: Cleanup = run;
  cleanups.add(wrapped);
  return run;
}
