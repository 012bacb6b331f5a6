/**
 * The distributed pipeline through service outages, with real `heatledger
 * ingest` and `heatledger worker` processes. Servers that are stopped or
 * restarted are PRIVATE (test/support/private-postgres.ts: a cluster of our
 * own on a port of 54040-54059); the shared servers are only used with a
 * throw-away database or Redis key prefix, and never stopped.
 *
 * - PostgreSQL down 30 s mid-run: the run completes after the server returns,
 *   or ends `incomplete` with a non-zero exit; then the next ingest makes the
 *   table identical to an undisturbed (embedded) run of the same archive;
 * - PostgreSQL restarted while the derive step waits in a transaction, one
 *   worker: the run completes and the worker process is still alive;
 * - the workers' PostgreSQL gone for longer than the service retry budget:
 *   exit 1, the message names the service and how to resume, the run is
 *   `incomplete` with every scene left, `status` says so; the next ingest
 *   (with a worker that reaches the server) finishes the run;
 * - Redis unreachable at start: a service error naming Redis within the
 *   budget, not a hang;
 * - no worker running: ingest reports the stall and exits 1;
 * - a worker started with another stalled-check interval than a running one
 *   refuses to start (exit 2).
 *
 * The contract checked (exit 0 only when everything asked was done, exit 1
 * for a service failure, a one-line message without a stack) is the CLI's
 * (workers/cli.ts), common practice for command-line tools, no source. Row
 * counts are derived from the generator's options (files per summer =
 * 2 x pairs + 1; targets = 17 districts + rural). Nothing here asserts a
 * duration: the tests wait for conditions with generous timeouts.
 */
import { mkdtemp, rm } from 'node:fs/promises';
import os from 'node:os';
import path from 'node:path';
import pg from 'pg';
import { afterAll, beforeAll, describe, it } from 'vitest';
import { DISTRICTS } from '../../demo-data/city.js';
import type { ArchiveOptions, ArchiveResult } from '../../demo-data/generate.js';
import { missingTool, serviceAvailable, testDatabaseUrl, testRedisUrl } from '../support/services.js';
import {
  cleanEnv, cleanRedisPrefix, cliOk, createTempDatabase, ensurePipelineBuild, killAllChildren,
  makeArchive, runCli, serverCounts, startCliWorker, startTcpProxy, stopChild, uniquePrefix, waitFor, type TempDatabase,
} from '../support/pipeline-harness.js';
import { freeFaultPort, postgresBinDir, startPrivatePostgres, type PrivatePostgres } from '../support/private-postgres.js';

await ensurePipelineBuild();
const up = (await serviceAvailable('redis', 'outage faults')) && (await serviceAvailable('postgres', 'outage faults'));
const canRunPrivate = postgresBinDir() !== null || (up && missingTool('outage faults with a private PostgreSQL', 'initdb and pg_ctl (Debian package postgresql)'));

const TARGETS = DISTRICTS.length + 1;
const filesOf = (o: ArchiveOptions) => o.years! * (2 * o.pairsPerYear! + 1);
const datesOf = (o: ArchiveOptions) => o.years! * o.pairsPerYear!;
const TINY: ArchiveOptions = { years: 1, pairsPerYear: 1, pixelSizeMetres: 250 };
/** Two day/night pairs: 5 files, enough for a scene stored before the outage and others after. */
const HALF: ArchiveOptions = { years: 1, pairsPerYear: 2, pixelSizeMetres: 250 };
const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));
/** A Node stack frame line, as printed by Error.stack. */
const STACK_LINE = /^\s+at .+[(:]\d+/m;

/** A check that counts an error (the server away or restarting) as "not yet". */
const tolerant = <T>(check: () => Promise<T | undefined>) => () => check().catch(() => undefined);

async function withClient<T>(url: string, fn: (c: pg.Client) => Promise<T>): Promise<T> {
  const c = new pg.Client({ connectionString: url });
  c.on('error', () => undefined);
  await c.connect();
  try { return await fn(c); } finally { await c.end().catch(() => undefined); }
}

async function lastRun(url: string): Promise<{ id: number; status: string; scenes_left: number | null; error: string | null; error_kind: string | null }> {
  return withClient(url, async (c) => (await c.query('SELECT id, status, scenes_left, error, error_kind FROM runs ORDER BY id DESC LIMIT 1')).rows[0]);
}

describe.skipIf(!up)('distributed pipeline through service outages', { concurrent: true }, () => {
  let tmp: string;
  let archive: ArchiveResult;
  let tiny: ArchiveResult;
  const dbs: TempDatabase[] = [];
  const prefixes: string[] = [];
  const servers: PrivatePostgres[] = [];

  beforeAll(async () => {
    tmp = await mkdtemp(path.join(os.tmpdir(), 'hl-outage-'));
    archive = await makeArchive(path.join(tmp, 'archive'), HALF);
    tiny = await makeArchive(path.join(tmp, 'tiny'), TINY);
  });

  afterAll(async () => {
    await killAllChildren();
    for (const s of servers) await s.destroy();
    for (const db of dbs) await db.drop();
    for (const p of prefixes) await cleanRedisPrefix(testRedisUrl, p);
    if (tmp) await rm(tmp, { recursive: true, force: true });
  });

  const ingestArgs = (a: ArchiveResult, ...extra: string[]) => ['ingest', path.dirname(a.districtsPath), '--districts', a.districtsPath, '--json', ...extra];

  it.skipIf(!canRunPrivate)('PostgreSQL down 30 s mid-run: the run completes or ends incomplete, and the next ingest gives the undisturbed table', async ({ expect }) => {
    const files = filesOf(HALF);
    const server = await startPrivatePostgres('down30');
    servers.push(server);
    await withClient(server.url(), (c) => c.query('CREATE DATABASE heat'));
    const prefix = uniquePrefix('down30');
    prefixes.push(prefix);
    const env = cleanEnv({ REDIS_URL: testRedisUrl, DATABASE_URL: server.url('heat'), HEATLEDGER_QUEUE_PREFIX: prefix });

    // The undisturbed run of the same archive (embedded, PGlite), computed meanwhile.
    const embeddedDir = path.join(tmp, 'embedded-down30');
    const baseline = (async () => {
      await cliOk([...ingestArgs(archive, '--threads', '1'), '--data-dir', embeddedDir], cleanEnv(), 240_000);
      return cliOk(['table', '--format', 'json', '--data-dir', embeddedDir], cleanEnv());
    })();

    // Mid-run, for certain: the store created (`status` migrates it), its statistics table held
    // before the run starts; wait until a worker's scene job is blocked storing on it (nothing
    // stored yet), then crash the server.
    await cliOk(['status'], env);
    const lock = new pg.Client({ connectionString: server.url('heat') });
    lock.on('error', () => undefined);
    await lock.connect();
    await lock.query('BEGIN');
    await lock.query('LOCK TABLE zonal_stats IN SHARE MODE');
    const worker = await startCliWorker(env, 60_000);
    const ingest = runCli(ingestArgs(archive), env, 400_000);
    // (Asked on a connection of its own: pg_stat_activity is a snapshot per transaction.)
    await waitFor(tolerant(() => withClient(server.url('heat'), async (c) => {
      const n = Number((await c.query(`SELECT count(*) AS n FROM pg_locks WHERE relation = 'zonal_stats'::regclass AND NOT granted`)).rows[0].n);
      return n > 0 ? n : undefined;
    })), 'a scene job waiting to store', 300_000, 200);
    const storedAtStop = Number((await lock.query('SELECT count(DISTINCT scene_id) AS n FROM zonal_stats')).rows[0].n);
    await server.stop('immediate');
    await lock.end().catch(() => undefined);
    expect(storedAtStop).toBeLessThan(files);
    await sleep(30_000); // the outage (the fault being injected, not a measurement)
    await server.start();

    const r = await ingest;
    expect(r.timedOut, r.stderr).toBe(false);
    expect(r.stderr).not.toMatch(STACK_LINE);
    const run = await lastRun(server.url('heat'));
    if (r.code === 0) {
      expect(run.status).toBe('succeeded');
      expect(JSON.parse(r.stdout).outcome.status).toBe('succeeded');
    } else {
      expect(r.code).toBe(1);
      expect(run.status).toBe('incomplete');
      expect(run.scenes_left).toBeGreaterThan(0);
    }
    console.log(`PostgreSQL down 30 s after ${storedAtStop}/${files} scenes: first ingest exit ${r.code}, run ${run.status}`);

    // The next ingest finishes what is left (or re-runs nothing) and the table equals the undisturbed one.
    const again = await runCli(ingestArgs(archive), env, 240_000);
    expect(again.code, again.stderr).toBe(0);
    expect(JSON.parse(again.stdout).outcome).toEqual({ status: 'succeeded', scenes_left: 0, refused: 0, derived: true, error: null, error_kind: null });
    expect(await serverCounts(server.url('heat'))).toEqual({ scenes: files, zonal: files * TARGETS, derived: datesOf(HALF) * TARGETS, zonalDuplicates: 0 });
    expect(await cliOk(['table', '--format', 'json'], env)).toBe(await baseline);
    expect(worker.child.exitCode).toBe(null);
    expect((await stopChild(worker.child, 'SIGTERM')).code).toBe(0);
  }, 600_000);

  it.skipIf(!canRunPrivate)('PostgreSQL restarted while the derive step is in its transaction: the run completes, the one worker survives', async ({ expect }) => {
    const opts = TINY;
    const small = tiny;
    const server = await startPrivatePostgres('derive');
    servers.push(server);
    await withClient(server.url(), (c) => c.query('CREATE DATABASE heat'));
    const prefix = uniquePrefix('derive');
    prefixes.push(prefix);
    const env = cleanEnv({ REDIS_URL: testRedisUrl, DATABASE_URL: server.url('heat'), HEATLEDGER_QUEUE_PREFIX: prefix });
    const worker = await startCliWorker(env, 60_000);
    const ingest = runCli(ingestArgs(small), env, 400_000);

    // Hold derived_metrics (SHARE blocks the derive step's DELETE) as soon as the tables exist.
    const lock = new pg.Client({ connectionString: server.url('heat') });
    lock.on('error', () => undefined);
    await lock.connect();
    await waitFor(tolerant(async () => ((await lock.query(`SELECT to_regclass('derived_metrics') AS t`)).rows[0].t ? true : undefined)), 'the tables migrated', 200_000, 50);
    await lock.query('BEGIN');
    await lock.query('LOCK TABLE derived_metrics IN SHARE MODE');
    // The derive step is waiting inside its transaction (a checked-out client) when the server restarts.
    // (Asked on a connection of its own: pg_stat_activity is a snapshot per transaction.)
    await waitFor(tolerant(() => withClient(server.url('heat'), async (c) => {
      const n = Number((await c.query(
        `SELECT count(*) AS n FROM pg_stat_activity WHERE wait_event_type = 'Lock' AND query ILIKE 'DELETE FROM derived_metrics%'`,
      )).rows[0].n);
      return n > 0 ? n : undefined;
    })), 'the derive step waiting on its transaction', 300_000, 200);
    await server.restart();
    await lock.end().catch(() => undefined);

    const r = await ingest;
    expect(r.timedOut, r.stderr).toBe(false);
    expect(r.code, r.stderr).toBe(0);
    expect(JSON.parse(r.stdout).outcome.status).toBe('succeeded');
    expect(await serverCounts(server.url('heat'))).toEqual({ scenes: filesOf(opts), zonal: filesOf(opts) * TARGETS, derived: datesOf(opts) * TARGETS, zonalDuplicates: 0 });
    // Still alive, no unhandled 'error' event, and it stops cleanly.
    expect(worker.child.exitCode).toBe(null);
    expect(worker.child.signalCode).toBe(null);
    expect(worker.stderr()).not.toMatch(/Unhandled|uncaught/i);
    expect((await stopChild(worker.child, 'SIGTERM')).code).toBe(0);
  }, 600_000);

  it('PostgreSQL unreachable for the workers past the budget: exit 1 naming the service and how to resume, run incomplete; the next ingest finishes it', async ({ expect }) => {
    const files = filesOf(TINY);
    const db = await createTempDatabase('budget');
    dbs.push(db);
    const prefix = uniquePrefix('budget');
    prefixes.push(prefix);
    // The workers reach PostgreSQL through a forwarder that is then closed; the ingest command reaches it directly.
    const server = new URL(testDatabaseUrl);
    const proxy = await startTcpProxy(server.hostname, Number(server.port || 5432));
    const viaProxy = new URL(db.url);
    viaProxy.port = String(proxy.port);
    const cutOff = await startCliWorker(cleanEnv({ REDIS_URL: testRedisUrl, DATABASE_URL: viaProxy.href, HEATLEDGER_QUEUE_PREFIX: prefix }), 60_000);
    await proxy.close();

    const env = cleanEnv({ REDIS_URL: testRedisUrl, DATABASE_URL: db.url, HEATLEDGER_QUEUE_PREFIX: prefix });
    const r = await runCli(ingestArgs(tiny, '--service-retry-budget', '3'), env, 300_000);
    expect(r.timedOut).toBe(false);
    expect(r.code).toBe(1);
    expect(r.stderr).not.toMatch(STACK_LINE);
    const line = r.stderr.split('\n').find((l) => l.startsWith('heatledger: service error: ')) ?? '';
    expect(line).toMatch(new RegExp(`^heatledger: service error: run \\d+ is incomplete \\(${files} of ${files} scene\\(s\\) not finished, district table not derived\\): PostgreSQL failed for \\d+ s \\(longer than the service retry budget\\): cannot reach PostgreSQL at 127\\.0\\.0\\.1:${proxy.port}: ECONNREFUSED\\. Nothing stored is lost; run the same command again to finish the run$`));
    const run = await lastRun(db.url);
    expect(run).toMatchObject({ status: 'incomplete', scenes_left: files });
    expect(run.error).toMatch(new RegExp(`^cannot reach PostgreSQL at 127\\.0\\.0\\.1:${proxy.port}`)); // the message alone, its kind apart
    expect(run.error_kind).toBe('service');
    const status = await cliOk(['status'], env);
    expect(status).toContain(`last run: ${run.id} incomplete`);
    expect(status).toContain(`${files} scene(s) left: `);

    // The server is reachable again for the workers: the same command finishes the run.
    await stopChild(cutOff.child, 'SIGTERM');
    const worker = await startCliWorker(env, 60_000);
    const again = await runCli(ingestArgs(tiny, '--service-retry-budget', '3'), env, 240_000);
    expect(again.code, again.stderr).toBe(0);
    expect(await serverCounts(db.url)).toEqual({ scenes: files, zonal: files * TARGETS, derived: datesOf(TINY) * TARGETS, zonalDuplicates: 0 });
    expect((await lastRun(db.url)).status).toBe('succeeded');
    expect((await stopChild(worker.child, 'SIGTERM')).code).toBe(0);
  }, 600_000);

  it('Redis unreachable at start: a service error naming Redis within the budget, not a hang', async ({ expect }) => {
    const db = await createTempDatabase('noredis');
    dbs.push(db);
    const port = await freeFaultPort(); // nothing listens there
    const env = cleanEnv({ REDIS_URL: `redis://127.0.0.1:${port}`, DATABASE_URL: db.url });
    const r = await runCli(ingestArgs(tiny, '--service-retry-budget', '2'), env, 240_000);
    expect(r.timedOut).toBe(false);
    expect(r.code).toBe(1);
    expect(r.stderr).not.toMatch(STACK_LINE);
    const line = r.stderr.split('\n').find((l) => l.startsWith('heatledger: service error: ')) ?? '';
    expect(line).toMatch(new RegExp(`^heatledger: service error: run \\d+ is incomplete \\(${filesOf(TINY)} of ${filesOf(TINY)} scene\\(s\\) not finished, district table not derived\\): Redis failed: cannot reach Redis at 127\\.0\\.0\\.1:${port}.*; unreachable for \\d+ s, longer than the service retry budget of 2 s\\. Nothing stored is lost; run the same command again to finish the run$`));
    expect(await lastRun(db.url)).toMatchObject({ status: 'incomplete', scenes_left: filesOf(TINY) });
  }, 300_000);

  it('workers agree on the stalled-check interval: one started with another value than a running one refuses to start', async ({ expect }) => {
    const db = await createTempDatabase('interval');
    dbs.push(db);
    const prefix = uniquePrefix('interval');
    prefixes.push(prefix);
    const env = cleanEnv({ REDIS_URL: testRedisUrl, DATABASE_URL: db.url, HEATLEDGER_QUEUE_PREFIX: prefix, HEATLEDGER_STALLED_INTERVAL: '4' });
    const first = await startCliWorker(env, 60_000);
    expect(first.stderr()).toContain('stalled check every 4 s');
    // The stalled check runs Redis-wide, whichever worker runs it (common practice, no source: one setting for all).
    const other = await runCli(['worker', '--stalled-interval', '6'], env, 120_000);
    expect(other.timedOut).toBe(false);
    expect(other.code).toBe(2);
    expect(other.stderr).toBe('heatledger: --stalled-interval is 6 s but the heatledger workers already serving this Redis use 4 s; give every worker the same value (option or HEATLEDGER_STALLED_INTERVAL)\n');
    // The same value is welcome.
    const same = await startCliWorker(env, 60_000);
    expect((await stopChild(same.child, 'SIGTERM')).code).toBe(0);
    expect((await stopChild(first.child, 'SIGTERM')).code).toBe(0);
  }, 300_000);

  it('no worker running: ingest reports the stall (queue, jobs waiting, the worker question) and exits 1', async ({ expect }) => {
    const db = await createTempDatabase('stall');
    dbs.push(db);
    const prefix = uniquePrefix('stall');
    prefixes.push(prefix);
    const env = cleanEnv({ REDIS_URL: testRedisUrl, DATABASE_URL: db.url, HEATLEDGER_QUEUE_PREFIX: prefix });
    const r = await runCli(ingestArgs(tiny, '--stall-timeout', '3'), env, 240_000);
    expect(r.timedOut).toBe(false);
    expect(r.code).toBe(1);
    expect(r.stderr).not.toMatch(STACK_LINE);
    const files = filesOf(TINY);
    const line = r.stderr.split('\n').find((l) => l.startsWith('heatledger: service error: ')) ?? '';
    // Only the ingest jobs (the leaves of the tree) are waiting in a queue; zonal and derive wait for their children.
    expect(line).toMatch(new RegExp(`^heatledger: service error: run \\d+ is incomplete \\(${files} of ${files} scene\\(s\\) not finished, district table not derived\\): stalled: no heatledger worker made progress on this run for \\d+ s \\(${files} job\\(s\\) waiting in queue heatledger-scene\\); is a \`heatledger worker\` running \\(same REDIS_URL and HEATLEDGER_QUEUE_PREFIX\\)\\? Nothing stored is lost; start \`heatledger worker\` and run the same command again$`));
    expect(await lastRun(db.url)).toMatchObject({ status: 'incomplete', scenes_left: files });
  }, 300_000);
});
