/**
 * The retry rule, the same in both runners (in-process and BullMQ):
 * a ServiceError is retried for as long as the service budget lasts (beyond
 * `attempts`), a bug gets `attempts` tries whatever the budget, an input error
 * one; a failure carries its kind; a job that failed for good on a service is
 * run again when the tree is submitted again (the next ingest), also by a new
 * runner (a new process).
 *
 * Expected counts are derived from the rule (common practice, no source: a
 * time-budgeted retry for transient service faults, a bounded one for
 * programming errors, none for bad input). No timing is asserted: the budget
 * tests only ask "more tries than `attempts`", never how long they took.
 */
import { randomUUID } from 'node:crypto';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createInProcessRunner } from '../../workers/queue/in-process.js';
import { createBullRunner, startWorker, type WorkerHandle } from '../../workers/queue/bull.js';
import type { Runner } from '../../workers/queue/types.js';
import { serviceAvailable, testRedisUrl } from '../support/services.js';
import { ensureQueueBuild } from '../support/queue-build.js';
import { cleanRedisPrefix } from '../support/pipeline-harness.js';

const processorsModule = ensureQueueBuild();
const testProcs = (await import(processorsModule)) as typeof import('../support/queue-processors.js');
const redisUp = await serviceAvailable('redis', 'retry rule (BullMQ)');

const ATTEMPTS = 2;
const BACKOFF_MS = 20;

type MakeRunner = (budgetMs: number) => Runner;

function retrySuite(label: string, tag: string, make: MakeRunner) {
  const runners: Runner[] = [];
  const runner = (budgetMs: number) => { const r = make(budgetMs); runners.push(r); return r; };
  afterAll(async () => { for (const r of runners) await r.close(); });

  it(`${label}: retries a ServiceError beyond \`attempts\` while the budget lasts`, async () => {
    // failUntil 5 with attempts 2: succeeds on the 5th try only if service failures are retried past `attempts`.
    const r = await runner(120_000).runFlow({ name: 'flaky', id: `svc-${tag}`, data: { failUntil: 5 } });
    expect(r.failures).toEqual([]);
    expect(r.results.get(`svc-${tag}`)).toEqual({ value: 5, attempt: 5 });
    expect(testProcs.runCounts.get(`svc-${tag}`)).toBe(5);
  });

  it(`${label}: gives a bug \`attempts\` tries, whatever the budget, and says it is a bug`, async () => {
    const r = await runner(120_000).runFlow({ name: 'buggy', id: `bug-${tag}`, data: null });
    expect(r.failures).toEqual([{ id: `bug-${tag}`, name: 'buggy', kind: 'bug', error: `cannot read properties of undefined (attempt ${ATTEMPTS})` }]);
    expect(testProcs.runCounts.get(`bug-${tag}`)).toBe(ATTEMPTS);
  });

  it(`${label}: fails a job once the service budget is spent, as a service failure, and runs it again on the next submission`, async () => {
    const t = { name: 'sum', id: `spent-${tag}`, data: null, children: [{ name: 'flaky', id: `spent-${tag}-f`, data: { failUntil: 1_000_000 } }] };
    const first = await runner(300).runFlow(t);
    expect(first.failures).toHaveLength(1);
    const f = first.failures[0];
    expect({ id: f.id, kind: f.kind }).toEqual({ id: `spent-${tag}-f`, kind: 'service' });
    expect(f.error).toMatch(/^database unreachable \(attempt \d+\)$/);
    expect(f.serviceFailingSeconds).toBeGreaterThanOrEqual(0);
    // The parent still ran without it (a failed child never blocks its parent).
    expect(first.results.get(`spent-${tag}`)).toEqual({ value: 0, count: 0, failedChildren: [`spent-${tag}-f`] });
    const triesFirst = testProcs.runCounts.get(`spent-${tag}-f`)!;
    expect(triesFirst).toBeGreaterThanOrEqual(1);
    // The next run (a new runner, as a new ingest process would make) tries the job again.
    const second = await runner(300).runFlow(t);
    expect(second.failures.map((x) => x.id)).toEqual([`spent-${tag}-f`]);
    expect(testProcs.runCounts.get(`spent-${tag}-f`)!).toBeGreaterThan(triesFirst);
  });

  it(`${label}: never retries an input error`, async () => {
    const r = await runner(120_000).runFlow({ name: 'bad', id: `in-${tag}`, data: { file: 'scene-09.tif' } });
    expect(r.failures).toEqual([{ id: `in-${tag}`, name: 'bad', kind: 'input', error: 'scene-09.tif: band 1 has no GDAL_NODATA tag' }]);
  });
}

describe('retry rule: in-process runner', () => {
  retrySuite('in-process', `ip${randomUUID().slice(0, 6)}`, (budgetMs) =>
    createInProcessRunner({ processorsModule, repo: {}, threads: 1, attempts: ATTEMPTS, backoffMs: BACKOFF_MS, serviceRetryBudgetMs: budgetMs }));
});

describe.skipIf(!redisUp)('retry rule: BullMQ runner', () => {
  const prefix = `hlr-${randomUUID().slice(0, 8)}`;
  let worker: WorkerHandle | undefined;
  beforeAll(async () => {
    worker = await startWorker({ redisUrl: testRedisUrl, prefix, processorsModule, concurrency: 2, stalledInterval: 2_000, lockDuration: 4_000, handleSignals: false, env: {} });
  });
  afterAll(async () => {
    await worker?.close();
    await cleanRedisPrefix(testRedisUrl, prefix);
  });
  retrySuite('BullMQ', `bq${randomUUID().slice(0, 6)}`, (budgetMs) =>
    createBullRunner({ redisUrl: testRedisUrl, prefix, attempts: ATTEMPTS, backoffMs: BACKOFF_MS, pollMs: 100, serviceRetryBudgetMs: budgetMs }));
});
