/**
 * Which runner a process uses, decided here only: BullMQ workers on the Redis
 * of REDIS_URL when it is set (distributed mode), else the in-process runner
 * with worker threads (embedded mode).
 */
import os from 'node:os';
import { ENV } from '../config.js';
import { DEFAULT_SERVICE_RETRY_BUDGET_MS, DEFAULT_STALL_TIMEOUT_MS } from './settings.js';
import type { Runner } from './types.js';

/** The worker's default check for stalled jobs (the commands take it from here). */
export { DEFAULT_WORKER_CONCURRENCY, STALLED_INTERVAL_MS } from './settings.js';
import type { WorkerHandle, WorkerLogger } from './bull.js';

export type RunMode = 'embedded' | 'distributed';

/** Where jobs run: the mode, and for distributed mode the Redis URL. */
export interface QueueConfig {
  mode: RunMode;
  redisUrl?: string;
}

/** The queue configuration from the environment. */
export function queueConfig(env: NodeJS.ProcessEnv = process.env): QueueConfig {
  const redisUrl = env[ENV.redisUrl] || undefined;
  return { mode: redisUrl ? 'distributed' : 'embedded', redisUrl };
}

/** What the embedded runner needs from the run: the processors module and the repository (with the store behind it). */
export interface EmbeddedRunnerParts {
  processorsModule: URL;
  repo: object;
  /** Worker threads (default: the machine's cores). */
  threads?: number;
  threadedJobs: string[];
}

/**
 * Start ahead what the runner of a configuration will need, while the caller
 * does other work: embedded, its worker threads (loading the processors takes
 * each ~0.3-0.5 s); distributed, the queue client's modules (~0.2 s of CPU; no
 * connection is made). Errors are left for {@link createConfiguredRunner} to report.
 */
export async function prepareConfiguredRunner(config: QueueConfig, embedded: Pick<EmbeddedRunnerParts, 'processorsModule' | 'threads' | 'threadedJobs'>): Promise<void> {
  if (config.mode === 'distributed') {
    await import('./bull.js');
    return;
  }
  if (embedded.threadedJobs.length === 0) return;
  const { prestartThreads } = await import('./in-process.js');
  prestartThreads(embedded.processorsModule, embeddedThreads(embedded));
}

function embeddedThreads(embedded: Pick<EmbeddedRunnerParts, 'threads'>): number {
  return embedded.threads ?? Math.max(1, os.availableParallelism());
}

/** Make the runner for a configuration. */
export async function createConfiguredRunner(
  config: QueueConfig, embedded: EmbeddedRunnerParts,
  limits: { serviceRetryBudgetMs?: number; stallTimeoutMs?: number } = {},
): Promise<Runner> {
  const serviceRetryBudgetMs = limits.serviceRetryBudgetMs ?? DEFAULT_SERVICE_RETRY_BUDGET_MS;
  if (config.mode === 'distributed') {
    const { createBullRunner } = await import('./bull.js');
    return createBullRunner({
      redisUrl: config.redisUrl!,
      prefix: process.env[ENV.queuePrefix] || undefined,
      serviceRetryBudgetMs,
      redisBudgetMs: serviceRetryBudgetMs,
      stallTimeoutMs: limits.stallTimeoutMs ?? DEFAULT_STALL_TIMEOUT_MS,
    });
  }
  const { createInProcessRunner } = await import('./in-process.js');
  return createInProcessRunner({
    processorsModule: embedded.processorsModule,
    repo: embedded.repo,
    threads: embeddedThreads(embedded),
    threadedJobs: embedded.threadedJobs,
    serviceRetryBudgetMs,
  });
}

/** A distributed worker process on the configured Redis (queue prefix from the environment). */
export async function startConfiguredWorker(
  config: QueueConfig & { redisUrl: string },
  options: { processorsModule: URL; concurrency: number; stalledInterval: number; logger?: WorkerLogger },
): Promise<WorkerHandle> {
  const { startWorker } = await import('./bull.js');
  return startWorker({
    redisUrl: config.redisUrl,
    processorsModule: options.processorsModule,
    concurrency: options.concurrency,
    stalledInterval: options.stalledInterval,
    prefix: process.env[ENV.queuePrefix] || undefined,
    logger: options.logger,
  });
}
