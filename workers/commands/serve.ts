import { DEFAULT_API_PORT, ENV, envNumber } from '../config.js';
import { InputError } from '../core/errors.js';
import { withStore } from './common.js';

/** The port from --port, else the environment, else the default; 0 asks the system for a free port. */
function resolvePort(option: number | undefined): number {
  return option ?? envNumber('apiPort') ?? DEFAULT_API_PORT;
}

/** A listen failure the user can fix by choosing another port or address (exit 2), in one sentence. */
function listenError(e: unknown, port: number, host: string): unknown {
  const code = (e as NodeJS.ErrnoException)?.code;
  if (code === 'EADDRINUSE') return new InputError(`port ${port} on ${host} is already in use; choose another with --port or ${ENV.apiPort}`);
  if (code === 'EACCES') return new InputError(`port ${port} on ${host} needs privileges this user does not have; choose a port above 1023`);
  if (code === 'EADDRNOTAVAIL' || code === 'ENOTFOUND' || code === 'EAI_AGAIN') return new InputError(`cannot listen on ${host}: it is not an address of this machine; choose another with --host or ${ENV.apiHost}`);
  return e;
}

/** A token from the environment: unset or empty = none; otherwise printable ASCII without blanks, at least 16 characters. */
function tokenFromEnv(name: string): string | undefined {
  const t = process.env[name];
  if (t === undefined || t === '') return undefined;
  if (!/^[\x21-\x7e]{16,512}$/.test(t)) throw new InputError(`${name} must be 16 to 512 printable characters without blanks`);
  return t;
}

/** Loopback addresses: reachable from this machine only. */
const LOOPBACK = /^(127\.\d+\.\d+\.\d+|::1|localhost)$/;

export async function runServeCommand(opts: { port?: number; host?: string; dataDir?: string }): Promise<void> {
  const port = resolvePort(opts.port);
  const host = opts.host ?? (process.env[ENV.apiHost] || '127.0.0.1');
  const { buildApp, logLevelFromEnv, DEFAULT_READS_PER_MINUTE, DEFAULT_WRITES_PER_MINUTE } = await import('../../api/app.js');
  const logLevel = logLevelFromEnv();
  const dataRoot = process.env[ENV.dataRoot] || undefined;
  const token = tokenFromEnv(ENV.apiToken);
  const readToken = tokenFromEnv(ENV.apiReadToken);
  const corsOrigin = process.env[ENV.corsOrigin] || undefined;
  const readsPerMinute = envNumber('readsPerMinute') ?? DEFAULT_READS_PER_MINUTE;
  const writesPerMinute = envNumber('writesPerMinute') ?? DEFAULT_WRITES_PER_MINUTE;
  const { serveIngestJobs } = await import('./serve-jobs.js');
  await withStore(opts, async (store) => {
    const jobs = dataRoot && token ? serveIngestJobs({ dataRoot, dataDir: opts.dataDir, store }) : undefined;
    const app = buildApp(store, { logLevel, dataRoot, token, readToken, corsOrigin, readsPerMinute, writesPerMinute, jobs });
    try {
      await app.listen({ port, host });
    } catch (e) {
      await app.close().catch(() => undefined);
      throw listenError(e, port, host);
    }
    const address = app.server.address();
    const bound = address && typeof address === 'object' ? address.port : port;
    const shown = host.includes(':') ? `[${host}]` : host;
    // one write, so a reader of the first line has them all
    const lines = [`heatledger API on http://${shown}:${bound}/api/ (routes: /api/openapi.json) and the page at /`];
    if (!LOOPBACK.test(host)) {
      lines.push(
        `heatledger: listening on ${host}, not only on this machine (127.0.0.1): other machines can reach it; ` +
          `reads are ${readToken ? `closed by ${ENV.apiReadToken}` : `open to them (set ${ENV.apiReadToken} to close them)`}`,
      );
    }
    lines.push(`heatledger: writes (POST /api/ingest) ${token ? (dataRoot ? `need ${ENV.apiToken} and take files under ${ENV.dataRoot}` : `need ${ENV.dataRoot} too, which is not set`) : `are off (${ENV.apiToken} is not set)`}; CORS ${corsOrigin ? `allows ${corsOrigin}` : 'is off'}`);
    process.stderr.write(`${lines.join('\n')}\n`);
    // SIGINT/SIGTERM are the normal way to stop a server: exit 0 once it has closed
    const { onInterrupt } = await import('../store/interrupt.js');
    await new Promise<void>((resolve) => {
      onInterrupt(async () => {
        await app.close();
        resolve();
        return { exitCode: 0, message: 'serve stopped' };
      });
    });
  });
}
