/**
 * One owner per embedded store, watching while an ingest runs, and run states
 * on interruption — through the real `heatledger` command (dist/), on the
 * small seeded archive of the invented city.
 *
 * Checks and their sources:
 * - "no loss": every table after concurrent use equals, value for value, the
 *   table of an undisturbed serial run of the same archive (the tool's own
 *   serial result is the reference; its numbers are checked against rasterio +
 *   NumPy in pipeline.test.ts);
 * - exit status of a process stopped by signal N is 128 + N: SIGINT = 2 → 130,
 *   SIGTERM = 15 → 143 (POSIX.1-2017 Shell Command Language §2.8.2 says > 128;
 *   128 + N is the shells' common practice, signal numbers from signal(7) on Linux);
 *   the command exits with that code, or, when a worker thread is blocked in a read
 *   (the held scene below), ends by the signal itself, which a shell reports the same;
 * - a SIGKILLed process runs no handler at all (POSIX.1-2017 signal.h: SIGKILL
 *   cannot be caught), so its lock stays behind and must be detected as stale;
 * - distributed mode: with no `heatledger worker` running, no queued job can
 *   finish, so every scene file of the run is left (derived from the setup);
 * - exit 2 for a wrong --data-dir: the project's exit-code contract (bad input = 2),
 *   common practice, no source.
 *
 * Holding an ingest mid-run without timing: one scene's QA raster (named by a
 * manifest) is a named pipe (POSIX mkfifo) that no one writes, so opening it
 * blocks that scene's job until the process is stopped; the run is then
 * certainly in progress. For the finishing run the pipe is replaced by a real
 * QA raster (a copy of the scene itself, with no mask bits: nothing masked).
 */
import { spawn, execFileSync, type ChildProcess } from 'node:child_process';
import { chmod, copyFile, mkdir, mkdtemp, rm, symlink, writeFile } from 'node:fs/promises';
import { existsSync, readFileSync } from 'node:fs';
import net from 'node:net';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { ArchiveResult } from '../../demo-data/generate.js';
import { districtTable, roundTableRows } from '../../workers/store/district-table.js';
import type { Row } from '../../workers/format.js';
import { openStore } from '../../workers/store/store.js';
import pg from 'pg';
import {
  SMALL_ARCHIVE, waitFor, cleanEnv, cleanRedisPrefix, cliOk, cliPath, createTempDatabase, ensurePipelineBuild, killAllChildren, makeArchive, repoRoot, runCli,
  stopChild, uniquePrefix,
} from '../support/pipeline-harness.js';
import { serviceAvailable, testRedisUrl } from '../support/services.js';

await ensurePipelineBuild();
const serversUp = (await serviceAvailable('postgres', 'interrupted distributed ingest')) && (await serviceAvailable('redis', 'interrupted distributed ingest'));

const FILES = SMALL_ARCHIVE.years! * (2 * SMALL_ARCHIVE.pairsPerYear! + 1); // derived from the generator's options
const LONG = 120_000;

let tmp: string;
let archive: ArchiveResult;
let archiveDir: string;
let heldScene: string;
let qaPath: string;
let manifestPath: string;
let reference: Tables;
const env = cleanEnv();
const started = new Set<ChildProcess>();

interface Tables { date: Row[]; year: Row[]; scenes: number }

async function tablesOf(dataDir: string): Promise<Tables> {
  const store = await openStore({ dataDir, readOnly: true, command: 'test' });
  try {
    return {
      date: await districtTable(store, 'date'),
      year: await districtTable(store, 'year'),
      scenes: (await store.query<{ n: number }>('SELECT count(*)::int AS n FROM scenes'))[0].n,
    };
  } finally {
    await store.close();
  }
}

// The held scene's QA raster is a copy of an LST scene (UInt16 DNs): bit 16 is never set, so it masks no pixel.
const QA_MASK_NONE = '0x10000';

function ingestArgs(dataDir: string): string[] {
  return ['ingest', archiveDir, '--districts', archive.districtsPath, '--manifest', manifestPath, '--qa-mask', QA_MASK_NONE, '--threads', '1', '--no-progress', '--data-dir', dataDir];
}

interface Child { child: ChildProcess; stdout(): string; stderr(): string; exited: Promise<{ code: number | null; signal: NodeJS.Signals | null }> }

/** The CLI as `node dist/workers/cli.js ...`, or as the executable `program` (a bin link) when given. */
function startCli(args: string[], childEnv: NodeJS.ProcessEnv = env, program?: string): Child {
  const child = program
    ? spawn(program, args, { cwd: repoRoot, env: childEnv, stdio: ['ignore', 'pipe', 'pipe'] })
    : spawn(process.execPath, [cliPath, ...args], { cwd: repoRoot, env: childEnv, stdio: ['ignore', 'pipe', 'pipe'] });
  started.add(child);
  let out = '';
  let err = '';
  child.stdout!.on('data', (d) => { out += d; });
  child.stderr!.on('data', (d) => { err += d; });
  const exited = new Promise<{ code: number | null; signal: NodeJS.Signals | null }>((resolve) =>
    child.once('exit', (code, signal) => { started.delete(child); setImmediate(() => resolve({ code, signal })); }),
  );
  return { child, stdout: () => out, stderr: () => err, exited };
}

async function lastRun(dataDir: string): Promise<{ id: number; status: string } | null> {
  const out = await cliOk(['status', '--format', 'json', '--data-dir', dataDir], env, LONG);
  const run = (JSON.parse(out) as { last_run: { id: number; status: string } | null }).last_run;
  return run && { id: run.id, status: run.status };
}

/**
 * The status a shell reports for a stopped child: its exit code, or 128 + N when
 * signal N ended it. The command exits 130/143 itself, or, when the held job's
 * thread is already blocked opening the pipe (Node's exit would wait for it),
 * ends by the signal after recording the run; which of the two depends on how
 * far the run got when the signal came.
 */
function shellStatus(stop: { code: number | null; signal: NodeJS.Signals | null }): number | null {
  if (stop.code !== null) return stop.code;
  return stop.signal ? 128 + os.constants.signals[stop.signal] : null;
}

/** Start an ingest whose held scene blocks on the named pipe; resolves once its run is stored as 'running'. */
async function startHeldIngest(dataDir: string): Promise<{ ingest: Child; runId: number }> {
  await rm(qaPath, { force: true });
  execFileSync('mkfifo', [qaPath]);
  const ingest = startCli(ingestArgs(dataDir));
  const run = await waitFor(async () => {
    if (ingest.child.exitCode !== null) throw new Error(`the ingest exited early (${ingest.child.exitCode}): ${ingest.stderr()}`);
    if (!existsSync(path.join(dataDir, 'PG_VERSION'))) return undefined;
    const r = await lastRun(dataDir);
    return r?.status === 'running' ? r : undefined;
  }, 'the held ingest to start its run');
  return { ingest, runId: run.id };
}

/** Replace the named pipe by a real QA raster so the held scene can be read. */
async function releaseHold(): Promise<void> {
  await rm(qaPath, { force: true });
  await copyFile(heldScene, qaPath);
}

beforeAll(async () => {
  tmp = await mkdtemp(path.join(os.tmpdir(), 'hl-lock-'));
  archiveDir = path.join(tmp, 'archive');
  archive = await makeArchive(archiveDir);
  heldScene = archive.files.find((f) => f.includes('_lst_day'))!;
  qaPath = path.join(tmp, 'held-qa.tif');
  manifestPath = path.join(tmp, 'manifest.csv');
  await writeFile(manifestPath, `path,qa\n${heldScene},${qaPath}\n`);
  await releaseHold();
  const refDir = path.join(tmp, 'reference');
  await cliOk(ingestArgs(refDir), env, 300_000);
  reference = await tablesOf(refDir);
  expect(reference.scenes).toBe(FILES);
  expect(reference.date.length).toBeGreaterThan(0);
}, 400_000);

afterAll(async () => {
  await Promise.all([...started].map((c) => stopChild(c, 'SIGKILL', 5_000)));
  await killAllChildren();
  if (tmp) await rm(tmp, { recursive: true, force: true });
});

describe('read commands on a data directory without a store', () => {
  it.each([['table'], ['status'], ['serve']])('%s exits 2 naming the directory and creates nothing', async (command) => {
    const missing = path.join(tmp, 'mistyped-data-dir');
    const r = await runCli([command, '--data-dir', missing, ...(command === 'serve' ? ['--port', '1'] : [])], env, LONG);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain(`no heatledger store at ${missing}; run \`heatledger ingest\` first or check --data-dir`);
    expect(existsSync(missing)).toBe(false);
  }, LONG);

  it('an existing folder without a store is refused the same way and stays empty', async () => {
    const empty = await mkdtemp(path.join(tmp, 'empty-'));
    const r = await runCli(['table', '--data-dir', empty], env, LONG);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain(`no heatledger store at ${empty}`);
    expect(readdirNames(empty)).toEqual([]);
  }, LONG);
});

function readdirNames(dir: string): string[] {
  return execFileSync('ls', ['-A', dir], { encoding: 'utf8' }).split('\n').filter(Boolean);
}

describe('one owner per embedded store', () => {
  it('refuses a second writer naming the owner; a SIGKILLed owner leaves a stale lock that is taken over, its run marked abandoned', async () => {
    const dataDir = path.join(tmp, 'data-kill');
    const { ingest, runId } = await startHeldIngest(dataDir);

    const second = await runCli(ingestArgs(dataDir), env, LONG);
    expect(second.code).toBe(1);
    expect(second.stderr).toContain(`in use by pid ${ingest.child.pid} (\`heatledger ingest\``);
    expect(second.stderr.trim().split('\n')).toHaveLength(1);

    // SIGKILL cannot be caught (POSIX): the lock file stays, naming the dead process
    const killed = await stopChild(ingest.child, 'SIGKILL');
    expect(killed.signal).toBe('SIGKILL');
    const lock = JSON.parse(readFileSync(path.join(dataDir, 'heatledger.lock'), 'utf8')) as { pid: number; command: string };
    expect(lock).toMatchObject({ pid: ingest.child.pid, command: 'ingest' });

    // the next command takes the stale lock over and marks the run abandoned
    const run = await lastRun(dataDir);
    expect(run).toEqual({ id: runId, status: 'abandoned' });
    expect(existsSync(path.join(dataDir, 'heatledger.lock'))).toBe(false);

    // and the store survived the kill: the same ingest again gives the undisturbed table
    await releaseHold();
    await cliOk(ingestArgs(dataDir), env, 300_000);
    const after = await tablesOf(dataDir);
    expect(after).toEqual(reference);
  }, 600_000);

  it('a server watching while an ingest writes: answers throughout, shows the ingest\'s rows, and nothing is lost', async () => {
    const dataDir = path.join(tmp, 'data-serve');
    await releaseHold();
    // a store with the first summer only (the files of 2019: generator default firstYear)
    const firstSummer = archive.files.filter((f) => path.basename(f).includes('_2019'));
    await cliOk(['ingest', ...firstSummer, '--districts', archive.districtsPath, '--manifest', manifestPath, '--qa-mask', QA_MASK_NONE, '--threads', '1', '--no-progress', '--data-dir', dataDir], env, 300_000);
    const before = await tablesOf(dataDir);
    expect(before.scenes).toBe(firstSummer.length);

    const port = await freePort();
    const serve = startCli(['serve', '--port', String(port), '--data-dir', dataDir]);
    await waitFor(() => (serve.stderr().includes('heatledger API on') ? true : serve.child.exitCode !== null ? Promise.reject(new Error(serve.stderr())) : undefined), 'the server to listen');
    const table = async (): Promise<{ status: number; rows: Row[] }> => {
      const res = await fetch(`http://127.0.0.1:${port}/api/table`);
      return { status: res.status, rows: res.status === 200 ? ((await res.json()) as { rows: Row[] }).rows : [] };
    };
    expect((await table()).rows).toEqual(JSON.parse(JSON.stringify(roundTableRows(before.date))));

    // the ingest is started while the server owns the store: the server hands it over and reads through the ingest
    const ingest = startCli(ingestArgs(dataDir));
    const statuses: number[] = [];
    do {
      statuses.push((await table()).status);
      await new Promise((r) => setTimeout(r, 200));
    } while (ingest.child.exitCode === null && ingest.child.signalCode === null);
    const end = await ingest.exited;
    expect(end.code, ingest.stderr()).toBe(0);
    expect(statuses.filter((s) => s !== 200)).toEqual([]);

    // after the ingest, the server shows its rows: equal to the undisturbed serial run
    const expected = JSON.parse(JSON.stringify(roundTableRows(reference.date))) as Row[];
    await waitFor(async () => {
      const t = await table();
      expect(t.status).toBe(200);
      return t.rows.length === expected.length ? t.rows : undefined;
    }, 'the server to show the ingest\'s rows');
    expect((await table()).rows).toEqual(expected);

    const stopped = await stopChild(serve.child, 'SIGTERM', LONG);
    expect(stopped.code).toBe(0); // stopping a server is its normal end
    expect(await tablesOf(dataDir)).toEqual(reference);
  }, 900_000);
});

describe('started through the bin link npm makes', () => {
  it('a server started as `heatledger serve` is named serve in the lock and hands the store over to an ingest started the same way', async () => {
    const dataDir = path.join(tmp, 'data-bin');
    await releaseHold();
    const firstSummer = archive.files.filter((f) => path.basename(f).includes('_2019'));
    await cliOk(['ingest', ...firstSummer, '--districts', archive.districtsPath, '--manifest', manifestPath, '--qa-mask', QA_MASK_NONE, '--threads', '1', '--no-progress', '--data-dir', dataDir], env, 300_000);

    // as npm installs a package with a bin: node_modules/<name> is the package, node_modules/.bin/<bin> a relative link to its script, made executable
    const app = path.join(tmp, 'app');
    await mkdir(path.join(app, 'node_modules', '.bin'), { recursive: true });
    await symlink(repoRoot, path.join(app, 'node_modules', 'heatledger'));
    const bin = path.join(app, 'node_modules', '.bin', 'heatledger');
    await symlink('../heatledger/dist/workers/cli.js', bin);
    await chmod(cliPath, 0o755);
    const binEnv = { ...env, PATH: `${path.dirname(process.execPath)}${path.delimiter}${env.PATH ?? ''}` };
    const startBin = (args: string[]) => startCli(args, binEnv, bin);

    const port = await freePort();
    const serve = startBin(['serve', '--port', String(port), '--data-dir', dataDir]);
    await waitFor(() => (serve.stderr().includes('heatledger API on') ? true : serve.child.exitCode !== null ? Promise.reject(new Error(serve.stderr())) : undefined), 'the server to listen');
    const lock = JSON.parse(readFileSync(path.join(dataDir, 'heatledger.lock'), 'utf8')) as { pid: number; command: string };
    expect(lock).toMatchObject({ pid: serve.child.pid, command: 'serve' });

    const ingest = startBin(ingestArgs(dataDir));
    const end = await ingest.exited;
    expect(end.code, ingest.stderr()).toBe(0);
    const expected = JSON.parse(JSON.stringify(roundTableRows(reference.date))) as Row[];
    const rows = await waitFor(async () => {
      const res = await fetch(`http://127.0.0.1:${port}/api/table`);
      expect(res.status).toBe(200);
      const r = ((await res.json()) as { rows: Row[] }).rows;
      return r.length === expected.length ? r : undefined;
    }, 'the server to show the ingest\'s rows');
    expect(rows).toEqual(expected);
    expect((await stopChild(serve.child, 'SIGTERM', LONG)).code).toBe(0);
    expect(await tablesOf(dataDir)).toEqual(reference);
  }, 900_000);
});

describe('interrupted ingest', () => {
  it('SIGINT: exit status 130, one line, run marked interrupted with the scenes left; the next ingest completes the undisturbed table', async () => {
    const dataDir = path.join(tmp, 'data-sigint');
    const { ingest, runId } = await startHeldIngest(dataDir);
    const stop = await stopChild(ingest.child, 'SIGINT', LONG);
    expect(stop.forced).toBe(false); // no hang, also when the held job's thread is blocked opening the pipe
    expect(shellStatus(stop)).toBe(130); // 128 + SIGINT (2)
    await ingest.exited;
    const lines = ingest.stderr().trim().split('\n');
    expect(lines).toHaveLength(1);
    const m = /^heatledger: interrupted; run (\d+) marked interrupted, (\d+) scene\(s\) left — run the same ingest again to finish them$/.exec(lines[0]);
    expect(m, lines[0]).not.toBeNull();
    expect(Number(m![1])).toBe(runId);
    const left = Number(m![2]);
    expect(left).toBeGreaterThanOrEqual(1); // the held scene at least
    expect(left).toBeLessThanOrEqual(FILES);
    expect(existsSync(path.join(dataDir, 'heatledger.lock'))).toBe(false);
    expect(existsSync(path.join(dataDir, 'heatledger.sock'))).toBe(false);

    const store = await openStore({ dataDir, readOnly: true, command: 'test' });
    try {
      const runs = await store.query<Record<string, unknown>>('SELECT id, status, owner_host, owner_pid, scenes_asked, scenes_left, finished_at IS NOT NULL AS finished FROM runs');
      expect(runs).toEqual([{ id: runId, status: 'interrupted', owner_host: os.hostname(), owner_pid: ingest.child.pid, scenes_asked: FILES, scenes_left: left, finished: true }]);
      const processed = (await store.query<{ n: number }>(`SELECT count(*)::int AS n FROM scenes WHERE status = 'processed'`))[0].n;
      expect(left).toBe(FILES - processed);
    } finally {
      await store.close();
    }

    await releaseHold();
    await cliOk(ingestArgs(dataDir), env, 300_000);
    expect(await tablesOf(dataDir)).toEqual(reference);
  }, 600_000);

  it('SIGTERM: exit status 143 and the run marked interrupted', async () => {
    const dataDir = path.join(tmp, 'data-sigterm');
    const { ingest, runId } = await startHeldIngest(dataDir);
    const stop = await stopChild(ingest.child, 'SIGTERM', LONG);
    expect(stop.forced).toBe(false);
    expect(shellStatus(stop)).toBe(143); // 128 + SIGTERM (15)
    await ingest.exited;
    expect(ingest.stderr()).toContain(`run ${runId} marked interrupted`);
    expect(await lastRun(dataDir)).toEqual({ id: runId, status: 'interrupted' });
    await releaseHold();
  }, 600_000);
});

describe.runIf(serversUp)('interrupted distributed ingest', () => {
  it('SIGINT to the ingest command: exit 130, one line, the run marked interrupted with every scene left (no worker ran)', async () => {
    const db = await createTempDatabase('lock');
    const prefix = uniquePrefix('lock');
    const client = new pg.Client({ connectionString: db.url });
    try {
      // no `heatledger worker` runs, so the ingest waits on its queued jobs: certainly mid-run
      const ingest = startCli(
        ['ingest', archiveDir, '--districts', archive.districtsPath, '--no-progress'],
        cleanEnv({ DATABASE_URL: db.url, REDIS_URL: testRedisUrl, HEATLEDGER_QUEUE_PREFIX: prefix }),
      );
      await client.connect();
      const runId = await waitFor(async () => {
        if (ingest.child.exitCode !== null) throw new Error(`the ingest exited early (${ingest.child.exitCode}): ${ingest.stderr()}`);
        const r = await client.query<{ id: number }>(`SELECT id FROM runs WHERE status = 'running'`).catch(() => ({ rows: [] as { id: number }[] }));
        return r.rows[0]?.id;
      }, 'the distributed run to start');
      const stop = await stopChild(ingest.child, 'SIGINT', LONG);
      expect(stop.code).toBe(130); // 128 + SIGINT (2)
      await ingest.exited;
      // With no worker, the ingest may first say so (when the signal comes after its notice delay, which
      // depends on the machine's load); the interrupt itself is exactly one line, and the last one.
      const lines = ingest.stderr().trim().split('\n');
      expect(lines.slice(0, -1).filter((l) => !l.startsWith('heatledger: no heatledger worker is serving the queues yet'))).toEqual([]);
      expect(lines.at(-1)).toBe(`heatledger: interrupted; run ${runId} marked interrupted, ${FILES} scene(s) left — run the same ingest again to finish them`);
      const runs = await client.query('SELECT id, status, owner_host, owner_pid, scenes_asked, scenes_left FROM runs');
      expect(runs.rows).toEqual([{ id: runId, status: 'interrupted', owner_host: os.hostname(), owner_pid: ingest.child.pid, scenes_asked: FILES, scenes_left: FILES }]);
    } finally {
      await client.end().catch(() => undefined);
      await db.drop();
      await cleanRedisPrefix(testRedisUrl, prefix);
    }
  }, 600_000);
});

function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const s = net.createServer();
    s.once('error', reject);
    s.listen(0, '127.0.0.1', () => {
      const port = (s.address() as net.AddressInfo).port;
      s.close(() => resolve(port));
    });
  });
}
