import { DEFAULT_API_PORT, ENV } from '../config.js';
import { InputError } from '../core/errors.js';
import { quoteGiven } from '../core/year.js';
import { withStore } from './common.js';

/** The port from --port, else the environment, else the default; 0 asks the system for a free port. */
function resolvePort(option: number | undefined): number {
  if (option !== undefined) return option;
  const text = process.env[ENV.apiPort];
  if (text === undefined || text === '') return DEFAULT_API_PORT;
  const n = /^[0-9]{1,5}$/.test(text) ? Number(text) : NaN;
  if (!(n >= 0 && n <= 65535)) throw new InputError(`${ENV.apiPort} must be a port from 0 to 65535 in decimal digits, got ${quoteGiven(text)}`);
  return n;
}

/** A listen failure the user can fix by choosing another port or address (exit 2), in one sentence. */
function listenError(e: unknown, port: number, host: string): unknown {
  const code = (e as NodeJS.ErrnoException)?.code;
  if (code === 'EADDRINUSE') return new InputError(`port ${port} on ${host} is already in use; choose another with --port or ${ENV.apiPort}`);
  if (code === 'EACCES') return new InputError(`port ${port} on ${host} needs privileges this user does not have; choose a port above 1023`);
  if (code === 'EADDRNOTAVAIL' || code === 'ENOTFOUND' || code === 'EAI_AGAIN') return new InputError(`cannot listen on ${host}: it is not an address of this machine; choose another with --host or ${ENV.apiHost}`);
  return e;
}

export async function runServeCommand(opts: { port?: number; host?: string; dataDir?: string }): Promise<void> {
  const port = resolvePort(opts.port);
  const host = opts.host ?? process.env[ENV.apiHost] ?? '127.0.0.1';
  const { buildApp, logLevelFromEnv } = await import('../../api/app.js');
  const logLevel = logLevelFromEnv();
  const dataRoot = process.env[ENV.dataRoot] || undefined;
  await withStore(opts, async (store) => {
    const app = buildApp(store, { logLevel, dataRoot });
    try {
      await app.listen({ port, host });
    } catch (e) {
      await app.close().catch(() => undefined);
      throw listenError(e, port, host);
    }
    const address = app.server.address();
    const bound = address && typeof address === 'object' ? address.port : port;
    process.stderr.write(`heatledger API on http://${host}:${bound}/ (page) and /api/table, /api/status, /api/districts, /api/health\n`);
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
