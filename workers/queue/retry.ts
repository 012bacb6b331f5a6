/**
 * When a failed job is tried again — one rule for both runners.
 *
 * - input errors: never (the file will not get better);
 * - bugs: up to `attempts` tries in all, with exponential back-off;
 * - service errors (database or Redis unreachable, connection lost): for as
 *   long as the service has been failing for less than `serviceBudgetMs`, so an
 *   outage shorter than the budget loses nothing (with no budget, 0, they get
 *   `attempts` tries like bugs).
 *
 * The back-off doubles from `backoffMs` (BullMQ's exponential rule,
 * 2^(n-1)·delay) and is capped at MAX_BACKOFF_MS, so a service that comes back
 * is used again within that time.
 */
import { failureMessage } from './tree.js';
import { failureKind, ServiceError, type FailureKind, type ServiceName } from '../core/errors.js';
import type { JobFailure } from './types.js';

/** Longest wait between two tries of a job (ms). */
export const MAX_BACKOFF_MS = 15_000;

export interface RetryPolicy {
  /** Tries per job, first included, whatever the kind (input errors excepted). */
  attempts: number;
  /** First retry delay (ms), doubling on each retry up to MAX_BACKOFF_MS. */
  backoffMs: number;
  /** How long (ms) a service may keep failing before its jobs fail for good; 0 = `attempts` tries instead. */
  serviceBudgetMs: number;
}

/** What the runners remember of a job's last failed try (JSON: BullMQ keeps it in Redis). */
export interface FailureRecord {
  kind: FailureKind;
  /** The message of the try (its kind apart, above). */
  error: string;
  /** The service that failed, when the error said. */
  service?: ServiceName;
  /** When (epoch ms) the job's current run of service failures began. */
  serviceFailingSinceMs?: number;
  /** When (epoch ms) this try failed. */
  atMs: number;
}

/** The record of a failed try, continuing the previous record's run of service failures. */
export function failureRecord(e: unknown, previous: FailureRecord | null | undefined, nowMs: number): FailureRecord {
  const kind = failureKind(e);
  const record: FailureRecord = { kind, error: failureMessage(e), atMs: nowMs };
  if (kind === 'service') {
    const service = (e as { service?: unknown }).service;
    if (typeof service === 'string') record.service = service as ServiceName;
    record.serviceFailingSinceMs = previous?.kind === 'service' && previous.serviceFailingSinceMs !== undefined
      ? previous.serviceFailingSinceMs : nowMs;
  }
  return record;
}

/** A FailureRecord read back from storage, or null when `value` is not one. */
export function asFailureRecord(value: unknown): FailureRecord | null {
  const v = value as Partial<FailureRecord> | null;
  if (!v || typeof v !== 'object' || typeof v.error !== 'string' || typeof v.atMs !== 'number') return null;
  if (v.kind !== 'input' && v.kind !== 'service' && v.kind !== 'bug') return null;
  return v as FailureRecord;
}

/**
 * Delay (ms) before the next try of a job that has failed `triesMade` times
 * (1 after the first failure), the last time as `last`; null when it fails for good.
 */
export function nextRetryDelayMs(policy: RetryPolicy, triesMade: number, last: FailureRecord, nowMs: number): number | null {
  if (last.kind === 'input') return null;
  const backoff = Math.min(Math.round(2 ** (triesMade - 1) * policy.backoffMs), MAX_BACKOFF_MS);
  if (last.kind === 'service' && policy.serviceBudgetMs > 0) {
    const since = last.serviceFailingSinceMs ?? last.atMs;
    const left = since + policy.serviceBudgetMs - nowMs;
    // The last try falls at the end of the budget.
    return left > 0 ? Math.min(backoff, left) : null;
  }
  return triesMade < policy.attempts ? backoff : null;
}

/** The failure a runner reports for a job that failed for good with `last` (or never ran: `fallback`). */
export function jobFailure(id: string, name: string, last: FailureRecord | null | undefined, fallback: Omit<FailureRecord, 'atMs'>): JobFailure {
  const r = last ?? { ...fallback, atMs: Date.now() };
  const out: JobFailure = { id, name, error: r.error, kind: r.kind };
  if (r.service) out.service = r.service;
  if (r.kind === 'service' && r.serviceFailingSinceMs !== undefined) {
    out.serviceFailingSeconds = Math.max(0, Math.round((r.atMs - r.serviceFailingSinceMs) / 1000));
  }
  return out;
}

/**
 * Call `fn` until it succeeds, retrying a ServiceError with back-off for as
 * long as the service has been failing for less than `budgetMs`; then throw
 * a ServiceError saying for how long it failed. Other errors pass through.
 */
export async function withServiceRetry<T>(fn: () => Promise<T>, budgetMs: number, backoffMs = 500): Promise<T> {
  const policy: RetryPolicy = { attempts: 1, backoffMs, serviceBudgetMs: budgetMs };
  let last: FailureRecord | null = null;
  for (let tries = 1; ; tries++) {
    try {
      return await fn();
    } catch (e) {
      if (failureKind(e) !== 'service') throw e;
      const now = Date.now();
      last = failureRecord(e, last, now);
      const delay = nextRetryDelayMs(policy, tries, last, now);
      if (delay === null) {
        if (budgetMs <= 0) throw e;
        const seconds = Math.round((now - last.serviceFailingSinceMs!) / 1000);
        const service = (e as { service?: ServiceName }).service;
        throw new ServiceError(`${(e as Error).message}; unreachable for ${seconds} s, longer than the service retry budget of ${Math.round(budgetMs / 1000)} s`, { cause: e, service });
      }
      await new Promise((r) => setTimeout(r, delay));
    }
  }
}
