/**
 * Start-up of the `heatledger` bin from one bundled file with a V8 code cache.
 *
 * Hand-written because Node 20 has no compile cache for modules
 * (module.enableCompileCache and NODE_COMPILE_CACHE come with Node 22) and a
 * start-up snapshot needs `--snapshot-blob` on the node command line, which a
 * bin cannot add. `vm.Script` with `cachedData` is the cache Node 20 offers; it
 * needs a classic script, so the build (cli-bundle-build.ts) writes the command
 * line's light paths (help, version, `zonal`) as one CommonJS file,
 * dist/workers/cli-bundle.cjs. Every other command stays in its own compiled
 * module and loads on use, as before.
 *
 * Measured (2 cores shared with other work, 20 interleaved runs each, median
 * CPU seconds of the whole process): `heatledger zonal` on the bench's clip
 * 0.367 s from the compiled modules (75 files) -> 0.300 s from the bundle
 * (7 files); `heatledger --version` 0.086 -> 0.074 s, where `node -e ""`
 * takes 0.057 s.
 *
 * Safety: the bundle is used only while it and every file it was made from have
 * the size and modification time recorded at build time (a `tsc` run after the
 * build makes the command line load the compiled modules instead, never stale
 * code). The cache carries the SHA-256 of the bundle it was made for (recorded
 * by the build); V8
 * refuses a cache of another V8 version or other flags (`cachedDataRejected`),
 * the script is then compiled plainly and the cache rewritten after the run.
 * Writing goes to a private temporary file renamed into place; a read-only
 * dist/ only means no cache.
 */
import { readFileSync, renameSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { dirname, resolve } from 'node:path';
import { Script } from 'node:vm';

/** Name the bundle calls its dynamic imports by (the build renames `import(` of its external modules). */
export const BUNDLE_IMPORT_NAME = '__heatledgerImport';

/**
 * What the build records beside the bundle: the bundle's own size, modification
 * time and SHA-256 (hex), and its inputs as [path relative to the bundle's folder, size, mtimeMs].
 */
export interface BundleManifest {
  bundle: { size: number; mtimeMs: number; sha256: string };
  inputs: [string, number, number][];
}

/**
 * The code cache as found: accepted (made after a full run), partial (accepted,
 * but made after a run that compiled only part of the bundle), rejected by V8,
 * or missing (none, or one made for another bundle).
 */
export type CacheState = 'accepted' | 'partial' | 'rejected' | 'missing';

export interface LoadedBundle {
  exports: Record<string, unknown>;
  cacheState: CacheState;
  /**
   * Write the code cache (the functions compiled so far included) when there
   * was none or V8 refused it, or when it was partial and this run was a full
   * one (`fullRun`: a run of the command the bundle is mostly for). Never throws.
   */
  saveCache(fullRun: boolean): void;
}

/** The cache file: the bundle's SHA-256 (32 bytes), one byte 1 = made after a full run / 0 = partial, V8's data. */
const KEY_BYTES = 32;
const HEADER_BYTES = KEY_BYTES + 1;

/**
 * Built-in modules the bundle requires at its top level but the light paths
 * rarely use: commander's child_process (for executable subcommands, which
 * heatledger has none of) and zlib (only once a DEFLATE block is decoded).
 * They load on first use, sparing `--help`, `--version` and every early
 * error ~3-4 ms of CPU each (measured with process.cpuUsage around require).
 */
const LAZY_BUILTINS = new Set(['node:child_process', 'node:zlib']);

/**
 * The bundle's `require`: built-ins straight from process.getBuiltinModule
 * (making a CommonJS require costs ~2-4 ms of CPU at start-up, measured with
 * --cpu-prof), those above on first use; anything else through Node's require
 * for the bundle's path, made on first need.
 */
function bundleRequire(bundlePath: string): NodeJS.Require {
  let nodeRequire: NodeJS.Require | undefined;
  const withBuiltins = process as { getBuiltinModule?: (id: string) => unknown };
  const real = (id: string): unknown => {
    const builtin = withBuiltins.getBuiltinModule?.(id);
    if (builtin !== undefined) return builtin;
    nodeRequire ??= createRequire(bundlePath);
    return nodeRequire(id);
  };
  const lazy = (id: string): unknown => {
    let loaded: object | undefined;
    const target = (): object => (loaded ??= real(id) as object);
    return new Proxy({}, {
      get: (_t, key) => Reflect.get(target(), key),
      has: (_t, key) => Reflect.has(target(), key),
      ownKeys: () => Reflect.ownKeys(target()),
      getOwnPropertyDescriptor: (_t, key) => {
        const d = Reflect.getOwnPropertyDescriptor(target(), key);
        return d === undefined ? undefined : { ...d, configurable: true };
      },
    });
  };
  return ((id: string) => (LAZY_BUILTINS.has(id) ? lazy(id) : real(id))) as NodeJS.Require;
}

/** The manifest file beside a bundle. */
export function manifestPathOf(bundlePath: string): string {
  return bundlePath.replace(/\.cjs$/, '.json');
}

/** The code cache file beside a bundle. */
export function cachePathOf(bundlePath: string): string {
  return bundlePath.replace(/\.cjs$/, '.cache');
}

function unchanged(path: string, size: number, mtimeMs: number): boolean {
  const s = statSync(path, { throwIfNoEntry: false });
  return s !== undefined && s.size === size && s.mtimeMs === mtimeMs;
}

/**
 * The bundle's SHA-256 as the build recorded it (the key of its code cache)
 * when the bundle and every input still have their recorded size and
 * modification time; else null.
 */
export function currentBundleKey(bundlePath: string): Buffer | null {
  let manifest: BundleManifest;
  try {
    manifest = JSON.parse(readFileSync(manifestPathOf(bundlePath), 'utf8')) as BundleManifest;
  } catch {
    return null;
  }
  const { bundle, inputs } = manifest ?? {};
  if (!bundle || typeof bundle.sha256 !== 'string' || !/^[0-9a-f]{64}$/.test(bundle.sha256)) return null;
  if (!Array.isArray(inputs) || inputs.length === 0) return null;
  if (!unchanged(bundlePath, bundle.size, bundle.mtimeMs)) return null;
  const dir = dirname(bundlePath);
  for (const [rel, size, mtimeMs] of inputs) {
    if (!unchanged(resolve(dir, rel), size, mtimeMs)) return null;
  }
  return Buffer.from(bundle.sha256, 'hex');
}

/**
 * Load the bundle at `bundlePath` (CommonJS) with its code cache, or null when
 * there is no current bundle (the caller imports the compiled modules).
 * @param importModule the bundle's `import()` of modules outside it (specifiers relative to the bundle's folder)
 */
export function loadBundle(bundlePath: string, importModule: (specifier: string) => Promise<unknown>): LoadedBundle | null {
  // the key comes from the build's record: hashing here would load node:crypto (~10 ms of CPU)
  const key = currentBundleKey(bundlePath);
  if (key === null) return null;
  let source: string;
  try {
    // the build writes ASCII only (checked there; the manifest pins this very file): latin1 gives V8 a one-byte string
    source = readFileSync(bundlePath, 'latin1');
  } catch {
    return null;
  }
  const cachePath = cachePathOf(bundlePath);
  let cachedData: Buffer | undefined;
  let madeAfterFullRun = false;
  try {
    const file = readFileSync(cachePath);
    if (file.length > HEADER_BYTES && file.subarray(0, KEY_BYTES).equals(key)) {
      cachedData = file.subarray(HEADER_BYTES);
      madeAfterFullRun = file[KEY_BYTES] === 1;
    }
  } catch {
    // no cache yet
  }
  const wrapper = `(function (exports, require, module, __filename, __dirname, ${BUNDLE_IMPORT_NAME}) {${source}\n})`;
  const script = new Script(wrapper, { filename: bundlePath, cachedData });
  const cacheState: CacheState = cachedData === undefined ? 'missing' : script.cachedDataRejected ? 'rejected' : madeAfterFullRun ? 'accepted' : 'partial';
  const module = { exports: {} as Record<string, unknown> };
  const fn = script.runInThisContext() as (...args: unknown[]) => void;
  fn.call(module.exports, module.exports, bundleRequire(bundlePath), module, bundlePath, dirname(bundlePath), importModule);
  return {
    exports: module.exports,
    cacheState,
    saveCache(fullRun) {
      if (cacheState === 'accepted' || (cacheState === 'partial' && !fullRun)) return;
      const temporary = `${cachePath}.${process.pid}.tmp`;
      try {
        writeFileSync(temporary, Buffer.concat([key, Buffer.of(fullRun ? 1 : 0), script.createCachedData()]));
        renameSync(temporary, cachePath);
      } catch {
        // a read-only install: the next run compiles plainly again
        try {
          rmSync(temporary, { force: true });
        } catch {
          // nothing was written
        }
      }
    },
  };
}
