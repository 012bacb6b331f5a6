/**
 * The one database interface of heatledger. Two implementations sit behind it:
 * the PostgreSQL server through `pg` (distributed mode, `DATABASE_URL`) and the
 * embedded engine PGlite (the default, a data directory on disk). Both run the
 * same SQL and return the same JavaScript values (see ./value-parsers.ts).
 */
import { DATA_DIR_NAME } from '../core/defaults.js';
import { ServiceError } from '../core/errors.js';
import { migrate } from './migrate.js';

export type { Queryable, Transaction, Store } from './interface.js';
import type { Store } from './interface.js';

export interface OpenStoreOptions {
  /** postgres://user@host:port/db — when given, use the PostgreSQL server. */
  databaseUrl?: string;
  /** Embedded data directory, created if missing. Default `./.heatledger` (relative to the working directory). */
  dataDir?: string;
  /** Embedded engine in memory only (tests); ignores `dataDir`. */
  memory?: boolean;
  /**
   * Only read (status, table, serve): an embedded `dataDir` must already hold
   * a store (else InputError naming it) and is read through its owner's socket
   * when another process owns it (see ./owner.ts).
   */
  readOnly?: boolean;
  /** The command named in the embedded store's lock file (default: this process's heatledger command). */
  command?: string;
}

/** Default embedded data directory, relative to the working directory. */
export const DEFAULT_DATA_DIR = `./${DATA_DIR_NAME}`;

/**
 * Open the store the options describe and bring its schema up to date
 * (sql/migrations). A server URL selects PostgreSQL; otherwise the embedded
 * engine on `dataDir` (or in memory).
 * Throws `ServiceError` when the database cannot be reached or opened.
 *
 * @example
 *   const store = await openStore({ databaseUrl: process.env.DATABASE_URL });
 *   try { await store.query('select 1') } finally { await store.close() }
 */
export async function openStore(options: OpenStoreOptions = {}): Promise<Store> {
  let store: Store;
  if (options.databaseUrl) {
    const { openPgStore } = await import('./pg.js');
    store = await openPgStore(options.databaseUrl);
  } else if (options.memory) {
    const { openPgliteStore } = await import('./pglite.js');
    store = await openPgliteStore({ dataDir: '', memory: true });
  } else {
    // one owner per data directory: the lock, the read socket and the migrations happen in ./owner.ts
    const { openOwnedStore, openSharedReadStore, currentCommand } = await import('./owner.js');
    const dataDir = options.dataDir ?? DEFAULT_DATA_DIR;
    const command = options.command ?? currentCommand();
    return options.readOnly ? openSharedReadStore(dataDir, command, prepareStore) : openOwnedStore(dataDir, command, prepareStore);
  }
  try {
    await prepareStore(store);
  } catch (e) {
    await store.close().catch(() => undefined);
    throw e;
  }
  return store;
}

/**
 * Bring a freshly opened store up to date: migrations, then runs left
 * 'running' by a process of this host that no longer exists are marked
 * 'abandoned' (a run of another host cannot be checked from here and is left alone).
 */
export async function prepareStore(store: Store): Promise<void> {
  try {
    await migrate(store);
  } catch (e) {
    throw e instanceof ServiceError ? e : new ServiceError(`cannot migrate the ${store.kind} database: ${(e as Error).message}`, { cause: e });
  }
  const { markAbandonedRuns } = await import('./abandoned.js');
  await markAbandonedRuns(store);
}
