#!/usr/bin/env -S -u NODE_EXTRA_CA_CERTS HEATLEDGER_DEFERRED_CA_CERTS=${NODE_EXTRA_CA_CERTS} HEATLEDGER_DEFERRED_GLIBC_TUNABLES=${GLIBC_TUNABLES} GLIBC_TUNABLES=glibc.malloc.hugetlb=1:${GLIBC_TUNABLES} node --no-concurrent-recompilation
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
 * - glibc's malloc asks the kernel for transparent huge pages where the kernel
 *   leaves that to the program (`glibc.malloc.hugetlb=1`, glibc 2.35 or later;
 *   /sys/kernel/mm/transparent_hugepage/enabled = madvise, as on Debian): the
 *   malloc heap and the zonal histograms' 16 MB buffers then fault in 2 MB at a
 *   time instead of 4 KB. A `zonal` run of the bench touches ~40 MB; on the
 *   2-core build machine each 4 KB first touch cost ~10 us of system time, and
 *   the run took 0.90x the wall and CPU time (paired whole-process runs, 15
 *   pairs on each of the bench's two rasters), for ~16 MB more peak memory. A
 *   value the user set comes after ours and wins; glibc of other versions and
 *   other C libraries ignore the name. The processes a command starts get the
 *   user's value back.
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
import { restoreUserEnv } from './bin-env.js';

type RunCli = (argv: string[]) => Promise<void>;

// the processes a command starts get NODE_EXTRA_CA_CERTS and GLIBC_TUNABLES back, as the user set them
restoreUserEnv();

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
