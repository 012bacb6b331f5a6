/**
 * The two runners over the same test processors: same results and failures
 * for the same tree, failed children recorded while the parent still runs,
 * retries with back-off, idempotence by job id, and the thread repo proxy.
 *
 * Expected digests come from Python's hashlib (OpenSSL's SHA-256, FIPS 180-4)
 * run on Debian's /usr/bin/python3, not from the code under test.
 */
import { execFileSync } from 'node:child_process';
import { randomUUID } from 'node:crypto';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { Redis } from 'ioredis';
import { createInProcessRunner, prestartThreads } from '../../workers/queue/in-process.js';
import { createBullRunner, startWorker, type WorkerHandle } from '../../workers/queue/bull.js';
import { backoffDelayMs } from '../../workers/queue/settings.js';
import type { FlowResult, JobSpec, Runner } from '../../workers/queue/types.js';
import { InputError } from '../../workers/core/errors.js';
import { serviceAvailable, testRedisUrl } from '../support/services.js';
import { ensureQueueBuild } from '../support/queue-build.js';

const processorsModule = ensureQueueBuild();
// The same module instance the runners import (same URL), to read its run counters.
const testProcs = (await import(processorsModule)) as typeof import('../support/queue-processors.js');
const redisUp = await serviceAvailable('redis', 'queue runners (BullMQ)');

const ROUNDS = 2_000;
const seeds = ['scene-a', 'scene-b', 'scene-c', 'scene-d', 'scene-e'];

/** SHA-256 iterated `rounds` times, by Python's hashlib (reference outside the project). */
function pythonDigests(list: string[], rounds: number): string[] {
  const code = `import hashlib,sys,json
out=[]
for s in json.loads(sys.argv[1]):
    b=hashlib.sha256(s.encode()).digest()
    for _ in range(int(sys.argv[2])-1): b=hashlib.sha256(b).digest()
    out.append(b.hex())
print(json.dumps(out))`;
  return JSON.parse(execFileSync('/usr/bin/python3', ['-c', code, JSON.stringify(list), String(rounds)], { encoding: 'utf8' }));
}
const expectedDigests = pythonDigests(seeds, ROUNDS);

function tree(tag: string): JobSpec {
  return {
    name: 'sum', id: `sum-${tag}`, data: null,
    children: [
      ...seeds.map((seed) => ({ name: 'hash', id: `hash-${tag}-${seed}`, data: { seed, rounds: ROUNDS } })),
      { name: 'bad', id: `bad-${tag}`, data: { file: 'district-07.tif' } },
    ],
  };
}

function checkTree(r: FlowResult, tag: string) {
  // Each hash job's digest matches hashlib's.
  seeds.forEach((seed, i) => {
    expect((r.results.get(`hash-${tag}-${seed}`) as { digest: string }).digest).toBe(expectedDigests[i]);
  });
  // The parent ran without the failed child: sum of the first 32 bits of each digest (derived from the digests above).
  const total = expectedDigests.reduce((s, d) => s + parseInt(d.slice(0, 8), 16), 0);
  expect(r.results.get(`sum-${tag}`)).toEqual({ value: total, count: 5, failedChildren: [`bad-${tag}`] });
  expect(r.failures).toEqual([{ id: `bad-${tag}`, name: 'bad', error: 'district-07.tif: band 1 has no GDAL_NODATA tag', kind: 'input' }]);
}

/** Results with the run tag removed from ids, to compare two runs. */
function normalise(r: FlowResult, tag: string) {
  const strip = (s: string) => s.replaceAll(tag, 'T');
  return {
    results: [...r.results].map(([k, v]) => [strip(k), JSON.parse(strip(JSON.stringify(v)))]).sort(),
    failures: r.failures.map((f) => ({ ...f, id: strip(f.id), error: strip(f.error) })),
  };
}

describe('in-process runner', () => {
  const repo = {
    calls: 0,
    async lookup(key: string) {
      this.calls++;
      if (key === 'missing') throw new InputError('no district with this id', 'districts.geojson');
      return { key, at: new Date('2021-07-01T10:30:00Z') };
    },
  };
  let runner: Runner;
  beforeAll(() => { runner = createInProcessRunner({ processorsModule, repo, threads: 2, threadedJobs: ['hash', 'repoEcho'], attempts: 3, backoffMs: 50 }); });
  afterAll(async () => { await runner.close(); });

  it('runs a tree on threads: children first, failed child recorded, parent still runs', async () => {
    const progress: number[] = [];
    const r = await runner.runFlow(tree('ip'), { onProgress: (p) => progress.push(p.done + p.failed) });
    checkTree(r, 'ip');
    expect(progress.at(-1)).toBe(7);
  });

  it('gives the same results on the main thread as on worker threads', async () => {
    const main = createInProcessRunner({ processorsModule, repo, threads: 1 });
    try {
      checkTree(await main.runFlow(tree('main')), 'main');
    } finally { await main.close(); }
  });

  it('proxies repo calls from a thread to the main thread, keeping InputError and cloned values', async () => {
    const before = repo.calls;
    const r = await runner.runFlow({
      name: 'sum', id: 'proxy-root', data: null,
      children: [
        { name: 'repoEcho', id: 'proxy-ok', data: { key: 'd-12' } },
        { name: 'repoEcho', id: 'proxy-missing', data: { key: 'missing' } },
      ],
    });
    // A Date crossed the thread by structured clone, then became JSON like a BullMQ result.
    expect(r.results.get('proxy-ok')).toEqual({ value: 0, found: { key: 'd-12', at: '2021-07-01T10:30:00.000Z' } });
    // The InputError was rebuilt as InputError on the thread (else the processor throws "not an InputError") and not retried.
    expect(r.failures).toEqual([{ id: 'proxy-missing', name: 'repoEcho', error: 'districts.geojson: no district with this id', kind: 'input' }]);
    expect(repo.calls - before).toBe(2);
  });

  it('retries a transient error with exponential back-off, then fails with the reason', async () => {
    const t0 = performance.now(); // monotonic; the back-off is a lower bound, which load only makes longer
    const r = await runner.runFlow({ name: 'flaky', id: 'flaky-ip-ok', data: { failUntil: 3 } });
    expect(r.results.get('flaky-ip-ok')).toEqual({ value: 3, attempt: 3 });
    // Two waits: 50 + 100 ms (derived from 2^(n-1)·delay, BullMQ's exponential back-off).
    expect(performance.now() - t0).toBeGreaterThanOrEqual(backoffDelayMs(1, 50) + backoffDelayMs(2, 50) - 5);
    const f = await runner.runFlow({ name: 'flaky', id: 'flaky-ip-never', data: { failUntil: 99 } });
    // A ServiceError is a service failure; with no service budget (the runner's default) it gets `attempts` tries like a bug.
    expect(f.failures.map(({ serviceFailingSeconds: _s, ...rest }) => rest)).toEqual([{ id: 'flaky-ip-never', name: 'flaky', error: 'database unreachable (attempt 3)', kind: 'service' }]);
    expect(testProcs.runCounts.get('flaky-ip-never')).toBe(3);
  });

  it('does not run a completed id twice', async () => {
    const t: JobSpec = { name: 'sum', id: 'dup-ip', data: null, children: [{ name: 'counted', id: 'dup-ip-a', data: { value: 4 } }] };
    const a = await runner.runFlow(t);
    const b = await runner.runFlow(t);
    expect(testProcs.runCounts.get('dup-ip-a')).toBe(1);
    expect([...b.results]).toEqual([...a.results]);
  });

  it('starts a job whose children are done before the next waiting leaf, on a busy thread', async () => {
    // One thread; two chains root <- a1 <- a2 and root <- b1 <- b2. In order of arrival
    // the thread would run a2, b2, a1, b1; nearest the root first it runs a1 as soon as
    // a2 is done, then b2, then b1 (the thread numbers the jobs as it starts them).
    const r = createInProcessRunner({ processorsModule, repo, threads: 1, threadedJobs: ['ordinal'] });
    const job = (id: string, children?: JobSpec[]): JobSpec => ({ name: 'ordinal', id: `order-${id}`, data: { key: id }, ...(children ? { children } : {}) });
    try {
      const out = await r.runFlow({ name: 'sum', id: 'order-root', data: null, children: [job('a1', [job('a2')]), job('b1', [job('b2')])] });
      expect(out.failures).toEqual([]);
      const n = (id: string) => (out.results.get(`order-${id}`) as { n: number }).n;
      expect(['a2', 'a1', 'b2', 'b1'].map(n)).toEqual([1, 2, 3, 4].map((k) => k + n('a2') - 1));
    } finally { await r.close(); }
  });

  it('hands a thread whose job waits for the repository the next job meanwhile', async () => {
    // One thread, two jobs. The first one's lookup is answered only once the second job's
    // lookup has arrived (or after 20 s, when the thread would have run the jobs one by one).
    const seen: string[] = [];
    let secondArrived!: () => void;
    const second = new Promise<void>((res) => { secondArrived = res; });
    const held = {
      async lookup(key: string) {
        seen.push(`${key} asked`);
        if (key === 'first') await Promise.race([second, new Promise((res) => setTimeout(res, 20_000))]);
        else secondArrived();
        seen.push(`${key} answered`);
        return { key };
      },
    };
    const r = createInProcessRunner({ processorsModule, repo: held, threads: 1, threadedJobs: ['repoEcho'] });
    try {
      const out = await r.runFlow({ name: 'sum', id: 'park-root', data: null, children: [
        { name: 'repoEcho', id: 'park-first', data: { key: 'first' } },
        { name: 'repoEcho', id: 'park-second', data: { key: 'second' } },
      ] });
      expect(out.failures).toEqual([]);
      expect(seen).toEqual(['first asked', 'second asked', 'second answered', 'first answered']);
    } finally { await r.close(); }
  }, 60_000);

  it('takes threads started ahead of it, which load their processors before the repository is known', async () => {
    const early = prestartThreads(processorsModule, 2);
    expect(early).toHaveLength(2);
    const r = createInProcessRunner({ processorsModule, repo, threads: 2, threadedJobs: ['whichThread', 'repoEcho'] });
    try {
      const out = await r.runFlow({
        name: 'sum', id: 'early-root', data: null,
        children: [
          ...Array.from({ length: 6 }, (_, i) => ({ name: 'whichThread', id: `early-${i}`, data: null })),
          { name: 'repoEcho', id: 'early-repo', data: { key: 'd-7' } },
        ],
      });
      expect(out.failures).toEqual([]);
      const used = new Set(Array.from({ length: 6 }, (_, i) => (out.results.get(`early-${i}`) as { threadId: number }).threadId));
      // every job ran on one of the threads started ahead (none on the main thread, no third thread)
      expect([...used].every((id) => early.includes(id))).toBe(true);
      // the repository port reached the thread after it had loaded: a call through it answers
      expect(out.results.get('early-repo')).toEqual({ value: 0, found: { key: 'd-7', at: '2021-07-01T10:30:00.000Z' } });
      // taken: a second call starts new ones
      expect(prestartThreads(processorsModule, 1).some((id) => early.includes(id))).toBe(false);
    } finally { await r.close(); }
  });

  it('rejects a malformed tree with an InputError', async () => {
    await expect(runner.runFlow({ name: 'sum', id: 'a:b', data: null })).rejects.toThrow(/job id "a:b"/);
    await expect(runner.runFlow({ name: 'sum', id: 'x1', data: null, children: [{ name: 'hash', id: 'x1', data: null }] }))
      .rejects.toBeInstanceOf(InputError);
  });

  it('measures whether threads pay for a CPU-bound job (figure, printed)', async () => {
    const cpuTree = (tag: string): JobSpec => ({
      name: 'sum', id: `cpu-${tag}`, data: null,
      children: Array.from({ length: 8 }, (_, i) => ({ name: 'hash', id: `cpu-${tag}-${i}`, data: { seed: `s${i}`, rounds: 30_000 } })),
    });
    const timeIt = async (threads: number) => {
      const r = createInProcessRunner({ processorsModule, repo, threads, threadedJobs: ['hash'] });
      try {
        // Warm up: start every thread before timing.
        await r.runFlow({ name: 'sum', id: `warm-${threads}`, data: null, children: Array.from({ length: threads }, (_, i) => ({ name: 'hash', id: `warm-${threads}-${i}`, data: { seed: 'w', rounds: 10 } })) });
        const t0 = performance.now();
        const out = await r.runFlow(cpuTree(`t${threads}`));
        return { ms: performance.now() - t0, value: (out.results.get(`cpu-t${threads}`) as { value: number }).value };
      } finally { await r.close(); }
    };
    const one = await timeIt(1);
    const two = await timeIt(2);
    console.log(`queue: 8 × 30k sha256 rounds: 1 thread ${one.ms.toFixed(0)} ms, 2 threads ${two.ms.toFixed(0)} ms (speed-up ${(one.ms / two.ms).toFixed(2)}×)`);
    expect(two.value).toBe(one.value);
  });
});

describe.skipIf(!redisUp)('BullMQ runner', () => {
  const prefix = `hlq-${randomUUID().slice(0, 8)}`;
  let worker: WorkerHandle;
  let runner: Runner;
  beforeAll(async () => {
    worker = await startWorker({ redisUrl: testRedisUrl, prefix, processorsModule, concurrency: 4, stalledInterval: 2_000, lockDuration: 4_000, handleSignals: false, env: {} });
    runner = createBullRunner({ redisUrl: testRedisUrl, prefix, attempts: 3, backoffMs: 50, pollMs: 250 });
  });
  afterAll(async () => {
    await runner?.close();
    await worker?.close();
    const r = new Redis(testRedisUrl);
    let cursor = '0';
    do {
      const [next, keys] = await r.scan(cursor, 'MATCH', `${prefix}:*`, 'COUNT', 500);
      cursor = next;
      if (keys.length) await r.del(...keys);
    } while (cursor !== '0');
    r.disconnect();
  });

  it('gives the same results and failures as the in-process runner', async () => {
    const progress: number[] = [];
    const bull = await runner.runFlow(tree('bq'), { onProgress: (p) => progress.push(p.done + p.failed) });
    checkTree(bull, 'bq');
    expect(progress.at(-1)).toBe(7);
    const ip = createInProcessRunner({ processorsModule, repo: {}, threads: 1 });
    try {
      expect(normalise(bull, 'bq')).toEqual(normalise(await ip.runFlow(tree('bq')), 'bq'));
    } finally { await ip.close(); }
  });

  it('retries a transient error with exponential back-off, then fails with the reason', async () => {
    const t0 = performance.now(); // monotonic; the back-off is a lower bound, which load only makes longer
    const r = await runner.runFlow({ name: 'flaky', id: 'flaky-bq-ok', data: { failUntil: 3 } });
    expect(r.results.get('flaky-bq-ok')).toEqual({ value: 3, attempt: 3 });
    expect(performance.now() - t0).toBeGreaterThanOrEqual(backoffDelayMs(1, 50) + backoffDelayMs(2, 50) - 5);
    const f = await runner.runFlow({ name: 'flaky', id: 'flaky-bq-never', data: { failUntil: 99 } });
    // A ServiceError is a service failure; with no service budget (the runner's default) it gets `attempts` tries like a bug.
    expect(f.failures.map(({ serviceFailingSeconds: _s, ...rest }) => rest)).toEqual([{ id: 'flaky-bq-never', name: 'flaky', error: 'database unreachable (attempt 3)', kind: 'service' }]);
    expect(testProcs.runCounts.get('flaky-bq-never')).toBe(3);
  });

  it('does not run a completed id twice, and reuses completed children under a new parent', async () => {
    const child = { name: 'counted', id: 'dup-bq-a', data: { value: 4 } };
    const t: JobSpec = { name: 'sum', id: 'dup-bq', data: null, children: [child] };
    const a = await runner.runFlow(t);
    const b = await runner.runFlow(t);
    expect(testProcs.runCounts.get('dup-bq-a')).toBe(1);
    expect([...b.results]).toEqual([...a.results]);
    // A re-run of the parent only (new nonce in its id) gets the old child's value without running it.
    const c = await runner.runFlow({ ...t, id: 'dup-bq-run2' });
    expect(testProcs.runCounts.get('dup-bq-a')).toBe(1);
    expect(c.results.get('dup-bq-run2')).toEqual({ value: 4, count: 1, failedChildren: [] });
  });

  it('runs a failed job and its parent again when the tree is submitted again', async () => {
    const t: JobSpec = { name: 'sum', id: 'again-bq', data: null, children: [{ name: 'flaky', id: 'again-bq-f', data: { failUntil: 4 } }] };
    const first = await runner.runFlow(t); // 3 attempts, all fail
    expect(first.failures.map((f) => f.id)).toEqual(['again-bq-f']);
    const second = await runner.runFlow(t); // attempts start again at 1: still fails on 1-3
    expect(testProcs.runCounts.get('again-bq-f')).toBe(6);
    expect(second.results.get('again-bq')).toEqual({ value: 0, count: 0, failedChildren: ['again-bq-f'] });
  });
});
