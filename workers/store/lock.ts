/**
 * One owner per embedded data directory. The owning process writes a lock file
 * (`heatledger.lock`) naming itself — pid, host, command, start time and the
 * socket it answers read queries on — and removes it when it exits. A lock
 * whose process no longer exists on this host is stale and is taken over.
 *
 * The file is created complete and atomically (written under a private name,
 * then hard-linked to the lock name, which fails when the name exists), so a
 * reader never sees half a lock. Taking over a stale lock renames it away
 * first and checks that what was renamed is the stale lock that was judged
 * (its token), so two processes that find the same stale lock cannot both win.
 */
import { randomBytes } from 'node:crypto';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { ServiceError } from '../core/errors.js';

export const LOCK_FILE = 'heatledger.lock';

/** Commands that only read the store: their ownership may be handed to a writer. */
export const READ_COMMANDS = new Set(['status', 'table', 'serve']);

/** Commands that keep the store open for long (a server): the engine may optimise as it runs (./pglite.ts). */
export const LONG_RUNNING_COMMANDS = new Set(['serve']);

export interface LockOwner {
  pid: number;
  host: string;
  command: string;
  /** UTC ISO 8601. */
  startedAt: string;
  /** Kernel start time of the process (Linux /proc/<pid>/stat field 22), to tell a reused pid apart; null where unknown. */
  procStart: string | null;
  /** Unix domain socket the owner answers read queries on; null when it answers none. */
  socket: string | null;
  /** Random token of this ownership (a handed-over lock gets the new owner's token). */
  token: string;
}

export function lockPath(dataDir: string): string {
  return path.join(path.resolve(dataDir), LOCK_FILE);
}

/** Kernel start time of `pid` (clock ticks since boot), or null off Linux / when gone. */
export function processStartTicks(pid: number): string | null {
  try {
    const stat = fs.readFileSync(`/proc/${pid}/stat`, 'utf8');
    // fields after the command name (which may hold spaces and parentheses): state is field 3, starttime field 22
    const rest = stat.slice(stat.lastIndexOf(')') + 2).split(' ');
    return rest[22 - 3] ?? null;
  } catch {
    return null;
  }
}

/** True when a process with this pid exists (EPERM: it exists but belongs to another user). */
export function pidAlive(pid: number): boolean {
  if (!(Number.isInteger(pid) && pid > 0)) return false;
  try {
    process.kill(pid, 0);
    return true;
  } catch (e) {
    return (e as NodeJS.ErrnoException).code === 'EPERM';
  }
}

/**
 * Is the owner still running? true / false on this host; null for another
 * host (cannot be decided from here).
 */
export function ownerAlive(owner: Pick<LockOwner, 'pid' | 'host' | 'procStart'>): boolean | null {
  if (owner.host !== os.hostname()) return null;
  if (!pidAlive(owner.pid)) return false;
  if (owner.procStart !== null) {
    const now = processStartTicks(owner.pid);
    if (now !== null && now !== owner.procStart) return false; // the pid was reused by another process
  }
  return true;
}

/** The lock's owner, or null when there is no lock file. Throws ServiceError naming the file when it cannot be read as a lock. */
export function readLock(dataDir: string): LockOwner | null {
  const file = lockPath(dataDir);
  let text: string;
  try {
    text = fs.readFileSync(file, 'utf8');
  } catch (e) {
    if ((e as NodeJS.ErrnoException).code === 'ENOENT') return null;
    throw new ServiceError(`cannot read the store lock ${file}: ${(e as Error).message}`, { cause: e });
  }
  return parseLock(text, file);
}

function parseLock(text: string, file: string): LockOwner {
  let v: Partial<LockOwner>;
  try {
    v = JSON.parse(text) as Partial<LockOwner>;
  } catch {
    throw new ServiceError(`the store lock ${file} is not a heatledger lock (not JSON); if no heatledger process uses this store, delete the file`);
  }
  if (typeof v?.pid !== 'number' || typeof v.host !== 'string' || typeof v.token !== 'string') {
    throw new ServiceError(`the store lock ${file} is not a heatledger lock (no pid, host or token); if no heatledger process uses this store, delete the file`);
  }
  return {
    pid: v.pid, host: v.host, command: String(v.command ?? '?'), startedAt: String(v.startedAt ?? '?'),
    procStart: typeof v.procStart === 'string' ? v.procStart : null, socket: typeof v.socket === 'string' ? v.socket : null, token: v.token,
  };
}

/** A description of the owner for messages: "pid 123 (`heatledger ingest`, since …)". */
export function describeOwner(owner: LockOwner): string {
  const where = owner.host === os.hostname() ? '' : ` on host ${owner.host}`;
  return `pid ${owner.pid}${where} (\`heatledger ${owner.command}\`, since ${owner.startedAt})`;
}

/** The record this process writes as owner. */
export function ownerRecord(command: string, socket: string | null): LockOwner {
  return {
    pid: process.pid,
    host: os.hostname(),
    command,
    startedAt: new Date().toISOString(),
    procStart: processStartTicks(process.pid),
    socket,
    token: randomBytes(12).toString('hex'),
  };
}

function writePrivate(dir: string, owner: LockOwner): string {
  const tmp = path.join(dir, `.${LOCK_FILE}.${process.pid}.${randomBytes(6).toString('hex')}`);
  fs.writeFileSync(tmp, JSON.stringify(owner) + '\n', { mode: 0o600 });
  return tmp;
}

/** Try to create the lock naming `owner`: true when created, false when a lock exists. */
export function tryCreateLock(dataDir: string, owner: LockOwner): boolean {
  const dir = path.resolve(dataDir);
  const tmp = writePrivate(dir, owner);
  try {
    fs.linkSync(tmp, lockPath(dir));
    return true;
  } catch (e) {
    if ((e as NodeJS.ErrnoException).code === 'EEXIST') return false;
    throw new ServiceError(`cannot create the store lock ${lockPath(dir)}: ${(e as Error).message}`, { cause: e });
  } finally {
    fs.rmSync(tmp, { force: true });
  }
}

/**
 * Remove a lock judged stale. Renames it away, then checks that the renamed
 * file is still that stale lock (same token); if another process had put its
 * own lock in between, that lock is put back. Returns true when removed.
 */
export function removeStaleLock(dataDir: string, stale: LockOwner): boolean {
  const file = lockPath(dataDir);
  const aside = `${file}.stale.${process.pid}.${randomBytes(6).toString('hex')}`;
  try {
    fs.renameSync(file, aside);
  } catch (e) {
    if ((e as NodeJS.ErrnoException).code === 'ENOENT') return false;
    throw new ServiceError(`cannot remove the stale store lock ${file}: ${(e as Error).message}`, { cause: e });
  }
  let moved: LockOwner | null = null;
  try {
    moved = parseLock(fs.readFileSync(aside, 'utf8'), aside);
  } catch {
    moved = null;
  }
  if (moved && moved.token !== stale.token) {
    // a live lock created after the stale one was read: give it back
    try { fs.linkSync(aside, file); } catch { /* a third process holds the name now; its lock stands */ }
    fs.rmSync(aside, { force: true });
    return false;
  }
  fs.rmSync(aside, { force: true });
  return true;
}

/** Replace the lock (which must be `current`'s) by one naming `next`, in one rename. */
export function transferLock(dataDir: string, current: LockOwner, next: LockOwner): void {
  const dir = path.resolve(dataDir);
  const now = readLock(dir);
  if (!now || now.token !== current.token) throw new ServiceError(`the store lock ${lockPath(dir)} is no longer held by pid ${current.pid}; cannot hand it over`);
  const tmp = writePrivate(dir, next);
  try {
    fs.renameSync(tmp, lockPath(dir));
  } catch (e) {
    fs.rmSync(tmp, { force: true });
    throw new ServiceError(`cannot hand over the store lock ${lockPath(dir)}: ${(e as Error).message}`, { cause: e });
  }
}

/** Remove the lock when (and only when) it is still `owner`'s. Synchronous, so it can run in an 'exit' listener. */
export function releaseLock(dataDir: string, owner: LockOwner): void {
  try {
    const now = readLock(dataDir);
    if (now && now.token === owner.token) fs.rmSync(lockPath(dataDir), { force: true });
  } catch {
    // an unreadable lock is not ours to remove
  }
}
