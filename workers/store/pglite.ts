/**
 * Store on the embedded engine (PGlite: PostgreSQL compiled to WebAssembly),
 * the default for a single machine. Its data directory holds one database and
 * belongs to one process at a time.
 */
import fs from 'node:fs';
import path from 'node:path';
import v8 from 'node:v8';
import { PGlite, parse as pgliteParse, protocol, type Transaction as PgliteTransaction } from '@electric-sql/pglite';
import { ServiceError } from '../core/errors.js';
import { TransactionGuard } from './guard.js';
import { sqlHead } from './sql-head.js';
import type { QueryOptions, Store, Transaction } from './interface.js';
import { SCALAR_PARSERS } from './value-parsers.js';
import { listMigrations, migrate } from './migrate.js';
import { PG_VERSION_FILE, copyTemplateInto, templateRecord, templateTar, usableTemplate, type TemplateRecord } from './template.js';

export interface PgliteStoreOptions {
  /** Data directory, created if missing; ignored when `memory` is true. */
  dataDir: string;
  memory: boolean;
  /**
   * Make a new store from scratch (initdb) even when a prepared template
   * matches (./template.ts); the template itself is made this way. Default false.
   */
  fromScratch?: boolean;
  /**
   * The process serves for long (`serve`): let V8 optimise PGlite's WebAssembly
   * as it runs. Default false: a command that opens the store, works and ends
   * (see withWasmTier below).
   */
  longRunning?: boolean;
}

/**
 * Compile PGlite's WebAssembly (PostgreSQL, some 9 MB of code) with V8's
 * baseline compiler only. By default V8 starts every WebAssembly function on
 * its baseline compiler (Liftoff) and compiles the hot ones again with its
 * optimising compiler (TurboFan) on background threads; a command that opens
 * the store, works for a few seconds and ends pays for that second compile and
 * never earns it back. Measured on the demo's store (2-core machine, 2026-12,
 * three runs each): `table --level year` 1.0 s and 1.5 s of CPU against 0.7 s and
 * 0.8 s baseline-only, `trend` 1.2 s / 1.8 s against 0.7 s / 0.85 s; an embedded
 * ingest of 200 scenes 44-54 ms of CPU a scene against 36-41 ms. A long-running
 * `serve` keeps V8's default. The flag is set around PGlite's start and cleared
 * after, but two flags it turned off stay off for the rest of the process
 * (`--wasm-tier-up`, `--wasm-dynamic-tiering`): PGlite's functions compiled
 * later, on first call, also stay on the baseline compiler, and so does other
 * WebAssembly the command loads (the LERC and Zstandard decoders). That is part
 * of what was measured: turning the two back on after the start made `table
 * --level year` on the demo's store 1.0 -> 1.6 s of wall time and 1.05 ->
 * 1.87 s of CPU (paired whole-process runs, 11 pairs, 2026-12-03). A side effect: V8 hashes
 * its flags into every code cache, so the bin's code cache, when a store
 * command has to write it (it was missing or refused at the start), is refused
 * by later runs until a `zonal` run writes it again (DEVELOPERS.md).
 */
async function withWasmTier<T>(longRunning: boolean, start: () => Promise<T>): Promise<T> {
  if (longRunning) return start();
  v8.setFlagsFromString('--liftoff-only');
  // Each function is validated when first compiled, as V8 already compiles lazily, instead of
  // all of the module before it starts: most of PostgreSQL's code never runs in a command.
  // Opening an existing store: 0.61-0.69 s of CPU -> 0.57-0.61 s (four alternating runs, 2026-12).
  v8.setFlagsFromString('--wasm-lazy-validation');
  try {
    return await start();
  } finally {
    v8.setFlagsFromString('--no-liftoff-only');
    v8.setFlagsFromString('--no-wasm-lazy-validation');
  }
}

/**
 * PostgreSQL settings of a store opened by a command that works and ends (not
 * `serve`): 16 MB of shared buffers instead of PGlite's 128 MB. The engine
 * clears its whole shared memory at start (`memset`, one WebAssembly
 * `memory.fill`), and every megabyte of it is fresh WebAssembly memory whose
 * pages the kernel must fault in: ~3.5 ms of CPU a megabyte on a 2-core build
 * machine (2026-12-03, profiles of `table --level year`: memset 238 ms at
 * 64 MB, 79 ms at 16 MB, none to see at 1 MB). A process that opens the store
 * once starts with an empty buffer cache anyway and reads each page it needs
 * about once, from the operating system's file cache when not from its own
 * (large scans use a small ring of buffers whatever the size). Five read
 * commands on the demo's store, five alternating runs each: 64 MB -> 16 MB cut
 * 0.15-0.18 s of wall and CPU from every one (table --level year 1.00 -> 0.83 s,
 * export --level date 1.07 -> 0.90 s); 8 MB and 1 MB were within the noise of
 * 16 MB, and so was an embedded ingest of 200 scenes (45-53 scenes/s each way).
 * 16 MB keeps room for the index pages a query revisits. `serve` keeps the
 * 128 MB: it answers query after query from what it has read.
 */
const SHORT_RUN_SETTINGS = ['-c', 'shared_buffers=16MB'];

function queryError(e: unknown, where: string, sql: string): ServiceError {
  if (e instanceof ServiceError) return e;
  const err = e as { message?: string; code?: string };
  const state = typeof err?.code === 'string' ? ` (SQLSTATE ${err.code})` : '';
  return new ServiceError(`embedded database query failed at ${where}: ${err?.message ?? String(e)}${state} in "${sqlHead(sql)}"`, { cause: e });
}

/** PGlite runs arrays through the element parser, so scalar parsers suffice. */
const parsers = Object.fromEntries(Object.entries(SCALAR_PARSERS).map(([oid, f]) => [oid, (text: string) => f(text)]));

/**
 * Open (creating if needed) the embedded database. Throws ServiceError naming
 * the data directory when it cannot be created or opened.
 */
export async function openPgliteStore(options: PgliteStoreOptions): Promise<Store> {
  const where = options.memory ? 'memory' : path.resolve(options.dataDir);
  let db: PGlite;
  try {
    if (!options.memory) fs.mkdirSync(where, { recursive: true });
    // a new store starts from the prepared template when one matches this program's migrations
    const isNew = options.memory || !fs.existsSync(path.join(where, PG_VERSION_FILE));
    const template = isNew && !options.fromScratch ? usableTemplate() : null;
    if (!options.memory && template) copyTemplateInto(template, where);
    const engine = options.memory ? (template ? { loadDataDir: templateTar(template), parsers } : { parsers }) : { dataDir: where, parsers };
    const longRunning = options.longRunning ?? false;
    db = await withWasmTier(longRunning, () => PGlite.create(longRunning ? engine : { ...engine, startParams: [...PGlite.defaultStartParams, ...SHORT_RUN_SETTINGS] }));
    await db.exec("SET TimeZone = 'UTC'; SET DateStyle = 'ISO, YMD';");
  } catch (e) {
    throw new ServiceError(`cannot open the embedded database at ${where}: ${(e as Error)?.message ?? String(e)}`, { cause: e });
  }
  return new PgliteStore(db, where);
}

/**
 * The embedded store is one database (postgres). initdb also makes template0
 * and template1, which only CREATE DATABASE reads; in the template they are 600
 * of the data directory's 1,014 files, and a new store copies every file
 * (./template.ts). Dropped from the template, so a new store copies 414.
 */
const DROP_TEMPLATE_DATABASES = [
  'ALTER DATABASE template0 WITH IS_TEMPLATE false',
  'ALTER DATABASE template1 WITH IS_TEMPLATE false',
  'DROP DATABASE template0', // one statement each: DROP DATABASE cannot run inside a transaction block
  'DROP DATABASE template1',
];

/**
 * Make the prepared template of a new store in `outDir` (see ./template.ts):
 * initdb and every migration in memory, then the data directory dumped as a tar
 * and unpacked beside it, and the record written last. Returns the record.
 */
export async function writePgliteTemplate(outDir: string): Promise<TemplateRecord> {
  const migrations = listMigrations();
  const record = templateRecord(migrations);
  const db = await PGlite.create({ parsers });
  try {
    await migrate(new PgliteStore(db, 'template'), migrations);
    for (const statement of DROP_TEMPLATE_DATABASES) await db.exec(statement);
    await db.exec('CHECKPOINT');
    const tar = await db.dumpDataDir('none');
    fs.mkdirSync(outDir, { recursive: true });
    fs.writeFileSync(path.join(outDir, 'pgdata.tar'), new Uint8Array(await tar.arrayBuffer()));
    // the same files as a data directory, shut down cleanly
    const unpacked = await PGlite.create({ dataDir: path.join(outDir, 'pgdata'), loadDataDir: tar });
    await unpacked.close();
  } finally {
    await db.close();
  }
  fs.writeFileSync(path.join(outDir, 'template.json'), JSON.stringify(record, null, 2) + '\n');
  return record;
}

/** A transaction's handle; QueryOptions.prepared does not apply (PGlite's handle runs query() only). */
function wrapTx(tx: PgliteTransaction, where: string): Transaction {
  return {
    async query<R>(sql: string, params?: unknown[]): Promise<R[]> {
      try {
        return (await tx.query<R>(sql, params)).rows;
      } catch (e) {
        throw queryError(e, where, sql);
      }
    },
    async exec(sql: string): Promise<void> {
      try {
        await tx.exec(sql);
      } catch (e) {
        throw queryError(e, where, sql);
      }
    },
  };
}

class PgliteStore implements Store {
  readonly kind = 'pglite' as const;
  private readonly guard = new TransactionGuard();
  private lockChain: Promise<unknown> = Promise.resolve();
  private closed = false;
  /** Statements prepared on the engine's one session, by their text (see preparedQuery). */
  private readonly statements = new Map<string, { name: string; paramTypes: number[] }>();

  constructor(private readonly db: PGlite, private readonly where: string) {}

  async query<T = Record<string, unknown>>(sql: string, params?: unknown[], options?: QueryOptions): Promise<T[]> {
    this.guard.check('query()');
    try {
      if (options?.prepared) return await this.preparedQuery<T>(sql, params ?? []);
      return (await this.db.query<T>(sql, params)).rows;
    } catch (e) {
      throw queryError(e, this.where, sql);
    }
  }

  /**
   * A statement kept parsed by the engine (QueryOptions.prepared), as the `pg`
   * client keeps one per connection on the server. PGlite's query() sends six
   * protocol messages in six calls into the engine and has the text parsed,
   * analysed and planned at every call; here the text is parsed once (Parse,
   * Describe, Sync) and each call sends Bind, Describe, Execute and Sync in one
   * message, so PostgreSQL's plan cache keeps its plan (PostgreSQL
   * documentation, "Message Flow: Extended Query"). Values are serialised and
   * rows parsed by PGlite's own functions, under its locks, as its query() does.
   * An embedded ingest of the archive bench's 200 scenes (into a copy of one
   * prepared store, paired whole-process runs, 8 pairs, 2026-12): wall 0.95x, CPU 0.95x; the
   * tables exported by scene, date and year are byte for byte the same.
   */
  private async preparedQuery<T>(sql: string, params: unknown[]): Promise<T[]> {
    const db = this.db;
    await db._checkReady();
    // The two locks query() takes: PGlite's transaction lock (no statement lands inside another
    // caller's open transaction), then its query lock.
    return db._runExclusiveTransaction(() => db._runExclusiveQuery(async () => {
      let statement = this.statements.get(sql);
      if (statement === undefined) {
        const name = `hl_${this.statements.size + 1}`;
        const described = await db.execProtocolStream(
          Buffer.concat([protocol.serialize.parse({ name, text: sql }), protocol.serialize.describe({ type: 'S', name }), protocol.serialize.sync()]),
          { syncToFs: false },
        );
        statement = { name, paramTypes: pgliteParse.parseDescribeStatementResults(described) };
        this.statements.set(sql, statement);
      }
      const types = statement.paramTypes;
      const values = params.map((v, i) => {
        if (v === null || v === undefined) return null;
        const serialise = db.serializers[types[i]];
        return serialise ? serialise(v) : String(v);
      });
      const messages = await db.execProtocolStream(
        Buffer.concat([protocol.serialize.bind({ statement: statement.name, values }), protocol.serialize.describe({ type: 'P' }),
          protocol.serialize.execute({}), protocol.serialize.sync()]),
        { syncToFs: false },
      );
      await db.syncToFs(); // as query() does after a statement outside a transaction
      return pgliteParse.parseResults(messages, db.parsers)[0].rows as T[];
    }));
  }

  async exec(sql: string): Promise<void> {
    this.guard.check('exec()');
    try {
      await this.db.exec(sql);
    } catch (e) {
      throw queryError(e, this.where, sql);
    }
  }

  async transaction<T>(fn: (tx: Transaction) => Promise<T>): Promise<T> {
    this.guard.check('transaction()');
    let fromFn = false;
    try {
      return await this.db.transaction((tx) =>
        this.guard.run(() => fn(wrapTx(tx, this.where))).catch((e: unknown) => {
          fromFn = true;
          throw e;
        }),
      );
    } catch (e) {
      // Errors from fn pass through unchanged; BEGIN/COMMIT failures become ServiceError.
      if (fromFn) throw e;
      throw queryError(e, this.where, 'COMMIT');
    }
  }

  /** One process owns the data directory, so an in-process queue is the whole lock. */
  withLock<T>(_key: string, fn: () => Promise<T>): Promise<T> {
    const next = this.lockChain.then(fn, fn);
    this.lockChain = next.catch(() => undefined);
    return next;
  }

  async close(): Promise<void> {
    if (this.closed) return;
    this.closed = true;
    await this.db.close();
  }
}
