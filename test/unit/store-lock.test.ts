/**
 * The store lock and the owner's read socket, in this process.
 *
 * Checks and their sources:
 * - a pid whose process has exited and been reaped is not alive: kill(pid, 0)
 *   fails with ESRCH (POSIX.1-2017 kill(); Linux kill(2));
 * - a read-only transaction refuses data changes, including a DELETE inside a
 *   WITH clause (PostgreSQL documentation, SET TRANSACTION: "the following SQL
 *   commands are disallowed: INSERT, UPDATE, DELETE, MERGE, and COPY FROM ...");
 * - a setting changed by set_config() in a transaction that is rolled back is
 *   undone (PostgreSQL documentation, SET: "If SET is issued within a
 *   transaction that is later aborted, the effects of the SET command disappear");
 * - one statement per query in the extended protocol (PostgreSQL documentation,
 *   Frontend/Backend Protocol, Extended Query: a Parse message holds one statement);
 * - float8 special values 'NaN', 'Infinity', '-Infinity' (PostgreSQL
 *   documentation, Floating-Point Types) must arrive as NaN / ±Infinity.
 */
import { spawn } from 'node:child_process';
import { mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { existsSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import {
  lockPath, ownerAlive, ownerRecord, pidAlive, readLock, releaseLock, removeStaleLock, tryCreateLock, type LockOwner,
} from '../../workers/store/lock.js';
import { RemoteConnection } from '../../workers/store/remote.js';
import { openStore, type Store } from '../../workers/store/store.js';

let tmp: string;

beforeAll(async () => {
  tmp = await mkdtemp(path.join(os.tmpdir(), 'hl-lock-unit-'));
});
afterAll(async () => {
  if (tmp) await rm(tmp, { recursive: true, force: true });
});

/** The pid of a process that has exited (and was reaped by Node). */
function deadPid(): Promise<number> {
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, ['-e', '0'], { stdio: 'ignore' });
    child.once('error', reject);
    child.once('exit', () => resolve(child.pid!));
  });
}

describe('lock file', () => {
  it('tells live from gone processes on this host, and cannot decide for another host', async () => {
    const gone = await deadPid();
    expect(pidAlive(process.pid)).toBe(true);
    expect(pidAlive(gone)).toBe(false);
    expect(ownerAlive({ pid: process.pid, host: os.hostname(), procStart: null })).toBe(true);
    expect(ownerAlive({ pid: gone, host: os.hostname(), procStart: null })).toBe(false);
    expect(ownerAlive({ pid: process.pid, host: `${os.hostname()}-elsewhere`, procStart: null })).toBeNull();
    // the same pid with another kernel start time is another process (Linux /proc/<pid>/stat field 22)
    const me = ownerRecord('test', null);
    if (me.procStart !== null) expect(ownerAlive({ pid: process.pid, host: os.hostname(), procStart: `${me.procStart}9` })).toBe(false);
  });

  it('is created once, names its owner, and is only removed by that owner', async () => {
    const dir = await mkdtemp(path.join(tmp, 'lock-'));
    const first = ownerRecord('ingest', path.join(dir, 'heatledger.sock'));
    const second = ownerRecord('demo', null);
    expect(tryCreateLock(dir, first)).toBe(true);
    expect(tryCreateLock(dir, second)).toBe(false);
    expect(readLock(dir)).toEqual(first);
    releaseLock(dir, second);
    expect(readLock(dir)).toEqual(first);
    releaseLock(dir, first);
    expect(readLock(dir)).toBeNull();
  });

  it('a stale lock is removed only while it is still the one judged stale', async () => {
    const dir = await mkdtemp(path.join(tmp, 'stale-'));
    const stale: LockOwner = { ...ownerRecord('ingest', null), pid: await deadPid() };
    expect(tryCreateLock(dir, stale)).toBe(true);
    // another process replaced it in between: its lock is put back
    const live = ownerRecord('serve', null);
    await writeFile(lockPath(dir), JSON.stringify(live));
    expect(removeStaleLock(dir, stale)).toBe(false);
    expect(readLock(dir)).toEqual(live);
    // the stale lock itself goes
    await writeFile(lockPath(dir), JSON.stringify(stale));
    expect(removeStaleLock(dir, stale)).toBe(true);
    expect(readLock(dir)).toBeNull();
  });

  it('a file that is not a lock is reported with its path, not guessed at', async () => {
    const dir = await mkdtemp(path.join(tmp, 'junk-'));
    await writeFile(lockPath(dir), 'not json');
    expect(() => readLock(dir)).toThrow(`the store lock ${lockPath(dir)} is not a heatledger lock`);
  });
});

describe('the owner\'s read socket', () => {
  let dataDir: string;
  let owner: Store;
  let conn: RemoteConnection;

  beforeAll(async () => {
    dataDir = path.join(tmp, 'store');
    owner = await openStore({ dataDir, command: 'test' });
    const lock = JSON.parse(await readFile(lockPath(dataDir), 'utf8')) as LockOwner;
    expect(lock.pid).toBe(process.pid);
    conn = await RemoteConnection.connect(lock.socket!);
  }, 180_000);

  afterAll(async () => {
    conn?.close();
    await owner?.close();
  });

  it('answers a read with the values unchanged', async () => {
    const rows = await conn.query<Record<string, unknown>>(
      `SELECT 'NaN'::float8 AS nan, 'Infinity'::float8 AS inf, '-Infinity'::float8 AS ninf, 2.5::float8 AS x, 'a' AS s, NULL::int AS n`,
    );
    expect(rows).toHaveLength(1);
    expect(rows[0].nan).toBeNaN();
    expect(rows[0].inf).toBe(Infinity);
    expect(rows[0].ninf).toBe(-Infinity);
    expect(rows[0]).toMatchObject({ x: 2.5, s: 'a', n: null });
  });

  it('refuses anything that changes the store or the owner\'s session', async () => {
    const before = (await owner.query<{ n: number }>('SELECT count(*)::int AS n FROM runs'))[0].n;
    await expect(conn.query(`INSERT INTO runs (software_version, mode, parameters) VALUES ('x', 'embedded', '{}')`)).rejects.toThrow('only read queries');
    await expect(conn.query(`WITH d AS (DELETE FROM runs RETURNING 1) SELECT count(*) FROM d`)).rejects.toThrow(/read-only transaction/);
    await expect(conn.query(`SELECT 1; DELETE FROM runs`)).rejects.toThrow(/multiple commands|cannot insert multiple/i);
    await conn.query(`SELECT set_config('TimeZone', 'Pacific/Auckland', false)`);
    expect(await owner.query<{ tz: string }>(`SELECT current_setting('TimeZone') AS tz`)).toEqual([{ tz: 'UTC' }]);
    expect((await owner.query<{ n: number }>('SELECT count(*)::int AS n FROM runs'))[0].n).toBe(before);
  });

  it('a second opening of the directory in the same process is refused, naming this process', async () => {
    await expect(openStore({ dataDir, command: 'test' })).rejects.toThrow(`in use by pid ${process.pid} (\`heatledger test\``);
  });

  it('a read command on a missing directory is refused and creates nothing', async () => {
    const missing = path.join(tmp, 'no-such-store');
    await expect(openStore({ dataDir: missing, readOnly: true })).rejects.toThrow(`no heatledger store at ${missing}`);
    expect(existsSync(missing)).toBe(false);
  });
});
