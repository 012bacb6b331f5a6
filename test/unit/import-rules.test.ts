/**
 * Which room may import what (project layout, common practice, no source):
 * - the database and queue drivers (`pg`, `@electric-sql/pglite`, `bullmq`,
 *   `ioredis`) are imported only under workers/store and workers/queue, so the
 *   embedded/distributed choice is made in one place per side;
 * - the only readers of REDIS_URL and DATABASE_URL are there too;
 * - the API imports nothing from workers/commands (the CLI's commands);
 * - of the commands, only serve (with serve-jobs.ts, its ingest jobs) and report import from api/;
 * - playwright-core (the browser driver) is imported only by api/report/pdf.ts;
 * - the report draws no SVG of its own: its pictures come from the page's drawing code.
 * Static imports, re-exports and dynamic import() calls all count.
 */
import { readdirSync, readFileSync } from 'node:fs';
import { dirname, join, relative, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';

const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), '../..');
const DRIVERS = ['pg', '@electric-sql/pglite', 'bullmq', 'ioredis'];
const DRIVER_ROOMS = ['workers/queue/', 'workers/store/'];

function tsFiles(dir: string): string[] {
  return readdirSync(dir, { withFileTypes: true }).flatMap((e) =>
    e.isDirectory() ? (e.name === 'node_modules' ? [] : tsFiles(join(dir, e.name))) : e.name.endsWith('.ts') ? [join(dir, e.name)] : [],
  );
}

/** Module specifiers of static imports, re-exports and dynamic import() calls. */
export function importSpecifiers(text: string): string[] {
  const out: string[] = [];
  for (const m of text.matchAll(/(?:\bfrom\s*|\bimport\s*\(\s*|\bimport\s+|\brequire\s*\(\s*)['"]([^'"]+)['"]/g)) out.push(m[1]);
  return out;
}

/** The npm package a specifier names ('pg/lib/x' → 'pg', '@scope/p/x' → '@scope/p'), or null for a relative or node: one. */
function packageOf(spec: string): string | null {
  if (spec.startsWith('.') || spec.startsWith('/') || spec.startsWith('node:')) return null;
  const parts = spec.split('/');
  return spec.startsWith('@') ? parts.slice(0, 2).join('/') : parts[0];
}

/** A read of one of the two URLs from an environment object. */
const URL_READ = /process\.env\s*(?:\.\s*(?:REDIS_URL|DATABASE_URL)\b|\[\s*(?:ENV\.(?:redisUrl|databaseUrl)|['"](?:REDIS_URL|DATABASE_URL)['"])\s*\])|\benv\s*\[\s*ENV\.(?:redisUrl|databaseUrl)\s*\]/;

const files = ['workers', 'api', 'demo-data'].flatMap((d) => tsFiles(join(ROOT, d)));
const rel = (f: string) => relative(ROOT, f).split('\\').join('/');

describe('import rules', () => {
  it('finds the sources', () => {
    expect(files.length).toBeGreaterThan(100);
    expect(files.some((f) => rel(f) === 'workers/store/pg.ts')).toBe(true);
  });

  it('the specifier reader sees every import form (a rule that reads nothing could not fail)', () => {
    const sample = [
      "import pg from 'pg';",
      "import { Queue } from \"bullmq\";",
      "export { x } from 'ioredis';",
      "const m = await import('@electric-sql/pglite/worker');",
      "import 'ioredis';",
    ].join('\n');
    expect(importSpecifiers(sample).map(packageOf)).toEqual(['pg', 'bullmq', 'ioredis', '@electric-sql/pglite', 'ioredis']);
  });

  it('the URL-read pattern sees the forms a read takes', () => {
    for (const read of ['process.env.REDIS_URL', "process.env['DATABASE_URL']", 'process.env[ENV.redisUrl]', 'env[ENV.databaseUrl]']) expect(read).toMatch(URL_READ);
    expect('ENV.redisUrl').not.toMatch(URL_READ);
  });

  it('database and queue drivers are imported only in workers/queue and workers/store', () => {
    const found: string[] = [];
    for (const f of files) {
      if (DRIVER_ROOMS.some((room) => rel(f).startsWith(room))) continue;
      for (const spec of importSpecifiers(readFileSync(f, 'utf8'))) {
        const pkg = packageOf(spec);
        if (pkg !== null && DRIVERS.includes(pkg)) found.push(`${rel(f)} -> ${spec}`);
      }
    }
    expect(found).toEqual([]);
  });

  it('the drivers are imported in those rooms (the rule looks at real imports)', () => {
    const inRooms = new Set<string>();
    for (const f of files.filter((x) => DRIVER_ROOMS.some((room) => rel(x).startsWith(room)))) {
      for (const spec of importSpecifiers(readFileSync(f, 'utf8'))) {
        const pkg = packageOf(spec);
        if (pkg !== null && DRIVERS.includes(pkg)) inRooms.add(pkg);
      }
    }
    expect([...inRooms].sort()).toEqual([...DRIVERS].sort());
  });

  it('only workers/queue and workers/store read REDIS_URL or DATABASE_URL from the environment', () => {
    const found: string[] = [];
    for (const f of files) {
      if (DRIVER_ROOMS.some((room) => rel(f).startsWith(room))) continue;
      if (URL_READ.test(readFileSync(f, 'utf8'))) found.push(rel(f));
    }
    expect(found).toEqual([]);
  });

  it('api/ imports nothing from workers/commands/', () => {
    const commands = join(ROOT, 'workers', 'commands');
    const found: string[] = [];
    for (const f of files.filter((x) => rel(x).startsWith('api/'))) {
      for (const spec of importSpecifiers(readFileSync(f, 'utf8'))) {
        if (spec.startsWith('.') && !relative(commands, resolve(dirname(f), spec)).startsWith('..')) found.push(`${rel(f)} -> ${spec}`);
      }
    }
    expect(found).toEqual([]);
  });

  it('of the commands, only serve (and its serve-jobs.ts) and report import from api/', () => {
    const api = join(ROOT, 'api');
    const found = new Set<string>();
    for (const f of files.filter((x) => rel(x).startsWith('workers/commands/'))) {
      for (const spec of importSpecifiers(readFileSync(f, 'utf8'))) {
        if (spec.startsWith('.') && !relative(api, resolve(dirname(f), spec)).startsWith('..')) found.add(rel(f));
      }
    }
    expect([...found].sort()).toEqual(['workers/commands/report.ts', 'workers/commands/serve-jobs.ts', 'workers/commands/serve.ts']);
  });

  it('playwright-core is imported only by api/report/pdf.ts', () => {
    const found = files.filter((f) => importSpecifiers(readFileSync(f, 'utf8')).some((s) => packageOf(s) === 'playwright-core')).map(rel);
    expect(found).toEqual(['api/report/pdf.ts']);
  });

  it('api/report/ writes no SVG element of its own (one drawing code, api/web/draw/)', () => {
    const report = files.filter((f) => rel(f).startsWith('api/report/'));
    expect(report.length).toBeGreaterThan(3);
    expect(report.filter((f) => /<(svg|path|rect|circle|polyline)\b/.test(readFileSync(f, 'utf8'))).map(rel)).toEqual([]);
  });
});
