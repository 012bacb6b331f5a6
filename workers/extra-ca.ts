/**
 * The certificates named in NODE_EXTRA_CA_CERTS, for the TLS connections
 * heatledger opens itself (PostgreSQL, Redis), when the process started
 * without them.
 *
 * Node 20 builds its whole root-certificate store before any script runs when
 * NODE_EXTRA_CA_CERTS is set (the ~140 bundled roots, then the file): on the
 * 2-core build machine, with Debian's 144-certificate bundle named there,
 * `node -e ""` takes 0.13 s of CPU instead of 0.03 s, on every command, though
 * most commands open no TLS connection. So the `heatledger` bin (the `env -S`
 * line at the top of cli.ts) starts node with the variable unset and its value
 * in HEATLEDGER_DEFERRED_CA_CERTS; cli.ts puts NODE_EXTRA_CA_CERTS back into
 * the environment for the processes it starts, and a TLS connection of ours
 * trusts Node's bundled roots plus the file's certificates, read here on first
 * use: the same certificates Node would have trusted.
 *
 * @example
 * // process started by the bin with HEATLEDGER_DEFERRED_CA_CERTS=/etc/ssl/private-ca.pem
 * tlsWithExtraCa({ servername: 'db.example' }) // -> { servername, ca: [...tls.rootCertificates, '<pem text>'] }
 */
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import type tls from 'node:tls';

// node:tls is loaded when a CA list is first needed, not by every command that imports this
// module (the bin does, to give NODE_EXTRA_CA_CERTS back): loading it costs 5-8 ms of CPU.
const requireBuiltin = createRequire(import.meta.url);

/** Where the bin puts NODE_EXTRA_CA_CERTS's value for the process it starts (see cli.ts). */
export const DEFERRED_CA_ENV = 'HEATLEDGER_DEFERRED_CA_CERTS';

let cached: { path: string; ca: string[] } | null = null;

/**
 * The CA list of a process whose extra certificates were deferred: Node's bundled
 * roots and the file's PEM text; null when nothing was deferred (Node's own store
 * holds whatever NODE_EXTRA_CA_CERTS named). A file that cannot be read is
 * skipped with a warning on stderr, as Node itself does.
 */
export function deferredCaList(env: NodeJS.ProcessEnv = process.env): string[] | null {
  const path = env[DEFERRED_CA_ENV];
  if (!path) return null;
  if (cached?.path === path) return cached.ca;
  let ca: string[] = [...(requireBuiltin('node:tls') as typeof tls).rootCertificates];
  try {
    ca = [...ca, readFileSync(path, 'utf8')];
  } catch (e) {
    process.stderr.write(`Warning: ignoring extra certs from \`${path}\` (NODE_EXTRA_CA_CERTS), load failed: ${(e as NodeJS.ErrnoException).code ?? (e as Error).message}\n`);
  }
  cached = { path, ca };
  return ca;
}

/**
 * TLS options with the deferred certificates added (see {@link deferredCaList});
 * unchanged when nothing was deferred or the options name their own `ca`.
 */
export function tlsWithExtraCa<T extends tls.ConnectionOptions>(options: T, env: NodeJS.ProcessEnv = process.env): T {
  if (options.ca !== undefined) return options;
  const ca = deferredCaList(env);
  return ca ? { ...options, ca } : options;
}
