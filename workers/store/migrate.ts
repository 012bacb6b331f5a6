/**
 * Migrations runner: applies sql/migrations/NNN_name.sql in numeric order, each
 * once and inside its own transaction, and records it in schema_migrations.
 * On the server, an advisory lock makes two processes starting at once take
 * turns; the second one then finds nothing left to apply.
 */
import fs from 'node:fs';
import path from 'node:path';
import { ServiceError } from '../core/errors.js';
import { sqlDir } from './paths.js';
import type { Store } from './interface.js';

export interface Migration {
  /** Number from the file name (001 → 1). */
  version: number;
  /** File name without `.sql`, e.g. '001_init'; what `migrate` reports as applied. */
  id: string;
  name: string;
  sql: string;
}

const FILE_RE = /^(\d{3,})_([a-z0-9_]+)\.sql$/;
const LOCK_KEY = 'heatledger:migrations';

/** Read the migrations folder (default: the project's sql/migrations), sorted by version. */
export function listMigrations(dir: string = path.join(sqlDir(), 'migrations')): Migration[] {
  const out: Migration[] = [];
  for (const file of fs.readdirSync(dir)) {
    if (!file.endsWith('.sql')) continue;
    const m = FILE_RE.exec(file);
    if (!m) throw new Error(`${path.join(dir, file)}: migration file names must look like 001_name.sql`);
    out.push({ version: Number(m[1]), id: file.slice(0, -4), name: m[2], sql: fs.readFileSync(path.join(dir, file), 'utf8') });
  }
  out.sort((a, b) => a.version - b.version);
  for (let i = 1; i < out.length; i++) {
    if (out[i].version === out[i - 1].version) {
      throw new Error(`${dir}: two migrations share version ${out[i].version} (${out[i - 1].id}, ${out[i].id})`);
    }
  }
  return out;
}

/**
 * Bring `store` up to date. Returns the ids of the migrations applied now
 * (empty when the schema was current). Throws ServiceError when the database
 * holds a newer schema than this program knows.
 */
export async function migrate(store: Store, migrations: Migration[] = listMigrations()): Promise<{ applied: string[] }> {
  const known = new Set(migrations.map((m) => m.version));
  const checkKnown = (rows: { version: number }[]): Set<number> => {
    const unknown = rows.filter((r) => !known.has(r.version)).map((r) => r.version);
    if (unknown.length > 0) {
      throw new ServiceError(
        `the ${store.kind} database has schema migration ${unknown.join(', ')} that this heatledger does not know; upgrade heatledger`,
      );
    }
    return new Set(rows.map((r) => r.version));
  };
  // A schema already up to date (every open but a store's first) is read without the lock:
  // migrations only ever add rows, so nothing is left to apply, and on the server the
  // lock's session would be a second connection (a backend started for nothing).
  const [{ present }] = await store.query<{ present: boolean }>(`SELECT to_regclass('schema_migrations') IS NOT NULL AS present`);
  if (present) {
    const done = checkKnown(await store.query<{ version: number }>('SELECT version FROM schema_migrations ORDER BY version'));
    if (migrations.every((m) => done.has(m.version))) return { applied: [] };
  }
  const body = async (): Promise<{ applied: string[] }> => {
    await store.exec(`CREATE TABLE IF NOT EXISTS schema_migrations (
      version integer PRIMARY KEY, name text NOT NULL, applied_at timestamptz NOT NULL DEFAULT now())`);
    const rows = await store.query<{ version: number }>('SELECT version FROM schema_migrations ORDER BY version');
    const done = checkKnown(rows);
    const applied: string[] = [];
    for (const m of migrations) {
      if (done.has(m.version)) continue;
      await store.transaction(async (tx) => {
        await tx.exec(m.sql);
        await tx.query('INSERT INTO schema_migrations (version, name) VALUES ($1, $2)', [m.version, m.name]);
      });
      applied.push(m.id);
    }
    return { applied };
  };
  return store.withLock ? store.withLock(LOCK_KEY, body) : body();
}
