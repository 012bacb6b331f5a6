/**
 * The embedded runner: runs a job tree inside this process, independent jobs
 * in parallel — jobs named in `threadedJobs` on worker threads, the rest on
 * the main thread. The repository stays in the main thread; threaded jobs
 * reach it through a proxy (see repo-proxy.ts).
 *
 * It behaves like the BullMQ runner: same retry rule (retry.ts: input errors
 * final, service errors retried for the budget, bugs `attempts` times), a
 * failed child does not block its parent, results handed on as
 * JSON, and a job id that completed (with its whole subtree) during this
 * runner's life is not run again.
 */
import os from 'node:os';
import path from 'node:path';
import { existsSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { MessageChannel, Worker, type MessagePort } from 'node:worker_threads';
import { ServiceError } from '../core/errors.js';
import { loadProcessors, runAttempt, sortedRecord, type JobAttempt } from './execute.js';
import { reviveError, serveRepo, type SerializedError } from './repo-proxy.js';
import { DEFAULT_ATTEMPTS, DEFAULT_BACKOFF_MS } from './settings.js';
import { failureRecord, jobFailure, nextRetryDelayMs, type FailureRecord, type RetryPolicy } from './retry.js';
import { NamedIdSet, progressOf, totalsByName } from './progress.js';
import { asJsonValue, flattenTree, reusableIds, type FlatNode } from './tree.js';
import type { FlowResult, JobFailure, JobSpec, ProcessorsModule, Runner, RunFlowOptions } from './types.js';

export interface InProcessRunnerOptions {
  /** File URL (or absolute path) of the processors registry module (compiled JavaScript). */
  processorsModule: string | URL;
  /** Worker threads for threaded jobs; default os.availableParallelism(). */
  threads?: number;
  /** Processor names run on worker threads; the rest run on the main thread. */
  threadedJobs?: string[];
  /** The persistence object handed to processors (ctx.repo); proxied to threads. */
  repo: object;
  /** Main-thread jobs running at once; default = threads. */
  concurrency?: number;
  /** Tries per job, first included; default 5. */
  attempts?: number;
  /** First retry delay in ms, doubling after each retry; default 1000. */
  backoffMs?: number;
  /** How long (ms) a job failing with ServiceError keeps being retried beyond `attempts`; default 0. */
  serviceRetryBudgetMs?: number;
}

function moduleHref(m: string | URL): string {
  if (m instanceof URL) return m.href;
  return m.startsWith('file:') ? m : new URL(`file://${path.resolve(m)}`).href;
}

/** The compiled thread entry: beside this file, or under dist/ when running from TypeScript sources. */
function threadEntryPath(): string {
  const here = path.dirname(fileURLToPath(import.meta.url));
  const beside = path.join(here, 'thread-entry.js');
  if (existsSync(beside)) return beside;
  const compiled = path.resolve(here, '../../dist/workers/queue/thread-entry.js');
  if (existsSync(compiled)) return compiled;
  throw new ServiceError(`worker-thread entry not found at ${beside} or ${compiled}; run \`npm run build\``);
}

type Outcome = { ok: true; value: unknown } | { ok: false; error: Error };

/**
 * Threads started ahead of their runner (see {@link prestartThreads}), each
 * loading the processors module; the first pool of that module takes them.
 * Until taken, a thread is unreferenced and an error of it only drops it.
 */
const prestarted: { href: string; worker: Worker; dropOnError: () => void }[] = [];

/**
 * Start `count` worker threads for the processors module now, so that they load
 * their modules while the caller does other work (opening the store, hashing
 * files): a thread takes ~0.3-0.5 s to load the processors. A runner created
 * later for the same module takes them instead of starting its own; threads
 * never taken do not keep the process alive.
 * @returns the thread ids of the threads waiting for this module (new and earlier ones)
 */
export function prestartThreads(processorsModule: string | URL, count: number): number[] {
  const href = moduleHref(processorsModule);
  for (let i = prestarted.filter((p) => p.href === href).length; i < count; i++) {
    const worker = new Worker(threadEntryPath(), { workerData: { processorsModule: href } });
    worker.unref();
    const entry = {
      href, worker,
      dropOnError: () => {
        const k = prestarted.indexOf(entry);
        if (k >= 0) prestarted.splice(k, 1);
        void worker.terminate();
      },
    };
    worker.once('error', entry.dropOnError);
    worker.once('exit', entry.dropOnError);
    prestarted.push(entry);
  }
  return prestarted.filter((p) => p.href === href).map((p) => p.worker.threadId);
}

/** A prestarted thread for this module, handed the repository port; null when none is left. */
function takePrestarted(href: string, repoPort: MessagePort): Worker | null {
  const k = prestarted.findIndex((p) => p.href === href);
  if (k < 0) return null;
  const [entry] = prestarted.splice(k, 1);
  entry.worker.off('error', entry.dropOnError);
  entry.worker.off('exit', entry.dropOnError);
  entry.worker.postMessage({ kind: 'attach', repoPort }, [repoPort]);
  return entry.worker;
}

interface Slot {
  worker: Worker;
  ready: Promise<void>;
  /** The jobs the thread holds: one, or two while the first waits for the main thread (see ThreadPool). */
  jobs: Map<string, { settle(o: Outcome): void; log(line: string): void }>;
  /** Repository calls of this thread being answered on the main thread now. */
  repoCalls: number;
  stopRepo: () => void;
  dead: boolean;
}

/** Most jobs a thread holds at once: a second only while the first waits for a repository call. */
const JOBS_PER_THREAD = 2;

/**
 * A fixed-size pool of worker threads, each computing one job at a time. A
 * thread whose job waits for a repository call (a scene job storing its rows:
 * PGlite runs on the main thread) is handed the next waiting job meanwhile, so
 * that it computes while the main thread stores, instead of waiting with it.
 * Waiting jobs start nearest-the-root first (by depth in their tree, then in
 * order of arrival): a job whose children are done goes before the next
 * waiting leaf, so branches finish one by one instead of every leaf running first.
 */
class ThreadPool {
  private slots: Slot[] = [];
  private waiting: { attempt: JobAttempt; depth: number; settle(o: Outcome): void; log(line: string): void }[] = [];
  private closed = false;
  constructor(private size: number, private moduleHref: string, private repo: object) {}

  run(attempt: JobAttempt, depth: number, log: (line: string) => void): Promise<Outcome> {
    return new Promise((settle) => {
      let at = this.waiting.length;
      while (at > 0 && this.waiting[at - 1].depth > depth) at--;
      this.waiting.splice(at, 0, { attempt, depth, settle, log });
      this.pump();
    });
  }

  private spawn(): Slot {
    const { port1, port2 } = new MessageChannel();
    const worker = takePrestarted(this.moduleHref, port2) ?? new Worker(threadEntryPath(), {
      workerData: { processorsModule: this.moduleHref, repoPort: port2 },
      transferList: [port2],
    });
    worker.unref();
    let markReady!: () => void;
    let failReady!: (e: Error) => void;
    const slot: Slot = {
      worker, jobs: new Map(), repoCalls: 0, stopRepo: () => undefined, dead: false,
      ready: new Promise<void>((res, rej) => { markReady = res; failReady = rej; }),
    };
    slot.stopRepo = serveRepo(port1, this.countedRepo(slot));
    slot.ready.catch(() => undefined);
    worker.on('message', (msg: { kind: string; jobId?: string; ok?: boolean; value?: unknown; error?: SerializedError; line?: string }) => {
      if (msg.kind === 'ready') markReady();
      else if (msg.kind === 'log') slot.jobs.get(msg.jobId ?? '')?.log(msg.line ?? '');
      else if (msg.kind === 'done') {
        const b = slot.jobs.get(msg.jobId ?? '');
        if (!b) return;
        slot.jobs.delete(msg.jobId!);
        if (slot.jobs.size === 0) worker.unref();
        b.settle(msg.ok ? { ok: true, value: msg.value } : { ok: false, error: reviveError(msg.error!) });
        // after the promise callbacks this settlement sets off, among them the
        // runner queueing the parent whose last child this was
        setImmediate(() => this.pump());
      }
    });
    const die = (err: Error) => {
      if (slot.dead) return;
      slot.dead = true;
      slot.stopRepo();
      failReady(err);
      this.slots = this.slots.filter((s) => s !== slot);
      const held = [...slot.jobs.values()];
      slot.jobs.clear();
      for (const b of held) b.settle({ ok: false, error: err });
      this.pump();
    };
    worker.on('error', (e) => die(e instanceof Error ? e : new Error(String(e))));
    worker.on('exit', (code) => die(new Error(`worker thread exited with code ${code}`)));
    this.slots.push(slot);
    return slot;
  }

  /**
   * The repository as this slot's thread reaches it, counting the calls being
   * answered: a thread whose every job waits for one may take another job.
   */
  private countedRepo(slot: Slot): object {
    const repo = this.repo as Record<string, unknown>;
    const counted: Record<string, unknown> = {};
    for (const [name, fn] of Object.entries(repo)) {
      if (typeof fn !== 'function') continue;
      counted[name] = async (...args: unknown[]) => {
        slot.repoCalls++;
        this.pump();
        try {
          return await (fn as (...a: unknown[]) => unknown).apply(repo, args);
        } finally {
          slot.repoCalls--;
        }
      };
    }
    return counted;
  }

  /** A thread that can take a job now: an idle one first, else one whose every job waits for the main thread. */
  private freeSlot(): Slot | undefined {
    return this.slots.find((s) => !s.dead && s.jobs.size === 0)
      ?? this.slots.find((s) => !s.dead && s.jobs.size < JOBS_PER_THREAD && s.repoCalls >= s.jobs.size);
  }

  private pump(): void {
    if (this.closed) return;
    while (this.waiting.length > 0) {
      let slot = this.freeSlot();
      if (!slot || (slot.jobs.size > 0 && this.slots.length < this.size)) {
        if (this.slots.length < this.size) slot = this.spawn();
        else if (!slot) return;
      }
      const task = this.waiting.shift()!;
      const s = slot;
      s.jobs.set(task.attempt.jobId, { settle: task.settle, log: task.log });
      s.worker.ref();
      s.ready.then(
        () => { if (!s.dead) s.worker.postMessage({ kind: 'run', attempt: task.attempt }); },
        () => undefined, // die() already settled the task
      );
    }
  }

  async close(): Promise<void> {
    this.closed = true;
    for (const t of this.waiting) t.settle({ ok: false, error: new ServiceError('the runner was closed') });
    this.waiting = [];
    const slots = this.slots;
    this.slots = [];
    await Promise.all(slots.map(async (s) => { s.dead = true; s.stopRepo(); await s.worker.terminate(); }));
  }
}

/** A limit on jobs running at once: `acquire` waits for a free slot, `release` hands it to the next waiter. */
class Slots {
  private running = 0;
  private readonly waiting: (() => void)[] = [];
  constructor(private readonly limit: number) {}
  acquire(): Promise<void> {
    return new Promise<void>((res) => {
      if (this.running < this.limit) { this.running++; res(); } else this.waiting.push(() => { this.running++; res(); });
    });
  }
  release(): void {
    this.running--;
    const next = this.waiting.shift();
    if (next) next();
  }
}

/** Jobs completed earlier in this runner's life count as done; every other job waits for its children that are not. */
function takeReusable(
  nodes: readonly FlatNode[], reusable: ReadonlySet<string>, completed: ReadonlyMap<string, unknown>,
  values: Map<string, unknown>, doneIds: NamedIdSet, pendingChildren: Map<string, number>,
): void {
  for (const n of nodes) {
    if (reusable.has(n.spec.id)) { values.set(n.spec.id, completed.get(n.spec.id)); doneIds.add(n.spec.id); }
  }
  for (const n of nodes) {
    if (!reusable.has(n.spec.id)) pendingChildren.set(n.spec.id, n.childIds.filter((c) => !reusable.has(c)).length);
  }
}

/** One try of a job: its data and what its children gave (or that they failed). */
function jobAttempt(n: FlatNode, values: ReadonlyMap<string, unknown>, attempt: number): JobAttempt {
  const childrenValues: Record<string, unknown> = {};
  const failedChildren: string[] = [];
  for (const c of n.childIds) {
    if (values.has(c)) childrenValues[c] = values.get(c);
    else failedChildren.push(c);
  }
  return {
    jobId: n.spec.id, name: n.spec.name, data: n.spec.data,
    childrenValues: sortedRecord(childrenValues), failedChildren: failedChildren.sort(), attempt,
  };
}

/** The flow's result: every job's value, or its failure (a job that never ran is a bug). */
function flowResult(nodes: readonly FlatNode[], values: ReadonlyMap<string, unknown>, failed: ReadonlyMap<string, FailureRecord>): FlowResult {
  const results = new Map<string, unknown>();
  const failures: JobFailure[] = [];
  for (const n of nodes) {
    if (values.has(n.spec.id)) results.set(n.spec.id, values.get(n.spec.id));
    else failures.push(jobFailure(n.spec.id, n.spec.name, failed.get(n.spec.id), { kind: 'bug', error: 'job did not run' }));
  }
  return { results, failures };
}

/**
 * Create the embedded runner.
 * @example
 * const runner = createInProcessRunner({ processorsModule: new URL('./run/registry.js', import.meta.url), repo: store, threadedJobs: ['zonal'] });
 * const { results, failures } = await runner.runFlow(tree);
 * await runner.close();
 */
export function createInProcessRunner(options: InProcessRunnerOptions): Runner {
  const threads = Math.max(1, options.threads ?? os.availableParallelism());
  const concurrency = Math.max(1, options.concurrency ?? threads);
  const attempts = Math.max(1, options.attempts ?? DEFAULT_ATTEMPTS);
  const backoffMs = options.backoffMs ?? DEFAULT_BACKOFF_MS;
  const policy: RetryPolicy = { attempts, backoffMs, serviceBudgetMs: Math.max(0, options.serviceRetryBudgetMs ?? 0) };
  const threaded = new Set(options.threadedJobs ?? []);
  const href = moduleHref(options.processorsModule);
  const repo = options.repo;
  let modPromise: Promise<ProcessorsModule> | null = null;
  let pool: ThreadPool | null = null;
  let closed = false;
  // Results of jobs completed during this runner's life (idempotence by id).
  const completed = new Map<string, unknown>();
  const timers = new Set<NodeJS.Timeout>();
  const aborts = new Set<(e: Error) => void>();

  // Main-thread jobs wait here for a free slot.
  const mainSlots = new Slots(concurrency);

  async function attemptOnce(a: JobAttempt, depth: number, log: (l: string) => void): Promise<Outcome> {
    if (threaded.has(a.name)) {
      pool ??= new ThreadPool(threads, href, repo);
      return pool.run(a, depth, log);
    }
    const mod = await (modPromise ??= loadProcessors(href));
    await mainSlots.acquire();
    try {
      const value = await runAttempt(mod.processors, a, repo, log);
      return { ok: true, value: asJsonValue(value) };
    } catch (e) {
      return { ok: false, error: e instanceof Error ? e : new Error(String(e)) };
    } finally {
      mainSlots.release();
    }
  }

  async function runFlow(root: JobSpec, opts: RunFlowOptions = {}): Promise<FlowResult> {
    if (closed) throw new ServiceError('the in-process runner is closed');
    const nodes = flattenTree(root);
    const byId = new Map<string, FlatNode>(nodes.map((n) => [n.spec.id, n]));
    const depth = new Map<string, number>();
    for (const n of nodes) depth.set(n.spec.id, n.parentId === null ? 0 : depth.get(n.parentId)! + 1); // pre-order: parents first
    const reusable = reusableIds(nodes, (id) => completed.has(id));
    // Load the module up front so a broken registry fails the call, not every job.
    await (modPromise ??= loadProcessors(href));

    const values = new Map<string, unknown>();
    const failed = new Map<string, FailureRecord>();
    const lastFailure = new Map<string, FailureRecord>();
    const pendingChildren = new Map<string, number>();
    let running = 0;
    const nameOf = (id: string) => byId.get(id)?.spec.name ?? '?';
    const doneIds = new NamedIdSet(nameOf);
    const failedIds = new NamedIdSet(nameOf);
    const totals = totalsByName(nodes.map((n) => n.spec.name));
    const report = () => opts.onProgress?.(progressOf(doneIds, failedIds, totals, running));

    takeReusable(nodes, reusable, completed, values, doneIds, pendingChildren);

    return new Promise<FlowResult>((resolve, reject) => {
      let finished = false;
      const abort = (e: Error) => { if (!finished) { finished = true; reject(e); } };
      aborts.add(abort);

      const finish = () => {
        if (finished) return;
        finished = true;
        aborts.delete(abort);
        resolve(flowResult(nodes, values, failed));
      };

      const settleNode = (n: FlatNode) => {
        report();
        if (n.parentId === null) { finish(); return; }
        const left = pendingChildren.get(n.parentId)! - 1;
        pendingChildren.set(n.parentId, left);
        if (left === 0) start(byId.get(n.parentId)!, 1);
      };

      const start = (n: FlatNode, attempt: number) => {
        if (finished) return;
        const a = jobAttempt(n, values, attempt);
        if (attempt === 1) { running++; report(); }
        attemptOnce(a, depth.get(n.spec.id)!, () => undefined).then((o) => {
          if (finished) return;
          if (o.ok) {
            running--;
            values.set(n.spec.id, o.value);
            doneIds.add(n.spec.id);
            completed.set(n.spec.id, o.value);
            settleNode(n);
            return;
          }
          const now = Date.now();
          const record = failureRecord(o.error, lastFailure.get(n.spec.id), now);
          lastFailure.set(n.spec.id, record);
          const delay = nextRetryDelayMs(policy, attempt, record, now);
          if (delay !== null) {
            const t = setTimeout(() => { timers.delete(t); start(n, attempt + 1); }, delay);
            timers.add(t);
          } else {
            running--;
            completed.delete(n.spec.id);
            lastFailure.delete(n.spec.id);
            failed.set(n.spec.id, record);
            failedIds.add(n.spec.id);
            settleNode(n);
          }
        }, (e) => abort(e instanceof Error ? e : new Error(String(e))));
      };

      report();
      if (reusable.has(root.id)) { finish(); return; }
      for (const n of nodes) if (pendingChildren.get(n.spec.id) === 0) start(n, 1);
    });
  }

  return {
    runFlow,
    async close() {
      closed = true;
      for (const t of timers) clearTimeout(t);
      timers.clear();
      for (const a of aborts) a(new ServiceError('the in-process runner was closed while a run was in progress'));
      aborts.clear();
      if (pool) await pool.close();
      pool = null;
    },
  };
}
