import { DEFAULT_API_PORT, ENV } from '../config.js';
import { InputError } from '../core/errors.js';
import { withStore } from './common.js';

export async function runServeCommand(opts: { port?: number; host?: string; dataDir?: string }): Promise<void> {
  const port = opts.port ?? Number(process.env[ENV.apiPort] ?? DEFAULT_API_PORT);
  const host = opts.host ?? process.env[ENV.apiHost] ?? '127.0.0.1';
  if (!(Number.isInteger(port) && port > 0 && port < 65536)) throw new InputError(`--port must be 1-65535, got ${port}`);
  await withStore(opts, async (store) => {
    const { buildApp } = await import('../../api/app.js');
    const app = buildApp(store);
    await app.listen({ port, host });
    process.stderr.write(`heatledger API on http://${host}:${port}/ (page) and /api/table, /api/status, /api/districts, /api/health\n`);
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
