/**
 * Queue settings shared by every producer and worker. BullMQ's stalled-job
 * check is shared Redis-wide, so every worker must use the same
 * `stalledInterval` and `lockDuration`: keep them here and nowhere else.
 */

/**
 * How often (ms) a worker checks for jobs whose lock expired (worker died);
 * `heatledger worker --stalled-interval`. A killed worker's job comes back at
 * most LOCK_DURATION_MS + STALLED_INTERVAL_MS after the kill (25 s).
 */
export const STALLED_INTERVAL_MS = 10_000;
/** How long (ms) a job's lock lives without renewal; renewed every half of it. */
export const LOCK_DURATION_MS = 15_000;
/** A job may stall (worker killed mid-job) this many times before it fails. */
export const MAX_STALLED_COUNT = 2;
/** Tries per job, first one included. */
export const DEFAULT_ATTEMPTS = 5;
/** First retry delay (ms); doubles on every further retry. */
export const DEFAULT_BACKOFF_MS = 1_000;
/** How long (ms) a service may stay unreachable before the jobs needing it fail (`--service-retry-budget`). */
export const DEFAULT_SERVICE_RETRY_BUDGET_MS = 300_000;
/** How long (ms) `heatledger ingest` waits without any worker activity before it gives up (`--stall-timeout`). */
export const DEFAULT_STALL_TIMEOUT_MS = 180_000;
/** Redis key prefix of heatledger's queues. */
export const DEFAULT_PREFIX = 'bull';
/**
 * Jobs a `heatledger worker` runs at once per queue unless told otherwise. Two,
 * so that one job's waits (Redis, the result's commit and its WAL flush) overlap
 * the other's raster work: a worker pinned to one core gave 33.8-38.9 scenes/s
 * with one at a time and 43.5-45.2 with two on the archive bench (4 with four:
 * no further gain; 2-core machine, 2026-12).
 */
export const DEFAULT_WORKER_CONCURRENCY = 2;

/** Queue that runs processor `name`, e.g. 'zonal' → 'heatledger-zonal'. */
export function queueNameFor(name: string): string {
  return `heatledger-${name}`;
}

/**
 * Delay before retry number `attemptsMade` (1 after the first failure), in ms:
 * BullMQ's built-in exponential back-off, `2^(attemptsMade-1) · delay`,
 * reproduced so the in-process runner waits the same.
 */
export function backoffDelayMs(attemptsMade: number, backoffMs: number): number {
  return Math.round(2 ** (attemptsMade - 1) * backoffMs);
}
