#!/usr/bin/env node
/**
 * The `heatledger` bin. The command line itself is cli-program.ts; this file
 * starts it from the start-up bundle with its code cache when the build made a
 * current one (cli-bundle-loader.ts), else from the compiled modules.
 */
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { loadBundle } from './cli-bundle-loader.js';

type RunCli = (argv: string[]) => Promise<void>;

const here = dirname(fileURLToPath(import.meta.url));
// Modules outside the bundle load through this module's own import(), so they
// are the same module instances the compiled code shares (the store's lock, the stop handlers).
let bundle: ReturnType<typeof loadBundle> = null;
try {
  bundle = loadBundle(join(here, 'cli-bundle.cjs'), (specifier) => import(new URL(specifier, import.meta.url).href));
} catch {
  // a bundle that cannot be compiled or set up (nothing of the command has run yet): the compiled modules
}
if (bundle) {
  await (bundle.exports.runCli as RunCli)(process.argv);
  // a cache written after a `zonal` run holds what that command compiles (the bulk of the bundle)
  bundle.saveCache(process.argv[2] === 'zonal');
} else {
  const { runCli } = await import('./cli-program.js');
  await runCli(process.argv);
}
