/** The store module: one interface over PostgreSQL and PGlite, migrations, named queries, repository. */
export { openStore, DEFAULT_DATA_DIR, type Store, type Queryable, type Transaction, type OpenStoreOptions } from './store.js';
export { migrate, listMigrations, type Migration } from './migrate.js';
export { namedQuery } from './queries.js';
export { sqlDir } from './paths.js';
export * from './repo.js';
