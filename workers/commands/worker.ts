import { InputError } from '../core/errors.js';
import { ENV, envNumber } from '../config.js';
import { DEFAULT_WORKER_CONCURRENCY, STALLED_INTERVAL_MS } from '../queue/configured.js';
import { createLogger, logLevelFromEnv } from '../log.js';
import { runtimeConfig } from '../run/config.js';

/**
 * `heatledger worker`: serve queued jobs. Two plain lines on standard error
 * (serving, stopped) for the operator; the structured log on standard output,
 * one JSON object per line at LOG_LEVEL (workers/log.ts): the worker ready and
 * stopped (info), each job done with its milliseconds (info), a try that
 * failed (warn), a job refused as bad input and connection errors (error),
 * jobs taken and the processors' own lines (debug).
 */
export async function runWorkerCommand(options: { concurrency?: number; stalledInterval?: number }): Promise<void> {
  const opts = {
    concurrency: options.concurrency ?? envNumber('concurrency') ?? DEFAULT_WORKER_CONCURRENCY,
    stalledInterval: options.stalledInterval ?? envNumber('stalledInterval') ?? STALLED_INTERVAL_MS / 1000,
  };
  const config = runtimeConfig();
  if (!config.redisUrl) throw new InputError(`heatledger worker needs ${ENV.redisUrl} (the Redis the jobs are queued on)`);
  if (!config.databaseUrl) throw new InputError(`heatledger worker needs ${ENV.databaseUrl} (the PostgreSQL server all workers write to)`);
  if (!(Number.isInteger(opts.concurrency) && opts.concurrency >= 1)) throw new InputError(`--concurrency must be a whole number >= 1, got ${opts.concurrency}`);
  if (!(opts.stalledInterval >= 0.1 && opts.stalledInterval <= 3600)) throw new InputError(`--stalled-interval must be between 0.1 and 3600 seconds, got ${opts.stalledInterval}`);
  const logger = createLogger({ level: logLevelFromEnv(), name: 'heatledger-worker' });
  const stalledInterval = Math.round(opts.stalledInterval * 1000);
  const { startConfiguredWorker } = await import('../queue/configured.js');
  const { registryModuleUrl } = await import('../run/registry.js');
  const redisHost = new URL(config.redisUrl).host;
  const handle = await startConfiguredWorker({ ...config, redisUrl: config.redisUrl }, {
    processorsModule: registryModuleUrl(),
    concurrency: opts.concurrency,
    stalledInterval,
    logger,
  });
  logger.info({ redis: redisHost, concurrency: opts.concurrency, stalled_interval_s: stalledInterval / 1000 }, 'worker ready');
  process.stderr.write(`heatledger worker: serving scene and derive jobs on ${redisHost} (concurrency ${opts.concurrency}, stalled check every ${stalledInterval / 1000} s); SIGTERM to stop\n`);
  await handle.closed;
  logger.info({}, 'worker stopped');
  process.stderr.write('heatledger worker: stopped\n');
}
