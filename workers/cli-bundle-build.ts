/**
 * `node dist/workers/cli-bundle-build.js` (run by `npm run build` after `tsc`):
 * bundle the command line's light paths into dist/workers/cli-bundle.cjs for
 * the bin's start-up (cli-bundle-loader.ts), record the files it was made from,
 * and write its V8 code cache with a warm-up `zonal` run on a small raster made
 * for the purpose.
 *
 * In the bundle: cli-program.js with everything it imports statically, the
 * `zonal` command and what it imports statically, and commander. Outside it,
 * loaded on use from their compiled modules exactly as without the bundle:
 * every other command, every module reached only by a dynamic import (decoders
 * of other compressions, fraction coverage, the store, the runners) and every
 * other npm package. Modules of our own are taken as free of side effects at
 * import, so a module whose exports the light paths do not use is left out.
 */
import { spawnSync } from 'node:child_process';
import { chmodSync, mkdtempSync, readFileSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join, relative, sep } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { rolldown } from 'rolldown';
import { BUNDLE_IMPORT_NAME, cachePathOf, manifestPathOf, type BundleManifest } from './cli-bundle-loader.js';
import { sha256Hex } from './core/hash.js';
import { writeGeoTiff } from './core/raster/write.js';
import type { Epsg } from './core/units.js';

const WORKERS_DIR = dirname(fileURLToPath(import.meta.url));
export const BUNDLE_PATH = join(WORKERS_DIR, 'cli-bundle.cjs');

/** Commands whose modules go into the bundle (the others load on use). */
const BUNDLED_COMMANDS = new Set(['commands/zonal.js']);
/** npm packages that go into the bundle. */
const BUNDLED_PACKAGES = ['commander'];

function isBundledPackage(id: string): boolean {
  return BUNDLED_PACKAGES.some((name) => id.includes(`${sep}node_modules${sep}${name}${sep}`));
}

/**
 * The bundle's code as the bin runs it: its import() of modules outside it
 * renamed (import() inside a vm.Script needs a flag on Node 20; the bin passes
 * its own import() under that name), and ASCII only, the few other characters
 * as \u escapes (the same characters in strings, regular expressions and
 * identifiers), so the bin reads it as latin1 into a one-byte string, which V8
 * scans faster and keeps in half the memory of a two-byte one.
 */
export function finishBundleCode(code: string): string {
  const renamed = code.replace(/\bimport\((["'])\.\//g, `${BUNDLE_IMPORT_NAME}($1./`);
  if (/\bimport\(\s*["'`]/.test(renamed)) throw new Error('the CLI bundle holds an import() of a module outside the bundle\'s folder');
  if (/\brequire\(\s*["'`]\./.test(renamed)) throw new Error('the CLI bundle requires a module of ours it should hold or import on use');
  if (/String\.raw/.test(renamed)) throw new Error('the CLI bundle holds String.raw, whose text a \\u escape would change');
  return renamed.replace(/[^\x00-\x7f]/g, (c) => `\\u${c.charCodeAt(0).toString(16).padStart(4, '0')}`);
}

/** Write the bundle and its manifest; returns the bundle's size in bytes and its module count. */
export async function buildCliBundle(): Promise<{ bytes: number; modules: number }> {
  const ownPrefix = WORKERS_DIR + sep;
  const build = await rolldown({
    input: join(WORKERS_DIR, 'cli-program.js'),
    platform: 'node',
    logLevel: 'warn',
    treeshake: {
      moduleSideEffects: (id: string, external: boolean) => !(id.startsWith(ownPrefix) || (external && id.startsWith('.'))),
    },
    plugins: [
      {
        name: 'heatledger-light-paths',
        async resolveId(source, importer, extra) {
          if (source.startsWith('node:')) return { id: source, external: true };
          const resolved = await this.resolve(source, importer, { ...extra, skipSelf: true });
          if (!resolved) return null;
          if (resolved.id.includes(`${sep}node_modules${sep}`)) return isBundledPackage(resolved.id) ? null : { id: source, external: true };
          const own = relative(WORKERS_DIR, resolved.id).split(sep).join('/');
          const bundled = extra.kind !== 'dynamic-import' || BUNDLED_COMMANDS.has(own);
          return bundled ? null : { id: resolved.id, external: 'relative' };
        },
      },
    ],
  });
  // without comments: a third less to read and scan at every start (stack traces name the bundle's lines either way)
  const output = await build.generate({ format: 'cjs', codeSplitting: false, comments: false });
  await build.close();
  const chunk = output.output.find((o) => o.type === 'chunk');
  if (!chunk) throw new Error('rolldown made no CLI bundle');
  writeFileSync(BUNDLE_PATH, finishBundleCode(chunk.code));
  const inputs: BundleManifest['inputs'] = [];
  for (const id of Object.keys(chunk.modules)) {
    if (id.startsWith('\0')) continue; // rolldown's own runtime
    const s = statSync(id);
    inputs.push([relative(WORKERS_DIR, id), s.size, s.mtimeMs]);
  }
  if (/[^\x00-\x7f]/.test(readFileSync(BUNDLE_PATH, 'latin1'))) throw new Error(`${BUNDLE_PATH} holds characters outside ASCII`);
  const written = statSync(BUNDLE_PATH);
  const sha256 = sha256Hex(readFileSync(BUNDLE_PATH));
  const manifest: BundleManifest = { bundle: { size: written.size, mtimeMs: written.mtimeMs, sha256 }, inputs };
  writeFileSync(manifestPathOf(BUNDLE_PATH), JSON.stringify(manifest));
  return { bytes: written.size, modules: inputs.length };
}

/**
 * Run the bin once on a small raster and district file of its own (a UInt16
 * DEFLATE scene with scale and offset in a UTM zone, two square districts), so
 * the cache it writes holds the functions a `zonal` run compiles.
 */
export async function warmUpCodeCache(): Promise<boolean> {
  rmSync(cachePathOf(BUNDLE_PATH), { force: true });
  const dir = mkdtempSync(join(tmpdir(), 'heatledger-warm-up-'));
  try {
    const size = 64;
    const data = new Uint16Array(size * size);
    for (let i = 0; i < data.length; i++) data[i] = 40000 + (i % 97) * 13;
    const raster = join(dir, 'warm-up_lst.tif');
    // 30 m pixels from (500000, 5000000) in WGS 84 / UTM zone 33N
    await writeGeoTiff(raster, {
      width: size, height: size, data, epsg: 32633 as Epsg,
      transform: { a: 30, b: 0, c: 500000, d: 0, e: -30, f: 5000000 },
      nodata: 0, scale: 0.00341802, offset: 149, predictor: 2, layout: { tiled: true, tileWidth: 32, tileHeight: 32 },
      metadata: { ACQUISITION_TIME: '2024-07-14T10:00:00Z' },
    });
    const square = (lon: number, lat: number) => [[[lon, lat], [lon + 0.008, lat], [lon + 0.008, lat - 0.006], [lon, lat - 0.006], [lon, lat]]];
    const districts = join(dir, 'warm-up_districts.geojson');
    writeFileSync(districts, JSON.stringify({
      type: 'FeatureCollection',
      features: [
        { type: 'Feature', properties: { id: 'a', name: 'A' }, geometry: { type: 'Polygon', coordinates: square(15.002, 45.15) } },
        { type: 'Feature', properties: { id: 'b', name: 'B' }, geometry: { type: 'Polygon', coordinates: square(15.012, 45.15) } },
      ],
    }));
    const run = spawnSync(process.execPath, [join(WORKERS_DIR, 'cli.js'), 'zonal', raster, '--districts', districts, '--format', 'json'], { encoding: 'utf8', timeout: 60_000 });
    if (run.status !== 0) throw new Error(`the warm-up zonal run exited with ${run.status}: ${run.stderr.trim()}`);
    return statSync(cachePathOf(BUNDLE_PATH), { throwIfNoEntry: false }) !== undefined;
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  try {
    // the bin runs by its first line (cli.ts), as npm's link to it would: executable, as npm makes it
    chmodSync(join(WORKERS_DIR, 'cli.js'), 0o755);
    const { bytes, modules } = await buildCliBundle();
    const cached = await warmUpCodeCache();
    const cacheBytes = cached ? readFileSync(cachePathOf(BUNDLE_PATH)).length : 0;
    process.stdout.write(`cli bundle: ${relative(process.cwd(), BUNDLE_PATH)} (${modules} modules, ${(bytes / 1024).toFixed(0)} KiB; code cache ${cached ? `${(cacheBytes / 1024).toFixed(0)} KiB` : 'not written'})\n`);
  } catch (e) {
    process.stderr.write(`cannot make the CLI bundle: ${(e as Error)?.stack ?? String(e)}\n`);
    process.exitCode = 1;
  }
}
