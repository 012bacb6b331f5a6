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

// Small stalled interval so a killed worker's jobs come back within seconds (same value for every worker).
const STALLED_MS = 1_000;
const LOCK_MS = 2_000;
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
    const t = setTimeout(() => reject(new Error(`worker did not start in 15 s: ${stderr}`)), 15_000);
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

function rowTree(tag: string, n: number, delayMs: number): JobSpec {
  return {
    name: 'pgSum', id: `root-${tag}`, data: null,
    children: Array.from({ length: n }, (_, i) => ({ name: 'pgRow', id: `row-${tag}-${i}`, data: { value: (i + 1) * 10, delayMs } })),
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
    const run = runner.runFlow(rowTree('kill', 12, 400));
    // Kill once some rows are written and others are in the worker's hands.
    while ((await rowsOf('kill')).length < 3) await sleep(50);
    await stopProcess(first, 'SIGKILL');
    const writtenAtKill = (await rowsOf('kill')).length;
    expect(writtenAtKill).toBeLessThan(13);
    await startWorkerProcess(env);
    const r = await within(run, 40_000, 'run after SIGKILL');
    expect(r.failures).toEqual([]);
    expect(await rowsOf('kill')).toEqual(expectedRows('kill', 12));
    expect(r.results.get('root-kill')).toEqual({ value: 780, failedChildren: [] }); // 10+20+…+120 = 780
  }, 60_000);

  it('completes a run when Redis restarts mid-run (and loses its data)', async () => {
    // A private server with the build machines' flags (no persistence), so restarting it disturbs no one else.
    const port = await new Promise<number>((res) => { const s = net.createServer().listen(0, '127.0.0.1', () => { const p = (s.address() as net.AddressInfo).port; s.close(() => res(p)); }); });
    const startRedis = () => {
      const out = spawnSync('redis-server', ['--daemonize', 'yes', '--bind', '127.0.0.1', '--port', String(port), '--save', '', '--appendonly', 'no', '--dir', '/tmp', '--logfile', `/tmp/hlq-redis-${port}.log`], { encoding: 'utf8' });
      if (out.status !== 0) throw new Error(`redis-server did not start: ${out.stderr}`);
    };
    const stopRedis = () => spawnSync('redis-cli', ['-h', '127.0.0.1', '-p', String(port), 'shutdown', 'nosave']);
    const url = `redis://127.0.0.1:${port}`;
    startRedis();
    try {
      for (let i = 0; i < 50 && spawnSync('redis-cli', ['-p', String(port), 'ping'], { encoding: 'utf8' }).stdout.trim() !== 'PONG'; i++) await sleep(100);
      const env = { QUEUE_REDIS_URL: url, QUEUE_PREFIX: 'hlqr', QUEUE_TEST_DATABASE_URL: dbUrl, QUEUE_CONCURRENCY: '3' };
      await startWorkerProcess(env);
      const runner = createBullRunner({ redisUrl: url, prefix: 'hlqr', attempts: 3, backoffMs: 100, pollMs: 250 });
      runners.push(runner);
      const run = runner.runFlow(rowTree('redis', 10, 300));
      while ((await rowsOf('redis')).length < 2) await sleep(50);
      stopRedis();
      await sleep(1_500);
      startRedis();
      const r: FlowResult = await within(run, 40_000, 'run after Redis restart');
      expect(r.failures).toEqual([]);
      expect(await rowsOf('redis')).toEqual(expectedRows('redis', 10));
    } finally {
      stopRedis();
    }
  }, 60_000);

  it('retries while PostgreSQL is unreachable, then fails every job with the reason', async () => {
    const prefix = `hlqf-${randomUUID().slice(0, 8)}`;
    prefixes.push(prefix);
    await startWorkerProcess({ QUEUE_REDIS_URL: testRedisUrl, QUEUE_PREFIX: prefix, QUEUE_TEST_DATABASE_URL: 'postgres://postgres@127.0.0.1:1/none', QUEUE_CONCURRENCY: '4' });
    const runner = createBullRunner({ redisUrl: testRedisUrl, prefix, attempts: 3, backoffMs: 100, pollMs: 250 });
    runners.push(runner);
    const r = await within(runner.runFlow(rowTree('nodb', 4, 0)), 40_000, 'run without PostgreSQL');
    // None lost: every job of the tree is reported failed (4 children + the parent, which still ran).
    expect(r.results.size).toBe(0);
    expect(r.failures.map((f) => f.id).sort()).toEqual(expectedRows('nodb', 4).map((x) => x[0]));
    for (const f of r.failures) expect(f.error).toMatch(/^ServiceError: database unreachable at 127\.0\.0\.1:1: .*ECONNREFUSED/);
    expect(await rowsOf('nodb')).toEqual([]);
  }, 60_000);
});
