/**
 * The prepared template of a new embedded store. PGlite's initdb takes 3-7 s on
 * a loaded 2-core machine; a new store instead starts from a data directory
 * that was made once, by `npm run build` (./template-build.ts), by running
 * initdb and then every migration of sql/migrations. The migrations stay the
 * one source of the schema: the template records which migrations it holds
 * (version, name and the SHA-256 of each file's text) and the PGlite version
 * that wrote it, and a template whose record differs from this program's is
 * refused (the store is then made from scratch, as without a template).
 *
 * The template is kept twice, from one dump (PGlite's `dumpDataDir`):
 *   dist/store-template/pgdata/      the data directory, copied into a new data directory
 *                                    (a file copy is about twice as fast as PGlite's loadDataDir)
 *   dist/store-template/pgdata.tar   the same files as a tar, PGlite's `loadDataDir` for a store in memory
 *   dist/store-template/template.json  the record ({ schema, migrations, pglite })
 */
import fs from 'node:fs';
import path from 'node:path';
import { createRequire } from 'node:module';
import { sha256Hex } from '../core/hash.js';
import { projectPath } from '../paths.js';
import { listMigrations, type Migration } from './migrate.js';

/** The file whose presence makes a folder a PostgreSQL data directory; copied last. */
export const PG_VERSION_FILE = 'PG_VERSION';

export interface TemplateRecord {
  /** SHA-256 over the migrations, the PGlite version and how the template is made (TEMPLATE_MAKING). */
  schema: string;
  /** The migrations the template holds, e.g. ['001_init', ...]. */
  migrations: string[];
  /** The PGlite version that wrote the data directory. */
  pglite: string;
}

/** Where the template lives: beside the compiled program, in the build output. */
export function templateDir(): string {
  return projectPath('dist', 'store-template');
}

/** The version of the installed PGlite (a data directory is tied to the engine that wrote it). */
export function pgliteVersion(): string {
  const require = createRequire(import.meta.url);
  const main = require.resolve('@electric-sql/pglite');
  // .../@electric-sql/pglite/dist/index.cjs -> .../@electric-sql/pglite/package.json
  const pkg = JSON.parse(fs.readFileSync(path.join(path.dirname(main), '..', 'package.json'), 'utf8')) as { version: string };
  return pkg.version;
}

/**
 * How the template is made (writePgliteTemplate in ./pglite.ts), part of its
 * record: raise it when that changes what a template holds, so that the build
 * makes the template again. 2: without the databases template0 and template1.
 */
const TEMPLATE_MAKING = 2;

/** The record a template made now from `migrations` would carry. */
export function templateRecord(migrations: Migration[] = listMigrations(), pglite: string = pgliteVersion()): TemplateRecord {
  const lines = migrations.map((m) => `${m.version}:${m.name}:${sha256Hex(m.sql)}`);
  return { schema: sha256Hex([`pglite ${pglite}`, `making ${TEMPLATE_MAKING}`, ...lines].join('\n')), migrations: migrations.map((m) => m.id), pglite };
}

/** The record of the template in `dir`, or null when there is none (or it cannot be read). */
export function readTemplateRecord(dir: string = templateDir()): TemplateRecord | null {
  try {
    const rec = JSON.parse(fs.readFileSync(path.join(dir, 'template.json'), 'utf8')) as TemplateRecord;
    return typeof rec?.schema === 'string' ? rec : null;
  } catch {
    return null;
  }
}

/** A template that matches this program's migrations, or null (none, unreadable, or another schema: refused). */
export interface UsableTemplate {
  dir: string;
  record: TemplateRecord;
}

export function usableTemplate(dir: string = templateDir(), expected: TemplateRecord = templateRecord()): UsableTemplate | null {
  const record = readTemplateRecord(dir);
  if (!record || record.schema !== expected.schema) return null;
  if (!fs.existsSync(path.join(dir, 'pgdata', PG_VERSION_FILE)) || !fs.existsSync(path.join(dir, 'pgdata.tar'))) return null;
  return { dir, record };
}

/**
 * Copy the template's data directory into `dataDir` (which holds no store yet).
 * Leftovers of an earlier copy that was cut short are removed first, and
 * PG_VERSION is copied last, so a folder only looks like a store once it is whole.
 */
export function copyTemplateInto(template: UsableTemplate, dataDir: string): void {
  const from = path.join(template.dir, 'pgdata');
  const entries = fs.readdirSync(from).filter((e) => e !== PG_VERSION_FILE);
  for (const e of entries) fs.rmSync(path.join(dataDir, e), { recursive: true, force: true });
  for (const e of entries) fs.cpSync(path.join(from, e), path.join(dataDir, e), { recursive: true });
  fs.copyFileSync(path.join(from, PG_VERSION_FILE), path.join(dataDir, PG_VERSION_FILE));
}

/** The template as a tar (PGlite's loadDataDir), for a store in memory. */
export function templateTar(template: UsableTemplate): Blob {
  return new Blob([fs.readFileSync(path.join(template.dir, 'pgdata.tar'))]);
}
