import type { Queryable } from './interface.js';

/** Store identity: part of every job id, so a fresh database never inherits another's completed jobs. */
export async function storeIdentity(store: Queryable): Promise<string> {
  const rows = await store.query<{ sys: string; db: number; name: string }>(
    `SELECT (SELECT system_identifier::text FROM pg_control_system()) AS sys,
            (SELECT oid::int FROM pg_database WHERE datname = current_database()) AS db,
            current_database() AS name`,
  );
  return `${rows[0].sys}/${rows[0].db}/${rows[0].name}`;
}
