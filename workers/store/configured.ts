/** The store a run configuration names: the PostgreSQL server of DATABASE_URL, else PGlite in the data directory. */
import { InputError } from '../core/errors.js';
import { ENV, type RuntimeConfig } from '../config.js';
import { openStore, type Store } from './store.js';

/**
 * The store for a configuration: a PostgreSQL server when DATABASE_URL is set, else PGlite in dataDir.
 * `readOnly` (status, table, serve): an embedded store must exist already, and is read through its owner when another process owns it.
 */
export async function openConfiguredStore(config: RuntimeConfig, options: { readOnly?: boolean } = {}): Promise<Store> {
  if (config.mode === 'distributed' && !config.databaseUrl) {
    throw new InputError(`${ENV.redisUrl} is set (distributed mode) but ${ENV.databaseUrl} is not: workers on several machines need one PostgreSQL server`);
  }
  return config.databaseUrl ? openStore({ databaseUrl: config.databaseUrl }) : openStore({ dataDir: config.dataDir, readOnly: options.readOnly });
}
