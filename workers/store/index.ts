/** The store module: one interface over the server and the embedded engine, migrations, named queries, and the tables' functions. */
export { openStore, DEFAULT_DATA_DIR, type Store, type Queryable, type Transaction, type OpenStoreOptions } from './store.js';
export { migrate, listMigrations, type Migration } from './migrate.js';
export { namedQuery } from './queries.js';
export { sqlDir } from './paths.js';
export type { Db } from './db.js';
export * from './districts.js';
export * from './runs.js';
export * from './scenes.js';
export * from './zonal-stats.js';
export * from './thermal-scenes.js';
export * from './derived.js';
export * from './district-tables.js';
export { storeIdentity } from './identity.js';
