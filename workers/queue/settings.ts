/**
 * Queue settings shared by every producer and worker. BullMQ's stalled-job
 * check is shared Redis-wide, so every worker must use the same
 * `stalledInterval` and `lockDuration`: keep them here and nowhere else.
 */

/** How often (ms) a worker checks for jobs whose lock expired (worker died). */
export const STALLED_INTERVAL_MS = 30_000;
/** How long (ms) a job's lock lives without renewal; renewed every half of it. */
export const LOCK_DURATION_MS = 30_000;
/** A job may stall (worker killed mid-job) this many times before it fails. */
export const MAX_STALLED_COUNT = 2;
/** Tries per job, first one included. */
export const DEFAULT_ATTEMPTS = 5;
/** First retry delay (ms); doubles on every further retry. */
export const DEFAULT_BACKOFF_MS = 1_000;
/** Redis key prefix of heatledger's queues. */
export const DEFAULT_PREFIX = 'bull';

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
