#!/usr/bin/env -S -u NODE_EXTRA_CA_CERTS HEATLEDGER_DEFERRED_CA_CERTS=${NODE_EXTRA_CA_CERTS} node --no-concurrent-recompilation
/**
 * The `heatledger` bin. The command line itself is cli-program.ts; this file
 * starts it from the start-up bundle with its code cache when the build made a
 * current one (cli-bundle-loader.ts), else from the compiled modules.
 *
 * The line above (GNU or BSD `env -S`) starts node for the bin as it serves best;
 * `node dist/workers/cli.js` runs the same commands without it:
 * - NODE_EXTRA_CA_CERTS is moved aside (extra-ca.ts): Node 20 would otherwise
 *   build its whole root-certificate store before the first line runs, 0.1 s
 *   of CPU on every command; our TLS connections still trust those certificates.
 * - V8 optimises hot functions on the thread that runs them instead of a
 *   background thread: a `zonal` run of the bench's 1200 x 1200 clip took
 *   0.34 s of CPU instead of 0.45 s with the same wall time (0.32 s against
 *   0.31 s; 21 paired runs on the 2-core build machine), because a short
 *   command's background compiles mostly finish too late to be used. It is a
 *   command-line flag only: set from a script, V8 keeps its compile thread.
 */
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { loadBundle } from './cli-bundle-loader.js';
import { DEFERRED_CA_ENV } from './extra-ca.js';

type RunCli = (argv: string[]) => Promise<void>;

// the processes a command starts get NODE_EXTRA_CA_CERTS back, as the user set it
const deferredCa = process.env[DEFERRED_CA_ENV];
if (deferredCa && process.env.NODE_EXTRA_CA_CERTS === undefined) process.env.NODE_EXTRA_CA_CERTS = deferredCa;

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
