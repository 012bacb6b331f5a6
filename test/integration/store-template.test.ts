/**
 * A new embedded store starts from the prepared template (dist/store-template,
 * made by `npm run build` from sql/migrations): the schema it holds is the one
 * the migrations make on a store created from scratch by the engine's initdb,
 * catalog entry by catalog entry; a template recorded for other migrations or
 * another engine version is refused; a copy cut short is cleaned up; and a
 * store never writes into the template it came from.
 * The reference is PostgreSQL's own catalog (pg_catalog / information_schema,
 * PostgreSQL manual, chapters 37 and 53) read on both stores.
 */
import crypto from 'node:crypto';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { listMigrations } from '../../workers/store/migrate.js';
import { openPgliteStore } from '../../workers/store/pglite.js';
import { openStore, prepareStore, type Store } from '../../workers/store/store.js';
import { ensureStoreTemplate } from '../../workers/store/template-build.js';
import { readTemplateRecord, templateDir, templateRecord, usableTemplate } from '../../workers/store/template.js';

/** Everything the migrations define, as sorted text lines from the catalog. */
async function schemaOf(store: Store): Promise<string[]> {
  const rows = await store.query<{ line: string }>(`
    SELECT 'column ' || table_name || '.' || column_name || ' ' || data_type || ' null=' || is_nullable || ' default=' || coalesce(column_default, '') AS line
      FROM information_schema.columns WHERE table_schema = 'public'
    UNION ALL
    SELECT 'constraint ' || conrelid::regclass::text || ' ' || conname || ' ' || pg_get_constraintdef(oid)
      FROM pg_constraint WHERE connamespace = 'public'::regnamespace
    UNION ALL
    SELECT 'index ' || indexdef FROM pg_indexes WHERE schemaname = 'public'
    UNION ALL
    SELECT 'function ' || pg_get_functiondef(p.oid) FROM pg_proc p WHERE p.pronamespace = 'public'::regnamespace
    UNION ALL
    SELECT 'trigger ' || pg_get_triggerdef(t.oid) FROM pg_trigger t JOIN pg_class c ON c.oid = t.tgrelid
      WHERE c.relnamespace = 'public'::regnamespace AND NOT t.tgisinternal
    UNION ALL
    SELECT 'migration ' || version || ' ' || name FROM schema_migrations`);
  return rows.map((r) => r.line).sort();
}

/** SHA-256 of every file under `dir`, by relative path. */
function hashTree(dir: string): Record<string, string> {
  const out: Record<string, string> = {};
  for (const e of fs.readdirSync(dir, { recursive: true, withFileTypes: true })) {
    if (!e.isFile()) continue;
    const p = path.join(e.parentPath, e.name);
    out[path.relative(dir, p)] = crypto.createHash('sha256').update(fs.readFileSync(p)).digest('hex');
  }
  return out;
}

describe('store template', () => {
  let root: string;
  let scratchSchema: string[];

  beforeAll(async () => {
    root = fs.mkdtempSync(path.join(os.tmpdir(), 'heatledger-template-'));
    // `npm test` builds the template first; a run of this file alone makes it if missing or stale
    await ensureStoreTemplate();
    const scratch = await openPgliteStore({ dataDir: path.join(root, 'scratch'), memory: false, fromScratch: true });
    try {
      await prepareStore(scratch);
      scratchSchema = await schemaOf(scratch);
    } finally {
      await scratch.close();
    }
  });

  afterAll(() => {
    if (root) fs.rmSync(root, { recursive: true, force: true });
  });

  it('records the migrations of sql/migrations and the engine version', () => {
    const record = readTemplateRecord();
    expect(record).toEqual(templateRecord());
    expect(record!.migrations).toEqual(listMigrations().map((m) => m.id));
    expect(usableTemplate()).not.toBeNull();
  });

  it('gives a new store on disk, and one in memory, the schema the migrations make from scratch', async () => {
    // sanity of the reference: every migration applied, the tables of 001_init present
    expect(scratchSchema).toContain(`migration ${listMigrations().at(-1)!.version} ${listMigrations().at(-1)!.name}`);
    expect(scratchSchema.some((l) => l.startsWith('column zonal_stats.mean_k double precision'))).toBe(true);
    const onDisk = await openStore({ dataDir: path.join(root, 'on-disk'), command: 'test' });
    try {
      expect(await schemaOf(onDisk)).toEqual(scratchSchema);
    } finally {
      await onDisk.close();
    }
    const inMemory = await openStore({ memory: true });
    try {
      expect(await schemaOf(inMemory)).toEqual(scratchSchema);
    } finally {
      await inMemory.close();
    }
  });

  it('refuses a template recorded for other migrations or another engine version', () => {
    const all = listMigrations();
    expect(usableTemplate(templateDir(), templateRecord(all.slice(0, -1)))).toBeNull();
    const edited = all.map((m, i) => (i === all.length - 1 ? { ...m, sql: `${m.sql}\n-- edited` } : m));
    expect(usableTemplate(templateDir(), templateRecord(edited))).toBeNull();
    expect(usableTemplate(templateDir(), templateRecord(all, '0.0.1'))).toBeNull();
    // a folder without a record is no template
    expect(usableTemplate(path.join(root, 'nothing-here'))).toBeNull();
  });

  it('cleans up a copy that was cut short, and never writes into the template', async () => {
    const before = hashTree(path.join(templateDir(), 'pgdata'));
    const dataDir = path.join(root, 'cut-short');
    // what an interrupted copy leaves: some of the engine's folders, no PG_VERSION
    fs.mkdirSync(path.join(dataDir, 'base', '1'), { recursive: true });
    fs.writeFileSync(path.join(dataDir, 'base', '1', '1259'), 'half a file');
    fs.writeFileSync(path.join(dataDir, 'base', '1', 'stray-leftover'), 'not from the template');
    fs.mkdirSync(path.join(dataDir, 'global'));
    let store = await openStore({ dataDir, command: 'test' });
    try {
      expect(fs.existsSync(path.join(dataDir, 'base', '1', 'stray-leftover'))).toBe(false);
      expect(await schemaOf(store)).toEqual(scratchSchema);
      await store.query(`INSERT INTO districts (id, name, geometry, area_m2) VALUES ('quay', 'Quay', '{"type":"Polygon","coordinates":[]}', 5)`);
    } finally {
      await store.close();
    }
    store = await openStore({ dataDir, command: 'test' });
    try {
      expect(await store.query('SELECT id, area_m2 FROM districts')).toEqual([{ id: 'quay', area_m2: 5 }]);
    } finally {
      await store.close();
    }
    expect(hashTree(path.join(templateDir(), 'pgdata'))).toEqual(before);
  });
});
