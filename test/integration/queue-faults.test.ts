/**
 * Fault tests of the BullMQ runner with real worker processes
 * (test/support/queue-worker.mjs) writing idempotently into PostgreSQL:
 * a worker killed with SIGKILL, Redis restarted mid-run, PostgreSQL unreachable.
 *
 * Expected rows are derived from the submitted tree (one row per child with
 * its value; the root's row holds their sum) — what an undisturbed run writes.
 */
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { randomUUID } from 'node:crypto';
import { existsSync, readFileSync, rmSync } from 'node:fs';
import net from 'node:net';
import path from 'node:path';
import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import pg from 'pg';
import { Redis } from 'ioredis';
import { createBullRunner } from '../../workers/queue/bull.js';
import type { FlowResult, JobSpec, Runner } from '../../workers/queue/types.js';
import { serviceAvailable, testDatabaseUrl, testRedisUrl } from '../support/services.js';
import { ensureQueueBuild, repoRoot } from '../support/queue-build.js';

ensureQueueBuild();
const up = (await serviceAvailable('redis', 'queue faults')) && (await serviceAvailable('postgres', 'queue faults'));

// A killed worker's jobs come back within seconds (same values for every worker). Not smaller: a
// worker renews its job locks every LOCK_MS / 2, and on a loaded machine a lock that lapses makes a
// healthy job look stalled.
const STALLED_MS = 5_000;
const LOCK_MS = 10_000;
// Generous limits that only catch a hang (the machine may be heavily loaded).
const START_MS = 180_000;
const RUN_MS = 600_000;
const TEST_MS = 1_200_000;
const workerScript = path.join(repoRoot, 'test/support/queue-worker.mjs');
const children = new Set<ChildProcess>();

function startWorkerProcess(env: Record<string, string>): Promise<ChildProcess> {
  const child = spawn(process.execPath, [workerScript], {
    env: { ...process.env, QUEUE_STALLED_MS: String(STALLED_MS), QUEUE_LOCK_MS: String(LOCK_MS), ...env },
    stdio: ['ignore', 'pipe', 'pipe'],
  });
  children.add(child);
  child.on('exit', () => children.delete(child));
  let stderr = '';
  child.stderr!.on('data', (d) => { stderr += d; });
  return new Promise((resolve, reject) => {
    const t = setTimeout(() => reject(new Error(`worker did not start in ${START_MS} ms: ${stderr}`)), START_MS);
    child.stdout!.on('data', (d) => { if (String(d).includes('ready')) { clearTimeout(t); resolve(child); } });
    child.once('exit', (code) => { clearTimeout(t); reject(new Error(`worker exited with ${code}: ${stderr}`)); });
  });
}

function stopProcess(child: ChildProcess, signal: NodeJS.Signals): Promise<void> {
  if (child.exitCode !== null || child.signalCode !== null) return Promise.resolve();
  return new Promise((resolve) => { child.once('exit', () => resolve()); child.kill(signal); });
}

function within<T>(p: Promise<T>, ms: number, what: string): Promise<T> {
  let t: NodeJS.Timeout;
  return Promise.race([p, new Promise<T>((_, rej) => { t = setTimeout(() => rej(new Error(`${what} did not finish in ${ms} ms`)), ms); })])
    .finally(() => clearTimeout(t));
}

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

/** Wait until `check()` holds, looking every 100 ms; fails after `ms` (a condition, not a delay). */
async function until(check: () => boolean | Promise<boolean>, what: string, ms = START_MS): Promise<void> {
  const deadline = Date.now() + ms;
  while (!(await check())) {
    if (Date.now() > deadline) throw new Error(`waited ${ms} ms for ${what}`);
    await sleep(100);
  }
}

/** n pgRow children; those from index `gatedFrom` on wait for `gate` to open before they write. */
function rowTree(tag: string, n: number, delayMs: number, gatedFrom = n, gate = `gate-${tag}`): JobSpec {
  return {
    name: 'pgSum', id: `root-${tag}`, data: null,
    children: Array.from({ length: n }, (_, i) => ({ name: 'pgRow', id: `row-${tag}-${i}`, data: { value: (i + 1) * 10, delayMs, ...(i >= gatedFrom ? { gate } : {}) } })),
  };
}
function expectedRows(tag: string, n: number): [string, number][] {
  const rows: [string, number][] = Array.from({ length: n }, (_, i) => [`row-${tag}-${i}`, (i + 1) * 10]);
  rows.push([`root-${tag}`, rows.reduce((s, r) => s + r[1], 0)]);
  return rows.sort((a, b) => a[0].localeCompare(b[0]));
}

async function cleanRedis(url: string, prefix: string) {
  const r = new Redis(url, { maxRetriesPerRequest: 1 });
  try {
    let cursor = '0';
    do {
      const [next, keys] = await r.scan(cursor, 'MATCH', `${prefix}:*`, 'COUNT', 500);
      cursor = next;
      if (keys.length) await r.del(...keys);
    } while (cursor !== '0');
  } finally { r.disconnect(); }
}

describe.skipIf(!up)('BullMQ runner under faults', () => {
  const dbName = `hlq_${randomUUID().replaceAll('-', '').slice(0, 12)}`;
  const dbUrl = (() => { const u = new URL(testDatabaseUrl); u.pathname = `/${dbName}`; return u.href; })();
  let admin: pg.Client;
  let db: pg.Client;
  const prefixes: string[] = [];
  const runners: Runner[] = [];

  beforeAll(async () => {
    admin = new pg.Client({ connectionString: testDatabaseUrl });
    await admin.connect();
    await admin.query(`CREATE DATABASE ${dbName}`);
    db = new pg.Client({ connectionString: dbUrl });
    await db.connect();
    await db.query('CREATE TABLE queue_rows (id text PRIMARY KEY, value bigint NOT NULL)');
    await db.query('CREATE TABLE queue_gates (id text PRIMARY KEY)');
  });
  afterEach(async () => {
    for (const r of runners.splice(0)) await r.close();
    await Promise.all([...children].map((c) => stopProcess(c, 'SIGKILL')));
  });
  afterAll(async () => {
    await db?.end();
    await admin?.query(`DROP DATABASE IF EXISTS ${dbName} WITH (FORCE)`);
    await admin?.end();
    for (const p of prefixes) await cleanRedis(testRedisUrl, p);
  });

  const rowsOf = async (tag: string) =>
    (await db.query<{ id: string; value: string }>('SELECT id, value FROM queue_rows WHERE id LIKE $1 ORDER BY id', [`%-${tag}%`]))
      .rows.map((r) => [r.id, Number(r.value)] as [string, number]).sort((a, b) => a[0].localeCompare(b[0]));

  it('recovers the jobs of a worker killed with SIGKILL mid-batch', async () => {
    const prefix = `hlqf-${randomUUID().slice(0, 8)}`;
    prefixes.push(prefix);
    const env = { QUEUE_REDIS_URL: testRedisUrl, QUEUE_PREFIX: prefix, QUEUE_TEST_DATABASE_URL: dbUrl, QUEUE_CONCURRENCY: '3' };
    const first = await startWorkerProcess(env);
    const runner = createBullRunner({ redisUrl: testRedisUrl, prefix, attempts: 3, backoffMs: 100, pollMs: 250 });
    runners.push(runner);
    // rows 3-11 wait behind a gate: whatever the machine's speed, the kill comes after exactly
    // three rows, with gated jobs in the worker's hands
    const run = runner.runFlow(rowTree('kill', 12, 0, 3));
    await until(async () => (await rowsOf('kill')).length >= 3, 'the three ungated rows');
    await stopProcess(first, 'SIGKILL');
    expect((await rowsOf('kill')).length).toBe(3);
    await db.query('INSERT INTO queue_gates (id) VALUES ($1)', ['gate-kill']);
    await startWorkerProcess(env);
    const r = await within(run, RUN_MS, 'run after SIGKILL');
    expect(r.failures).toEqual([]);
    expect(await rowsOf('kill')).toEqual(expectedRows('kill', 12));
    expect(r.results.get('root-kill')).toEqual({ value: 780, failedChildren: [] }); // 10+20+…+120 = 780
  }, TEST_MS);

  it('completes a run when Redis restarts mid-run (and loses its data)', async () => {
    // A private server with the build machines' flags (no persistence), so restarting it disturbs no one else.
    // The port comes from the system; the server's pid file tells whether the server answering
    // on it is ours (another process may take a port between our probe and the server's start).
    const freePort = () => new Promise<number>((res) => { const s = net.createServer().listen(0, '127.0.0.1', () => { const p = (s.address() as net.AddressInfo).port; s.close(() => res(p)); }); });
    let port = 0;
    const pidFile = () => `/tmp/hlq-redis-${port}.pid`;
    const cli = (...args: string[]) => spawnSync('redis-cli', ['-h', '127.0.0.1', '-p', String(port), ...args], { encoding: 'utf8' });
    const oursAnswers = () => {
      if (!existsSync(pidFile())) return false;
      const info = cli('info', 'server').stdout ?? '';
      return new RegExp(`^process_id:${readFileSync(pidFile(), 'utf8').trim()}\\s*$`, 'm').test(info);
    };
    const startRedis = async () => {
      rmSync(pidFile(), { force: true });
      const out = spawnSync('redis-server', ['--daemonize', 'yes', '--bind', '127.0.0.1', '--port', String(port), '--save', '', '--appendonly', 'no', '--dir', '/tmp', '--pidfile', pidFile(), '--logfile', `/tmp/hlq-redis-${port}.log`], { encoding: 'utf8' });
      if (out.status !== 0) throw new Error(`redis-server did not start: ${out.stderr}`);
      await until(oursAnswers, `the private Redis on port ${port}`);
    };
    const stopRedis = () => { if (port) cli('shutdown', 'nosave'); };
    for (let attempt = 1; ; attempt++) {
      port = await freePort();
      try {
        await startRedis();
        break;
      } catch (e) {
        stopRedis();
        if (attempt === 3) throw e;
      }
    }
    const url = `redis://127.0.0.1:${port}`;
    try {
      const env = { QUEUE_REDIS_URL: url, QUEUE_PREFIX: 'hlqr', QUEUE_TEST_DATABASE_URL: dbUrl, QUEUE_CONCURRENCY: '3' };
      await startWorkerProcess(env);
      const runner = createBullRunner({ redisUrl: url, prefix: 'hlqr', attempts: 3, backoffMs: 100, pollMs: 250 });
      runners.push(runner);
      // rows 2-9 wait behind a gate, so the restart always comes mid-run
      const run = runner.runFlow(rowTree('redis', 10, 0, 2));
      await until(async () => (await rowsOf('redis')).length >= 2, 'the two ungated rows');
      stopRedis();
      await until(() => !oursAnswers(), 'the private Redis to stop');
      await db.query('INSERT INTO queue_gates (id) VALUES ($1)', ['gate-redis']);
      await sleep(1_500); // the outage itself: a deliberate pause, not a wait for a condition
      await startRedis();
      const r: FlowResult = await within(run, RUN_MS, 'run after Redis restart');
      expect(r.failures).toEqual([]);
      expect(await rowsOf('redis')).toEqual(expectedRows('redis', 10));
    } finally {
      stopRedis();
    }
  }, TEST_MS);

  it('retries while PostgreSQL is unreachable, then fails every job with the reason', async () => {
    const prefix = `hlqf-${randomUUID().slice(0, 8)}`;
    prefixes.push(prefix);
    await startWorkerProcess({ QUEUE_REDIS_URL: testRedisUrl, QUEUE_PREFIX: prefix, QUEUE_TEST_DATABASE_URL: 'postgres://postgres@127.0.0.1:1/none', QUEUE_CONCURRENCY: '4' });
    const runner = createBullRunner({ redisUrl: testRedisUrl, prefix, attempts: 3, backoffMs: 100, pollMs: 250 });
    runners.push(runner);
    const r = await within(runner.runFlow(rowTree('nodb', 4, 0)), RUN_MS, 'run without PostgreSQL');
    // None lost: every job of the tree is reported failed (4 children + the parent, which still ran).
    expect(r.results.size).toBe(0);
    expect(r.failures.map((f) => f.id).sort()).toEqual(expectedRows('nodb', 4).map((x) => x[0]));
    for (const f of r.failures) expect(f.error).toMatch(/^database unreachable at 127\.0\.0\.1:1: .*ECONNREFUSED/);
    expect(await rowsOf('nodb')).toEqual([]);
  }, TEST_MS);
});
