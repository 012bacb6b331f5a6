/**
 * Which store a process uses, decided here only: the PostgreSQL server of
 * DATABASE_URL when it is set, else PGlite in the data directory.
 */
import { InputError } from '../core/errors.js';
import { ENV } from '../config.js';
import { DATA_DIR_NAME } from '../core/defaults.js';
import { openStore, type Store } from './store.js';

/** Where the store lives: a server URL, or an embedded data directory. */
export interface StoreConfig {
  databaseUrl?: string;
  dataDir: string;
}

/** The store configuration from options (first) and the environment. */
export function storeConfig(options: { dataDir?: string } = {}, env: NodeJS.ProcessEnv = process.env): StoreConfig {
  return {
    databaseUrl: env[ENV.databaseUrl] || undefined,
    dataDir: options.dataDir ?? env[ENV.dataDir] ?? DATA_DIR_NAME,
  };
}

/**
 * The store for a configuration: a PostgreSQL server when DATABASE_URL is set, else PGlite in dataDir.
 * `readOnly` (status, table, serve): an embedded store must exist already, and is read through its owner when another process owns it.
 * `mode` 'distributed' (a queue on Redis) needs a server: workers on several machines share it.
 */
export async function openConfiguredStore(config: StoreConfig & { mode?: 'embedded' | 'distributed' }, options: { readOnly?: boolean } = {}): Promise<Store> {
  if (config.mode === 'distributed' && !config.databaseUrl) {
    throw new InputError(`${ENV.redisUrl} is set (distributed mode) but ${ENV.databaseUrl} is not: workers on several machines need one PostgreSQL server`);
  }
  return config.databaseUrl ? openStore({ databaseUrl: config.databaseUrl }) : openStore({ dataDir: config.dataDir, readOnly: options.readOnly });
}

/**
 * Load ahead the modules the store of a configuration will need, while the
 * caller does other work; nothing is opened or connected. Errors are left for
 * {@link openConfiguredStore} to report.
 */
export async function prepareConfiguredStore(config: StoreConfig): Promise<void> {
  if (config.databaseUrl) await import('./pg.js');
}
