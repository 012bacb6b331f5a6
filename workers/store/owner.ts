/**
 * Opening an embedded data directory safely: exactly one process (the owner)
 * has the PGlite files open; it holds the directory's lock (./lock.ts) and
 * answers other processes' read queries on a local socket (./remote.ts).
 *
 * - Writers (`ingest`, `demo`, anything through `openStore({ dataDir })`)
 *   become the owner or are refused with the owner's pid and command. When the
 *   owner is a read command (`status`, `table`, `serve`), it hands the store
 *   over instead: it closes its database and rewrites the lock naming the
 *   writer, then reads through the writer's socket.
 * - Readers (`openReadStore`) read through the owner's socket when there is an
 *   owner, and otherwise become the owner themselves (handing over to the next
 *   writer). They never create a store.
 */
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { InputError, ServiceError } from '../core/errors.js';
import { sha256Hex } from '../core/hash.js';
import { onInterrupt } from './interrupt.js';
import { recordedCommand } from './command-name.js';
import {
  LONG_RUNNING_COMMANDS, READ_COMMANDS, describeOwner, lockPath, ownerAlive, ownerRecord, readLock, releaseLock, removeStaleLock, transferLock, tryCreateLock,
  type LockOwner,
} from './lock.js';
import { OwnerGoneError, RemoteConnection, startReadServer, type ReadServer } from './remote.js';
import type { QueryOptions, Store, Transaction } from './interface.js';

/** How long to keep asking an owner that is alive but not (yet) answering before giving up. A safety bound, not a timing assumption. */
const OWNER_PATIENCE_MS = 120_000;
const RETRY_PAUSE_MS = 100;

const pause = (ms: number) => new Promise((r) => setTimeout(r, ms));

/**
 * The command this process runs (`ingest`, `serve`, ...), for the lock file:
 * the subcommand the CLI recorded, however it was started (`node cli.js`, the
 * bin link npm makes in node_modules/.bin, `npx`, a global install). Without
 * one (a library caller), the subcommand when the script is the CLI after
 * following links, else the script's name.
 */
export function currentCommand(): string {
  const runningCommand = recordedCommand();
  if (runningCommand) return runningCommand;
  const script = process.argv[1] ?? '';
  let real = script;
  try {
    if (script) real = fs.realpathSync(script);
  } catch {
    // a script that is gone: its name as given
  }
  if (/cli\.(js|ts)$/.test(real) && process.argv[2]) return process.argv[2];
  return path.basename(script || process.argv0);
}

/** True when `dataDir` holds an embedded PostgreSQL data directory. */
export function isStoreDir(dataDir: string): boolean {
  return fs.existsSync(path.join(dataDir, 'PG_VERSION'));
}

/** The InputError for a data directory without a store (read commands never create one). */
export function noStoreError(dataDir: string): InputError {
  return new InputError(`no heatledger store at ${path.resolve(dataDir)}; run \`heatledger ingest\` first or check --data-dir`);
}

/** The owner's socket: in the data directory, or (for a path too long for a socket address) in the temporary folder. */
export function socketPathFor(dataDir: string): string {
  const inDir = path.join(path.resolve(dataDir), 'heatledger.sock');
  if (Buffer.byteLength(inDir) < 100) return inDir;
  const hash = sha256Hex(path.resolve(dataDir)).slice(0, 16);
  return path.join(os.tmpdir(), `heatledger-${hash}.sock`);
}

/** The store is owned by another live process (or one on another host). */
export class StoreBusyError extends ServiceError {
  constructor(readonly dataDir: string, readonly owner: LockOwner, hint: string) {
    super(`the store at ${path.resolve(dataDir)} is in use by ${describeOwner(owner)}; ${hint}`);
  }
}

function busyHint(dataDir: string, owner: LockOwner): string {
  if (ownerAlive(owner) === null) {
    return `its process cannot be checked from this host; if it is certainly not running, delete ${lockPath(dataDir)}`;
  }
  return READ_COMMANDS.has(owner.command)
    ? 'wait for it to finish'
    : `wait for it to finish or stop it; \`heatledger status\` and \`heatledger table\` can read while it runs`;
}

interface OwnOptions {
  dataDir: string;
  command: string;
  /** Create the directory and a new store when missing (writers); readers never create. */
  create: boolean;
  /** This owner only reads: it hands the store over to a writer that asks. */
  handsOver: boolean;
  /** Brings a freshly opened store up to date (migrations, abandoned runs). */
  prepare(store: Store): Promise<void>;
}

/** Acquire the lock of `dataDir` for `me`; asks a reading owner to hand over when `me` writes. Throws StoreBusyError. */
async function acquire(dataDir: string, me: LockOwner, writer: boolean): Promise<void> {
  let waitingSince: number | null = null;
  for (;;) {
    if (tryCreateLock(dataDir, me)) return;
    const owner = readLock(dataDir);
    if (!owner) continue; // released between the two steps
    const alive = ownerAlive(owner);
    if (alive === false) {
      removeStaleLock(dataDir, owner);
      continue;
    }
    if (!(writer && alive && READ_COMMANDS.has(owner.command) && owner.socket)) throw new StoreBusyError(dataDir, owner, busyHint(dataDir, owner));
    // a reading owner: ask it to hand the store over
    let conn: RemoteConnection | null = null;
    let refusal: string | null = null;
    try {
      conn = await RemoteConnection.connect(owner.socket);
      await conn.request({ op: 'handover', to: me });
    } catch (e) {
      // not listening yet (still opening), leaving, or busy handing over to another writer
      if (!(e instanceof OwnerGoneError)) refusal = (e as Error).message;
    } finally {
      conn?.close();
    }
    const now = readLock(dataDir);
    if (now?.token === me.token) return;
    // ask again while it lives; a new owner (another writer) is reported on the next round
    waitingSince ??= Date.now();
    if (Date.now() - waitingSince > OWNER_PATIENCE_MS) {
      throw new StoreBusyError(dataDir, owner, `it did not hand the store over on its socket ${owner.socket}${refusal ? ` (${refusal})` : ''}`);
    }
    await pause(RETRY_PAUSE_MS);
  }
}

/**
 * A store this process owns: PGlite open, the lock held, read queries of other
 * processes answered on the socket. `close()` closes all three.
 */
export class OwnedStore implements Store {
  readonly kind = 'pglite' as const;
  private server: ReadServer | null = null;
  private inflight = 0;
  private idle: (() => void)[] = [];
  private handedOver = false;
  private closed = false;
  private readonly exitCleanup = () => this.releaseSync();
  private unregisterInterrupt: () => void = () => undefined;
  /** Called after the store was handed over to a writer. */
  onHandedOver: (() => void) | null = null;

  private constructor(private readonly inner: Store, readonly dataDir: string, private me: LockOwner, private readonly handsOver: boolean) {}

  static async open(opts: OwnOptions): Promise<OwnedStore> {
    const dir = path.resolve(opts.dataDir);
    if (!opts.create && !isStoreDir(dir)) throw noStoreError(dir);
    if (opts.create) {
      try {
        fs.mkdirSync(dir, { recursive: true });
      } catch (e) {
        throw new ServiceError(`cannot open the embedded database at ${dir}: ${(e as Error).message}`, { cause: e });
      }
    }
    const me = ownerRecord(opts.command, socketPathFor(dir));
    await acquire(dir, me, !opts.handsOver);
    let owned: OwnedStore | null = null;
    try {
      // a store that vanished while we waited (a reader does not create one)
      if (!opts.create && !isStoreDir(dir)) throw noStoreError(dir);
      const { openPgliteStore } = await import('./pglite.js');
      const inner = await openPgliteStore({ dataDir: dir, memory: false, longRunning: LONG_RUNNING_COMMANDS.has(opts.command) });
      owned = new OwnedStore(inner, dir, me, opts.handsOver);
      process.on('exit', owned.exitCleanup);
      owned.unregisterInterrupt = onInterrupt(async () => { await owned!.close(); });
      await opts.prepare(owned);
      owned.server = await startReadServer(me.socket!, {
        query: (sql, params) => owned!.readOnly(sql, params),
        handover: opts.handsOver ? (to) => owned!.handover(to) : undefined,
      });
      return owned;
    } catch (e) {
      if (owned) await owned.close().catch(() => undefined);
      else releaseLock(dir, me);
      throw e;
    }
  }

  private async track<T>(fn: () => Promise<T>): Promise<T> {
    if (this.handedOver || this.closed) throw new OwnerGoneError(`the store at ${this.dataDir} was ${this.handedOver ? 'handed over' : 'closed'}`);
    this.inflight++;
    try {
      return await fn();
    } finally {
      if (--this.inflight === 0) for (const f of this.idle.splice(0)) f();
    }
  }

  /** A reader's query: one statement in a READ ONLY transaction that is always rolled back. */
  private async readOnly(sql: string, params: unknown[]): Promise<unknown[]> {
    const rollback = new (class RollBack { rows: unknown[] = []; })();
    try {
      await this.track(() =>
        this.inner.transaction(async (tx) => {
          await tx.exec('SET TRANSACTION READ ONLY');
          rollback.rows = await tx.query(sql, params);
          throw rollback;
        }),
      );
    } catch (e) {
      if (e === rollback) return rollback.rows;
      throw e;
    }
    return rollback.rows;
  }

  /** Close the database once nothing runs on it, and hand the lock to `to`. */
  private async handover(to: LockOwner): Promise<void> {
    if (!this.handsOver || this.closed || this.handedOver) throw new ServiceError('this owner cannot hand the store over now');
    if (ownerAlive(to) !== true) throw new ServiceError(`refusing to hand the store to pid ${to?.pid}, which is not running on this host`);
    this.handedOver = true; // new calls go to the next owner
    if (this.inflight > 0) await new Promise<void>((r) => this.idle.push(r));
    await this.inner.close();
    transferLock(this.dataDir, this.me, to);
    this.me = to; // the lock is no longer ours: release must not touch it
    process.off('exit', this.exitCleanup);
    this.unregisterInterrupt();
    const server = this.server;
    this.server = null;
    // after the reply has been written
    setImmediate(() => { void server?.close(); });
    this.onHandedOver?.();
  }

  query<T = Record<string, unknown>>(sql: string, params?: unknown[], options?: QueryOptions): Promise<T[]> {
    return this.track(() => this.inner.query<T>(sql, params, options));
  }
  exec(sql: string): Promise<void> {
    return this.track(() => this.inner.exec(sql));
  }
  transaction<T>(fn: (tx: Transaction) => Promise<T>): Promise<T> {
    return this.track(() => this.inner.transaction(fn));
  }
  withLock<T>(key: string, fn: () => Promise<T>): Promise<T> {
    return this.inner.withLock ? this.inner.withLock(key, fn) : fn();
  }

  private releaseSync(): void {
    this.server?.removeSocketFile();
    if (!this.handedOver) releaseLock(this.dataDir, this.me);
  }

  async close(): Promise<void> {
    if (this.closed) return;
    this.closed = true;
    this.unregisterInterrupt();
    try {
      await this.server?.close();
      if (!this.handedOver) await this.inner.close();
    } finally {
      if (!this.handedOver) releaseLock(this.dataDir, this.me);
      process.off('exit', this.exitCleanup);
    }
  }
}

/**
 * A read-only store on an embedded data directory: through the owner's socket
 * when another process owns it, else opened here (owning it until a writer
 * asks for it). Follows the store when its owner changes. `exec` and
 * `transaction` throw: readers do not write.
 */
export class SharedReadStore implements Store {
  readonly kind = 'pglite' as const;
  private current: { remote: RemoteConnection } | { owned: OwnedStore } | null = null;
  private resolving: Promise<void> | null = null;
  private closed = false;
  private readonly unregisterInterrupt: () => void;

  constructor(readonly dataDir: string, private readonly command: string, private readonly prepare: (s: Store) => Promise<void>) {
    this.unregisterInterrupt = onInterrupt(async () => { await this.close(); });
  }

  /** Where reads go now: 'owner' (through another process) or 'self'. */
  get via(): 'owner' | 'self' | null {
    return this.current === null ? null : 'remote' in this.current ? 'owner' : 'self';
  }

  private resolve(): Promise<void> {
    if (this.current && !('remote' in this.current && this.current.remote.closed)) return Promise.resolve();
    this.resolving ??= this.find().finally(() => { this.resolving = null; });
    return this.resolving;
  }

  private async find(): Promise<void> {
    let waitingSince: number | null = null;
    for (;;) {
      if (this.closed) throw new ServiceError(`the store at ${this.dataDir} was closed`);
      const owner = fs.existsSync(this.dataDir) ? readLock(this.dataDir) : null;
      const alive = owner ? ownerAlive(owner) : false;
      // a store being created by its owner has no PG_VERSION yet, but is one
      if (!isStoreDir(this.dataDir) && !(owner && alive)) throw noStoreError(this.dataDir);
      if (owner && alive === null) throw new StoreBusyError(this.dataDir, owner, busyHint(this.dataDir, owner));
      if (owner && alive && !owner.socket) throw new StoreBusyError(this.dataDir, owner, busyHint(this.dataDir, owner));
      if (owner && alive && owner.socket) {
        try {
          this.current = { remote: await RemoteConnection.connect(owner.socket) };
          return;
        } catch (e) {
          if (!(e instanceof OwnerGoneError)) throw e;
        }
        // the owner is starting up (socket not listening yet) or leaving: ask again
        waitingSince ??= Date.now();
        if (Date.now() - waitingSince > OWNER_PATIENCE_MS) throw new StoreBusyError(this.dataDir, owner, `it does not answer on its socket ${owner.socket}`);
        await pause(RETRY_PAUSE_MS);
        continue;
      }
      try {
        const owned = await OwnedStore.open({ dataDir: this.dataDir, command: this.command, create: false, handsOver: true, prepare: this.prepare });
        owned.onHandedOver = () => { if (this.current && 'owned' in this.current && this.current.owned === owned) this.current = null; };
        this.current = { owned };
        return;
      } catch (e) {
        if (!(e instanceof StoreBusyError)) throw e;
        // another process became the owner first: read through it
      }
    }
  }

  async query<T = Record<string, unknown>>(sql: string, params?: unknown[]): Promise<T[]> {
    for (;;) {
      await this.resolve();
      const cur = this.current!;
      try {
        return 'remote' in cur ? await cur.remote.query<T>(sql, params) : await cur.owned.query<T>(sql, params);
      } catch (e) {
        // the owner left or handed over: read queries are safe to ask again of the next owner
        if (!(e instanceof OwnerGoneError)) throw e;
        if ('remote' in cur) cur.remote.close();
        if (this.current === cur) this.current = null;
      }
    }
  }

  async exec(): Promise<void> {
    throw new Error('a read-only store does not run exec(); open the store with openStore to write');
  }

  async transaction<T>(): Promise<T> {
    throw new Error('a read-only store does not run transactions; open the store with openStore to write');
  }

  async close(): Promise<void> {
    if (this.closed) return;
    this.closed = true;
    this.unregisterInterrupt();
    await this.resolving?.catch(() => undefined);
    const cur = this.current;
    this.current = null;
    if (cur && 'remote' in cur) cur.remote.close();
    else if (cur) await cur.owned.close();
  }
}

/** Open `dataDir` as its owner for writing (see OwnedStore). */
export function openOwnedStore(dataDir: string, command: string, prepare: (s: Store) => Promise<void>): Promise<OwnedStore> {
  return OwnedStore.open({ dataDir, command, create: true, handsOver: false, prepare });
}

/** Open `dataDir` for reading (see SharedReadStore); InputError when it holds no store. */
export async function openSharedReadStore(dataDir: string, command: string, prepare: (s: Store) => Promise<void>): Promise<SharedReadStore> {
  const dir = path.resolve(dataDir);
  if (!fs.existsSync(dir)) throw noStoreError(dir);
  const store = new SharedReadStore(dir, command, prepare);
  try {
    await store.query('SELECT 1');
  } catch (e) {
    await store.close();
    throw e;
  }
  return store;
}
