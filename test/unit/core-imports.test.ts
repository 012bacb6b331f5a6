/**
 * workers/core is pure computation: its modules import only each other,
 * Node's built-ins and npm packages, never the store, queue, jobs, commands or
 * API (project layout, common practice, no source). crs does not import
 * raster, so the two never form a circle. The frozen EPSG tables (a 1.5 MB
 * package) are loaded in one place, on first use.
 */
import { readdirSync, readFileSync } from 'node:fs';
import { dirname, join, relative, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';

const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), '../..');
const CORE = join(ROOT, 'workers/core');

function tsFiles(dir: string): string[] {
  return readdirSync(dir, { withFileTypes: true }).flatMap((e) =>
    e.isDirectory() ? tsFiles(join(dir, e.name)) : e.name.endsWith('.ts') ? [join(dir, e.name)] : [],
  );
}

/** Relative module specifiers of static imports, re-exports and dynamic import() calls. */
function relativeImports(text: string): string[] {
  const out: string[] = [];
  for (const m of text.matchAll(/(?:\bfrom\s*|\bimport\s*\(\s*|\brequire\w*\s*\(\s*)['"](\.{1,2}\/[^'"]+)['"]/g)) out.push(m[1]);
  return out;
}

describe('imports of workers/core', () => {
  const files = tsFiles(CORE);

  it('finds the core modules', () => {
    expect(files.length).toBeGreaterThan(50);
  });

  it('no core module imports anything outside workers/core', () => {
    const outside: string[] = [];
    for (const f of files) {
      for (const spec of relativeImports(readFileSync(f, 'utf8'))) {
        const target = relative(CORE, resolve(dirname(f), spec));
        if (target.startsWith('..')) outside.push(`${relative(ROOT, f)} -> ${spec}`);
      }
    }
    expect(outside).toEqual([]);
  });

  it('crs does not import raster', () => {
    const found: string[] = [];
    for (const f of files.filter((p) => p.startsWith(join(CORE, 'crs')))) {
      for (const spec of relativeImports(readFileSync(f, 'utf8'))) {
        if (relative(CORE, resolve(dirname(f), spec)).startsWith('raster')) found.push(`${relative(ROOT, f)} -> ${spec}`);
      }
    }
    expect(found).toEqual([]);
  });

  it('reaches the frozen EPSG tables only through crs/frozen-epsg.ts, which loads them on first use', () => {
    // a 1.5 MB module: a static import anywhere would load it in every process and worker thread
    const users = files.filter((f) => /['"]geotiff-geokeys-to-proj4['"]/.test(readFileSync(f, 'utf8'))).map((f) => relative(CORE, f));
    expect(users).toEqual(['crs/frozen-epsg.ts']);
    const text = readFileSync(join(CORE, 'crs/frozen-epsg.ts'), 'utf8');
    expect(text).not.toMatch(/^import[^;]*['"]geotiff-geokeys-to-proj4['"]/m);
    expect(text).toMatch(/requireCjs\('geotiff-geokeys-to-proj4'\)/);
  });
});
