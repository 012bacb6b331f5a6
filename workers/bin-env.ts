/**
 * What the `heatledger` bin's first line (cli.ts) changes in the environment
 * of its own process, given back for the processes a command starts: they get
 * NODE_EXTRA_CA_CERTS and GLIBC_TUNABLES as the user set them.
 */
import { DEFERRED_CA_ENV } from './extra-ca.js';

/**
 * The glibc tunable the first line puts before the user's GLIBC_TUNABLES: malloc asks the kernel
 * for transparent huge pages (cli.ts says why). The line writes it out itself (a `#!` line
 * cannot import); test/unit/bin-env.test.ts checks that the two agree.
 */
export const HUGE_PAGES_TUNABLE = 'glibc.malloc.hugetlb=1';

/** Where the first line keeps the user's GLIBC_TUNABLES (empty: none) while it sets its own. */
export const DEFERRED_TUNABLES_ENV = 'HEATLEDGER_DEFERRED_GLIBC_TUNABLES';

/**
 * Put the user's values back into `env` (process.env by default). The deferred
 * CA path stays, for our own TLS connections (extra-ca.ts); `env -S` cannot
 * tell an unset variable from an empty one, and glibc reads both the same.
 *
 * @example
 * // started by the bin with GLIBC_TUNABLES=glibc.malloc.hugetlb=1:x=1, HEATLEDGER_DEFERRED_GLIBC_TUNABLES=x=1
 * restoreUserEnv(process.env) // GLIBC_TUNABLES is 'x=1' again
 */
export function restoreUserEnv(env: NodeJS.ProcessEnv = process.env): void {
  const ca = env[DEFERRED_CA_ENV];
  if (ca && env.NODE_EXTRA_CA_CERTS === undefined) env.NODE_EXTRA_CA_CERTS = ca;
  const tunables = env[DEFERRED_TUNABLES_ENV];
  if (tunables !== undefined) {
    if (tunables === '') delete env.GLIBC_TUNABLES;
    else env.GLIBC_TUNABLES = tunables;
    delete env[DEFERRED_TUNABLES_ENV];
  }
}
