/**
 * Test processors for the queue runners: a CPU-bound hash job, a parent that
 * sums its children, jobs that fail permanently or transiently, a counted job,
 * one that calls the repository, one that says which thread ran it, and
 * PostgreSQL writers for the fault tests.
 */
import { createHash } from 'node:crypto';
import { threadId } from 'node:worker_threads';
import pg from 'pg';
import { InputError, ServiceError } from '../../workers/core/errors.js';
import type { Processor } from '../../workers/queue/types.js';

/** Runs per job id in this process (main thread / worker process). */
export const runCounts = new Map<string, number>();
/** Jobs of `ordinal` started in this thread or process. */
let started = 0;

/** sha256 applied `rounds` times to the UTF-8 seed (hex digest in, raw bytes hashed). */
export function iteratedSha256(seed: string, rounds: number): string {
  let buf: Buffer = createHash('sha256').update(seed, 'utf8').digest();
  for (let i = 1; i < rounds; i++) buf = createHash('sha256').update(buf).digest();
  return buf.toString('hex');
}

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

interface TestRepo {
  insertRow?(id: string, value: number): Promise<void>;
  gateOpen?(gate: string): Promise<boolean>;
  lookup?(key: string): Promise<unknown>;
}

export const processors: Record<string, Processor<any, any, TestRepo>> = {
  async hash(data: { seed: string; rounds: number }) {
    const digest = iteratedSha256(data.seed, data.rounds);
    return { digest, value: parseInt(digest.slice(0, 8), 16) };
  },
  async sum(_data, ctx) {
    let total = 0;
    for (const v of Object.values(ctx.childrenValues)) total += (v as { value: number }).value;
    return { value: total, count: Object.keys(ctx.childrenValues).length, failedChildren: ctx.failedChildren };
  },
  async bad(data: { file: string }) {
    throw new InputError('band 1 has no GDAL_NODATA tag', data.file);
  },
  async flaky(data: { failUntil: number }, ctx) {
    runCounts.set(ctx.jobId, (runCounts.get(ctx.jobId) ?? 0) + 1);
    if (ctx.attempt < data.failUntil) throw new ServiceError(`database unreachable (attempt ${ctx.attempt})`);
    return { value: ctx.attempt, attempt: ctx.attempt };
  },
  /** A bug: a plain TypeError on every try. */
  async buggy(_data, ctx) {
    runCounts.set(ctx.jobId, (runCounts.get(ctx.jobId) ?? 0) + 1);
    throw new TypeError(`cannot read properties of undefined (attempt ${ctx.attempt})`);
  },
  /** The order in which this thread (or process) started its jobs: 1 for the first. */
  async ordinal(data: { key: string }) {
    return { value: 0, key: data.key, n: ++started };
  },
  /** Which thread ran the job (0: the main thread). */
  async whichThread() {
    return { value: 0, threadId };
  },
  async counted(data: { value: number }, ctx) {
    runCounts.set(ctx.jobId, (runCounts.get(ctx.jobId) ?? 0) + 1);
    return { value: data.value };
  },
  async repoEcho(data: { key: string }, ctx) {
    try {
      return { value: 0, found: await ctx.repo.lookup!(data.key) };
    } catch (e) {
      // Report what arrived on this side of the proxy, then fail with it.
      ctx.log(`lookup failed with ${(e as Error).name}, instanceof InputError: ${e instanceof InputError}`);
      if (e instanceof InputError) throw e;
      throw new Error(`not an InputError: ${(e as Error).name}`);
    }
  },
  /**
   * Writes one row (idempotent) after an optional delay, returns the value. With
   * `gate`, it first waits until the test opens that gate (a row in queue_gates),
   * so a test can hold jobs in a worker's hands for as long as it needs.
   */
  async pgRow(data: { value: number; delayMs?: number; gate?: string }, ctx) {
    if (data.gate) while (!(await ctx.repo.gateOpen!(data.gate))) await sleep(100);
    if (data.delayMs) await sleep(data.delayMs);
    await ctx.repo.insertRow!(ctx.jobId, data.value);
    return { value: data.value };
  },
  /** Sums the children and writes the total as its own row. */
  async pgSum(_data, ctx) {
    let total = 0;
    for (const v of Object.values(ctx.childrenValues)) total += (v as { value: number }).value;
    await ctx.repo.insertRow!(ctx.jobId, total);
    return { value: total, failedChildren: ctx.failedChildren };
  },
};

/**
 * Repository for the fault tests: a pg pool at QUEUE_TEST_DATABASE_URL writing
 * `queue_rows(id, value)` with INSERT ... ON CONFLICT DO NOTHING, and reading
 * `queue_gates(id)` for gated jobs.
 */
export async function createRepo(env: Record<string, string | undefined>): Promise<{ repo: TestRepo; close(): Promise<void> }> {
  const url = env.QUEUE_TEST_DATABASE_URL;
  if (!url) return { repo: {}, close: async () => undefined };
  const pool = new pg.Pool({ connectionString: url, connectionTimeoutMillis: 60_000, max: 4 });
  pool.on('error', () => undefined);
  return {
    repo: {
      async insertRow(id, value) {
        try {
          await pool.query('INSERT INTO queue_rows (id, value) VALUES ($1, $2) ON CONFLICT (id) DO NOTHING', [id, value]);
        } catch (e) {
          throw new ServiceError(`database unreachable at ${new URL(url).host}: ${(e as Error).message}`, { cause: e });
        }
      },
      async gateOpen(gate) {
        try {
          return (await pool.query('SELECT 1 FROM queue_gates WHERE id = $1', [gate])).rowCount === 1;
        } catch (e) {
          throw new ServiceError(`database unreachable at ${new URL(url).host}: ${(e as Error).message}`, { cause: e });
        }
      },
    },
    close: () => pool.end(),
  };
}
