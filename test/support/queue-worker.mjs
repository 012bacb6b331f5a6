// A `heatledger worker`-like process for the queue fault tests: serves the test
// processors from dist/ until SIGTERM/SIGINT. Settings come from the environment.
import { startWorker } from '../../dist/workers/queue/bull.js';

const handle = await startWorker({
  redisUrl: process.env.QUEUE_REDIS_URL,
  prefix: process.env.QUEUE_PREFIX,
  processorsModule: new URL('../../dist/test/support/queue-processors.js', import.meta.url),
  concurrency: Number(process.env.QUEUE_CONCURRENCY ?? 2),
  stalledInterval: Number(process.env.QUEUE_STALLED_MS),
  lockDuration: Number(process.env.QUEUE_LOCK_MS),
});
process.stdout.write('ready\n');
await handle.closed;
process.exit(0);
