/**
 * The start-up bundle's loader (workers/cli-bundle-loader.ts) on small bundles
 * of its own: the code cache is written, accepted, refused when it does not
 * belong to the bundle or is damaged (then rewritten), a bundle whose inputs
 * changed is not used, and a cache that cannot be written costs nothing but
 * the cache. The cache rules are V8's as Node documents them (Node.js v20
 * documentation, "vm" module: `new vm.Script(code, { cachedData })`,
 * `script.cachedDataRejected`, `script.createCachedData()`); the values the
 * bundles compute are plain arithmetic and the RFC 1950 zlib round trip.
 * A V8 isolate keeps what it compiled and then never consults a cache again
 * for the same source, so each load whose cache matters runs in a fresh node
 * process (the loader compiled in dist/, as the bin runs it).
 */
import { mkdirSync, mkdtempSync, readFileSync, readdirSync, rmSync, utimesSync, writeFileSync, statSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { createHash } from 'node:crypto';
import { spawnSync } from 'node:child_process';
import { existsSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { cachePathOf, currentBundleKey, loadBundle, manifestPathOf, type BundleManifest } from '../../workers/cli-bundle-loader.js';

let dir: string;
beforeEach(() => { dir = mkdtempSync(join(tmpdir(), 'heatledger-bundle-test-')); });
afterEach(() => { rmSync(dir, { recursive: true, force: true }); });

const LOADER_JS = fileURLToPath(new URL('../../dist/workers/cli-bundle-loader.js', import.meta.url));

/** Load `bundle` in a fresh node process, call its sumOfSquares(10), save the cache: [cache state, value]. */
function loadInChild(bundle: string, fullRun = true): [string, number] {
  if (!existsSync(LOADER_JS)) throw new Error(`${LOADER_JS} is missing: run \`npm run build\` first`);
  const script = `import { loadBundle } from ${JSON.stringify(LOADER_JS)};
const run = loadBundle(${JSON.stringify(bundle)}, () => Promise.reject(new Error('no import')));
const value = run.exports.sumOfSquares(10);
run.saveCache(${fullRun});
process.stdout.write(JSON.stringify([run.cacheState, value]));`;
  const r = spawnSync(process.execPath, ['--input-type=module', '-e', script], { encoding: 'utf8', timeout: 60_000 });
  if (r.status !== 0) throw new Error(`the child exited with ${r.status}: ${r.stderr}`);
  return JSON.parse(r.stdout) as [string, number];
}

const noImport = (s: string): Promise<unknown> => Promise.reject(new Error(`no import of ${s} expected`));

/** Write a bundle and its manifest (one input file beside it), as the build does. */
function writeBundle(source: string): string {
  const bundle = join(dir, 'b.cjs');
  const input = join(dir, 'input.js');
  writeFileSync(bundle, source);
  writeFileSync(input, '// an input of the bundle\n');
  const b = statSync(bundle), i = statSync(input);
  const manifest: BundleManifest = {
    bundle: { size: b.size, mtimeMs: b.mtimeMs, sha256: createHash('sha256').update(readFileSync(bundle)).digest('hex') },
    inputs: [['input.js', i.size, i.mtimeMs]],
  };
  writeFileSync(manifestPathOf(bundle), JSON.stringify(manifest));
  return bundle;
}

// a function compiled lazily (only when called), so the cache written after the call holds more than the top level
const SOURCE = 'exports.sumOfSquares = function (n) { let s = 0; for (let i = 1; i <= n; i++) s += i * i; return s; };\n';

describe('start-up bundle loader', () => {
  it('runs the bundle, writes the cache after the run, and accepts it next time', () => {
    const bundle = writeBundle(SOURCE);
    // 1² + 2² + ... + 10² = 10·11·21/6 = 385 (sum of squares formula)
    expect(loadInChild(bundle)).toEqual(['missing', 385]);
    expect(statSync(cachePathOf(bundle)).size).toBeGreaterThan(32);
    const written = statSync(cachePathOf(bundle)).mtimeMs;
    expect(loadInChild(bundle)).toEqual(['accepted', 385]);
    // an accepted cache is not rewritten
    expect(statSync(cachePathOf(bundle)).mtimeMs).toBe(written);
  });

  it('ignores a cache made for another bundle (another SHA-256) and rewrites it', () => {
    const bundle = writeBundle(SOURCE);
    expect(loadInChild(bundle)).toEqual(['missing', 385]);
    // the same length of source, other code: V8's own check looks at the length, ours at the hash
    writeBundle(SOURCE.replace('i * i', 'i + i'));
    // 2·(1 + ... + 10) = 110
    expect(loadInChild(bundle)).toEqual(['missing', 110]);
    expect(loadInChild(bundle)).toEqual(['accepted', 110]);
  });

  it('compiles plainly when V8 refuses the cache (made by another V8 version), and rewrites it', () => {
    const bundle = writeBundle(SOURCE);
    loadInChild(bundle);
    const cache = readFileSync(cachePathOf(bundle));
    // after our 32-byte key and 1-byte mark, V8's header: magic number, then the hash of the V8 version that wrote it
    // (V8 source, src/snapshot/code-serializer.h, SerializedCodeData layout; from memory)
    for (let i = 37; i < 41; i++) cache[i] ^= 0xff;
    writeFileSync(cachePathOf(bundle), cache);
    expect(loadInChild(bundle)).toEqual(['rejected', 385]);
    expect(loadInChild(bundle)).toEqual(['accepted', 385]);
  });

  it('keeps a cache made after a partial run until a full run replaces it', () => {
    const bundle = writeBundle(SOURCE);
    expect(loadInChild(bundle, false)).toEqual(['missing', 385]);
    const written = statSync(cachePathOf(bundle)).mtimeMs;
    expect(loadInChild(bundle, false)).toEqual(['partial', 385]);
    // another partial run leaves it as it is
    expect(statSync(cachePathOf(bundle)).mtimeMs).toBe(written);
    expect(loadInChild(bundle, true)).toEqual(['partial', 385]);
    expect(loadInChild(bundle, false)).toEqual(['accepted', 385]);
  });

  it('does not use a bundle whose inputs or own file changed since the build', () => {
    const bundle = writeBundle(SOURCE);
    expect(currentBundleKey(bundle)).not.toBeNull();
    utimesSync(join(dir, 'input.js'), new Date(2000, 0, 1), new Date(2000, 0, 1));
    expect(currentBundleKey(bundle)).toBeNull();
    expect(loadBundle(bundle, noImport)).toBeNull();
    writeBundle(SOURCE);
    writeFileSync(bundle, SOURCE.replace('i * i', 'i * 3')); // same size, written after the record
    utimesSync(bundle, new Date(2001, 0, 1), new Date(2001, 0, 1));
    expect(loadBundle(bundle, noImport)).toBeNull();
    rmSync(manifestPathOf(bundle));
    expect(loadBundle(bundle, noImport)).toBeNull();
  });

  it('keeps running when the cache cannot be written, leaving no temporary file', () => {
    const bundle = writeBundle(SOURCE);
    // a folder (not empty) where the cache file would go: the rename into place fails whoever runs the test
    mkdirSync(join(cachePathOf(bundle), 'occupied'), { recursive: true });
    const run = loadBundle(bundle, noImport)!;
    expect(() => run.saveCache(true)).not.toThrow();
    expect(readdirSync(dir).filter((f) => f.endsWith('.tmp'))).toEqual([]);
    expect((run.exports.sumOfSquares as (n: number) => number)(3)).toBe(14); // 1 + 4 + 9
  });

  it('hands the bundle Node\'s built-ins (zlib loaded on first use) and the bin\'s import()', async () => {
    const bundle = writeBundle(
      'const zlib = require("node:zlib");\n' +
      'exports.roundTrip = (text) => zlib.inflateSync(zlib.deflateSync(Buffer.from(text))).toString();\n' +
      'exports.load = (s) => __heatledgerImport(s);\n',
    );
    const seen: string[] = [];
    const run = loadBundle(bundle, async (s) => { seen.push(s); return { loaded: s }; })!;
    expect((run.exports.roundTrip as (t: string) => string)('surface heat')).toBe('surface heat');
    await expect((run.exports.load as (s: string) => Promise<unknown>)('./commands/ingest.js')).resolves.toEqual({ loaded: './commands/ingest.js' });
    expect(seen).toEqual(['./commands/ingest.js']);
  });
});
