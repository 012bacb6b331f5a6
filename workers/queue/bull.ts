/**
 * The distributed runner on BullMQ: `createBullRunner` submits a job tree as
 * a flow (one queue per processor name) and waits for it; `startWorker` runs
 * the processors for `heatledger worker`.
 *
 * Idempotent by default: a job's BullMQ id is its spec id, so submitting a
 * tree whose jobs already completed re-runs nothing. Ids are content-derived
 * (see deriveJobId); to force re-processing put a run nonce into the ids of
 * the jobs that should run again (and of their ancestors). Jobs that failed
 * permanently, and every ancestor that ran without them, are run again when
 * the tree is submitted again (a failure is not a result worth keeping).
 * Completed jobs are kept in Redis (removeOnComplete: false): they are the
 * record that makes re-submission cheap.
 *
 * Already-completed children are not re-attached to a new parent (BullMQ lets
 * a job belong to one parent only); their results travel in the parent's job
 * data instead (`reused`), and the worker merges them into childrenValues.
 */
import { createRequire } from 'node:module';
import type * as BullMQ from 'bullmq';
import type { FlowJob, MinimalJob } from 'bullmq';
import type * as IORedis from 'ioredis';
import { InputError, isInputError, ServiceError } from '../core/errors.js';
import { settleWithin } from '../core/settle.js'; // closing connections must not hang while Redis is away
import { deferredCaList, tlsWithExtraCa } from '../extra-ca.js';
import { loadProcessors, runAttempt, sortedRecord } from './execute.js';
import {
  DEFAULT_ATTEMPTS, DEFAULT_BACKOFF_MS, DEFAULT_PREFIX, LOCK_DURATION_MS, MAX_STALLED_COUNT,
  STALLED_INTERVAL_MS, queueNameFor,
} from './settings.js';
import { asFailureRecord, failureRecord, jobFailure, nextRetryDelayMs, type FailureRecord, type RetryPolicy } from './retry.js';
import { flattenTree, reusableIds, type FlatNode } from './tree.js';
import { NamedIdSet, progressOf, totalsByName } from './progress.js';
import type { FlowResult, JobFailure, JobSpec, Runner, RunFlowOptions } from './types.js';

// BullMQ and ioredis ship CommonJS (BullMQ's ES build has extensionless
// imports that only a bundler resolves). Imported from an ES module, Node first
// scans every file of their sources for named exports (cjs-module-lexer);
// required, it does not: 0.49-0.53 s of CPU against 0.21-0.24 s to load both
// (three runs each, 2-core machine, 2026-12), paid by the ingest command and
// by every worker as it starts.
const require = createRequire(import.meta.url);
const { FlowProducer, Job, Queue, QueueEvents, UnrecoverableError, Worker } = require('bullmq') as typeof BullMQ;
const { Redis } = require('ioredis') as typeof IORedis;
type Job = BullMQ.Job;
type Queue = BullMQ.Queue;
type QueueEvents = BullMQ.QueueEvents;
type Worker = BullMQ.Worker;
type Redis = IORedis.Redis;

/** What a BullMQ job carries: the processor input plus results of children reused from earlier runs. */
interface JobEnvelope {
  input: unknown;
  reused: Record<string, unknown>;
  /** The producer's retry rule (retry.ts), applied by the workers' back-off strategy. */
  retry?: RetryPolicy;
  /**
   * Children submitted as jobs with this one: with none, the worker asks Redis
   * nothing about them (two round trips a job saved). Absent in jobs queued
   * before the field existed: then the worker asks.
   */
  queuedChildren?: number;
}

/** What a worker keeps in a job's progress: the last failed try (read by the producer and the back-off strategy). */
interface FailureProgress {
  failure?: FailureRecord;
}

/** BullMQ's own try limit; the real limit is the retry rule (the back-off strategy answers -1 to stop). */
const BULL_ATTEMPTS = 1_000_000;
/** The back-off type that selects the workers' strategy. */
const BACKOFF_TYPE = 'heatledger';
/** Redis hash (under the prefix) where workers record the stalled-check interval they use. */
const SETTINGS_KEY = 'heatledger:worker-settings';

function lastFailureOf(job: { progress?: unknown } | undefined): FailureRecord | null {
  return asFailureRecord((job?.progress as FailureProgress | undefined)?.failure);
}

/** Redis host:port for messages (never a password). */
function describeRedisUrl(redisUrl: string): string {
  try { return new URL(redisUrl).host || redisUrl; } catch { return '(unparseable REDIS_URL)'; }
}

export interface BullRunnerOptions {
  /** redis://host:port[/db] */
  redisUrl: string;
  /** Redis key prefix; default 'bull'. Tests use a unique one. */
  prefix?: string;
  /** Queue per processor name; default `heatledger-<name>`. */
  queueNames?: Record<string, string>;
  /** Tries per job, first included; default 5. */
  attempts?: number;
  /** First retry delay (ms), doubling on each retry; default 1000. */
  backoffMs?: number;
  /** How often (ms) the root's state is checked besides the event stream; default 1000. */
  pollMs?: number;
  /** How long (ms) a job failing with ServiceError keeps being retried beyond `attempts`; default 0. */
  serviceRetryBudgetMs?: number;
  /** How long (ms) Redis may stay unreachable before runFlow gives up with a ServiceError; default 300 000. */
  redisBudgetMs?: number;
  /**
   * How long (ms) to wait with no worker activity on the tree (no job taken,
   * retried or finished, none in hand) before runFlow stops waiting and returns
   * with `stopped`; default none (wait for ever).
   */
  stallTimeoutMs?: number;
}

/**
 * Watch a connection: rejects (ServiceError naming Redis) once it has been
 * down for longer than `budgetMs` without coming back.
 */
function watchRedis(connection: Redis, where: string, budgetMs: number, lastError: () => string): { failed: Promise<never>; stop(): void } {
  let downSince: number | null = connection.status === 'ready' ? null : Date.now();
  const onDown = () => { downSince ??= Date.now(); };
  const onReady = () => { downSince = null; };
  connection.on('close', onDown);
  connection.on('reconnecting', onDown);
  connection.on('ready', onReady);
  let timer: NodeJS.Timeout | undefined;
  const failed = new Promise<never>((_, reject) => {
    timer = setInterval(() => {
      if (downSince !== null && Date.now() - downSince > budgetMs) {
        clearInterval(timer);
        const seconds = Math.round((Date.now() - downSince) / 1000);
        const why = lastError();
        reject(new ServiceError(`cannot reach Redis at ${where}${why ? ` (${why})` : ''}; unreachable for ${seconds} s, longer than the service retry budget of ${Math.round(budgetMs / 1000)} s`, { service: 'Redis' }));
      }
    }, Math.min(500, Math.max(50, budgetMs / 4)));
  });
  failed.catch(() => undefined);
  return {
    failed,
    stop() {
      clearInterval(timer);
      connection.off('close', onDown);
      connection.off('reconnecting', onDown);
      connection.off('ready', onReady);
    },
  };
}

/** An ioredis connection as BullMQ needs it (commands wait through reconnects). */
function connect(redisUrl: string, onError: (e: Error) => void): Redis {
  const r = new Redis(redisUrl, {
    // rediss:// (TLS): also trust the NODE_EXTRA_CA_CERTS the bin deferred (extra-ca.ts); a tls
    // option given here is used as ioredis would use its own `tls: true` for that scheme
    ...(redisUrl.startsWith('rediss://') && deferredCaList() ? { tls: tlsWithExtraCa({}) } : {}),
    maxRetriesPerRequest: null,
    // Reconnect quickly but not in a tight loop while Redis is away.
    retryStrategy: (times) => Math.min(times * 200, 2_000),
  });
  r.on('error', onError);
  return r;
}

/** Reports a repeating connection error once until it changes (also to `logger`); `last()` is the latest message. */
function quietErrors(prefix: string, logger?: WorkerLogger): ((e: Error) => void) & { last(): string; silence(): void } {
  let last = '';
  let lastMessage = '';
  let silent = false;
  const report = (e: Error) => {
    lastMessage = e.message || String(e);
    const text = `${prefix}: ${lastMessage}`;
    if (!silent && text !== last) {
      last = text;
      process.stderr.write(`${text}\n`);
      logger?.error({ error: lastMessage }, 'connection error');
    }
  };
  // silence(): the connections are being closed on purpose; their errors ("Connection is closed") are not news
  return Object.assign(report, { last: () => lastMessage, silence: () => { silent = true; } });
}

function idFromKey(key: string): string {
  // Keys are `<prefix>:<queue>:<id>`; ids never contain ':' (flattenTree checks).
  return key.slice(key.lastIndexOf(':') + 1);
}

/**
 * Create the producer side of the distributed runner.
 * @example
 * const runner = createBullRunner({ redisUrl: 'redis://127.0.0.1:6379' });
 * const { results, failures } = await runner.runFlow(tree, { onProgress: (p) => bar.update(p.done + p.failed) });
 * await runner.close();
 */
export function createBullRunner(options: BullRunnerOptions): Runner {
  const prefix = options.prefix ?? DEFAULT_PREFIX;
  const attempts = Math.max(1, options.attempts ?? DEFAULT_ATTEMPTS);
  const backoffMs = options.backoffMs ?? DEFAULT_BACKOFF_MS;
  const pollMs = options.pollMs ?? 1_000;
  const retry: RetryPolicy = { attempts, backoffMs, serviceBudgetMs: Math.max(0, options.serviceRetryBudgetMs ?? 0) };
  const redisBudgetMs = options.redisBudgetMs ?? 300_000;
  const where = describeRedisUrl(options.redisUrl);
  const onError = quietErrors('heatledger queue (producer)');
  const connection = connect(options.redisUrl, onError);
  const queues = new Map<string, Queue>();
  const queueOf = (name: string) => options.queueNames?.[name] ?? queueNameFor(name);
  const queue = (name: string): Queue => {
    const qn = queueOf(name);
    let q = queues.get(qn);
    if (!q) {
      q = new Queue(qn, { connection, prefix });
      q.on('error', onError);
      queues.set(qn, q);
    }
    return q;
  };
  const flow = new FlowProducer({ connection, prefix });
  flow.on('error', onError);
  const openEvents = new Set<QueueEvents>();
  // Connections of the event streams; closed with the run, or by close() when a run was abandoned (Redis away).
  const openEventConnections = new Set<Redis>();
  let closed = false;

  async function inspect(nodes: FlatNode[]): Promise<Map<string, { job: Job | undefined; state: string }>> {
    const out = new Map<string, { job: Job | undefined; state: string }>();
    const batch = 200;
    for (let i = 0; i < nodes.length; i += batch) {
      await Promise.all(nodes.slice(i, i + batch).map(async (n) => {
        const job = await queue(n.spec.name).getJob(n.spec.id);
        out.set(n.spec.id, { job, state: job ? await job.getState() : 'missing' });
      }));
    }
    return out;
  }

  /** Submit what still has to run; returns false when the root had completed already. */
  async function submit(nodes: FlatNode[], byId: Map<string, FlatNode>): Promise<{ submitted: boolean; reusable: Set<string> }> {
    const states = await inspect(nodes);
    const reusable = reusableIds(nodes, (id) => states.get(id)?.state === 'completed');
    const root = nodes[0];
    if (reusable.has(root.spec.id)) return { submitted: false, reusable };
    // Finished jobs that must run again are removed first, else their id would be ignored.
    for (const n of nodes) {
      const s = states.get(n.spec.id)!;
      if (!reusable.has(n.spec.id) && s.job && (s.state === 'completed' || s.state === 'failed')) {
        await s.job.remove({ removeChildren: false });
      }
    }
    const build = (n: FlatNode, isRoot: boolean): FlowJob => {
      const reused: Record<string, unknown> = {};
      const children: FlowJob[] = [];
      for (const c of n.childIds) {
        if (reusable.has(c)) reused[c] = states.get(c)!.job!.returnvalue;
        else children.push(build(byId.get(c)!, false));
      }
      const data: JobEnvelope = { input: n.spec.data, reused, retry, queuedChildren: children.length };
      const job = {
        name: n.spec.name,
        queueName: queueOf(n.spec.name),
        data,
        opts: {
          jobId: n.spec.id,
          attempts: BULL_ATTEMPTS,
          backoff: { type: BACKOFF_TYPE, delay: backoffMs },
          removeOnComplete: false,
          removeOnFail: false,
          ...(isRoot ? {} : { ignoreDependencyOnFailure: true }),
        },
      };
      return (children.length > 0 ? { ...job, children } : job) as FlowJob;
    };
    try {
      await flow.add(build(root, true));
    } catch (e) {
      throw new ServiceError(`could not submit job tree ${root.spec.id} to Redis: ${(e as Error).message}`, { cause: e, service: 'Redis' });
    }
    return { submitted: true, reusable };
  }

  async function collect(nodes: FlatNode[]): Promise<FlowResult> {
    const states = await inspect(nodes);
    const results = new Map<string, unknown>();
    const failures: JobFailure[] = [];
    for (const n of nodes) {
      const s = states.get(n.spec.id)!;
      if (s.state === 'completed') { results.set(n.spec.id, s.job!.returnvalue ?? null); continue; }
      const last = lastFailureOf(s.job);
      if (s.state === 'failed') {
        const reason = s.job!.failedReason || 'failed without a reason';
        // A failure the processor did not record (BullMQ gave the job up: its worker
        // stalled too often, or lost its lock) is the queue's, not the input's.
        failures.push(jobFailure(n.spec.id, n.spec.name, last?.error === reason ? last : null, { kind: 'service', error: reason }));
      } else {
        failures.push(jobFailure(n.spec.id, n.spec.name, null, { kind: 'service', error: `job not finished (state ${s.state})` }));
      }
    }
    return { results, failures };
  }

  /** Jobs waiting in each queue of the tree (queues with none left out). */
  async function waitingByQueue(nodes: FlatNode[]): Promise<{ queue: string; waiting: number }[]> {
    const out: { queue: string; waiting: number }[] = [];
    for (const name of new Set(nodes.map((n) => n.spec.name))) {
      const c = await queue(name).getJobCounts('waiting', 'prioritized', 'delayed');
      const waiting = (c.waiting ?? 0) + (c.prioritized ?? 0) + (c.delayed ?? 0);
      if (waiting > 0) out.push({ queue: queueOf(name), waiting });
    }
    return out;
  }

  async function activeCount(nodes: FlatNode[]): Promise<number> {
    let n = 0;
    for (const name of new Set(nodes.map((x) => x.spec.name))) n += await queue(name).getActiveCount();
    return n;
  }

  /** A queue nobody serves waits for ever: say so (every 30 s, until a worker shows up). Returns when to look next. */
  async function noticeUnservedQueues(nodes: FlatNode[], onNotice: (message: string) => void): Promise<number> {
    const counts = await Promise.all([...new Set(nodes.map((n) => n.spec.name))].map((name) => queue(name).getWorkersCount().catch(() => 1)));
    if (!counts.some((c) => c === 0)) return Infinity;
    onNotice(`no heatledger worker is serving ${counts.every((c) => c === 0) ? 'the' : 'some of the'} queues yet; start one with \`heatledger worker\` (same REDIS_URL and DATABASE_URL)`);
    return Date.now() + 30_000;
  }

  /** Why the run stops waiting when no worker made progress since `lastActivity`: what is still queued where. */
  async function stalledStop(nodes: FlatNode[], lastActivity: number): Promise<NonNullable<FlowResult['stopped']>> {
    const waiting = await waitingByQueue(nodes);
    const seconds = Math.round((Date.now() - lastActivity) / 1000);
    const queued = waiting.length ? waiting.map((w) => `${w.waiting} job(s) waiting in queue ${w.queue}`).join(', ') : 'no job waiting';
    return {
      kind: 'service',
      service: 'worker',
      error: `no heatledger worker made progress on this run for ${seconds} s (${queued}); is a \`heatledger worker\` running (same REDIS_URL and HEATLEDGER_QUEUE_PREFIX)?`,
    };
  }

  async function runFlow(rootSpec: JobSpec, opts: RunFlowOptions = {}): Promise<FlowResult> {
    if (closed) throw new ServiceError('the BullMQ runner is closed');
    const watch = watchRedis(connection, where, redisBudgetMs, onError.last);
    try {
      return await Promise.race([watch.failed, waitForFlow(rootSpec, opts)]);
    } finally {
      watch.stop();
    }
  }

  async function waitForFlow(rootSpec: JobSpec, opts: RunFlowOptions): Promise<FlowResult> {
    const nodes = flattenTree(rootSpec);
    const byId = new Map(nodes.map((n) => [n.spec.id, n]));
    const root = nodes[0];
    const rootQueue = queueOf(root.spec.name);

    // Progress from the queues' event streams; subscribe before submitting so nothing is missed.
    const nameOf = (id: string) => byId.get(id)?.spec.name ?? '?';
    const done = new NamedIdSet(nameOf);
    const failed = new NamedIdSet(nameOf);
    const totals = totalsByName(nodes.map((n) => n.spec.name));
    const running = new Set<string>();
    const report = () => opts.onProgress?.(progressOf(done, failed, totals, running.size));
    let rootFinished: (() => void) | null = null;
    // Worker activity on the tree (a job taken, retried, finished or reporting): the stall check's clock.
    let lastActivity = Date.now();
    const events: QueueEvents[] = [];
    const eventConnections: Redis[] = [];
    // Nothing is opened on a Redis that is not there (runFlow gives up on it after the budget).
    if (connection.status !== 'ready') await new Promise<void>((res) => { connection.once('ready', () => res()); });
    if (closed) throw new ServiceError('the BullMQ runner was closed while a run was in progress');
    for (const qn of new Set(nodes.map((n) => queueOf(n.spec.name)))) {
      // QueueEvents blocks on its connection: give it its own (closed below).
      const ec = connection.duplicate();
      ec.on('error', onError);
      eventConnections.push(ec);
      openEventConnections.add(ec);
      const qe = new QueueEvents(qn, { connection: ec, prefix });
      qe.on('error', onError);
      const isOurs = (id: string) => byId.has(id) && queueOf(byId.get(id)!.spec.name) === qn;
      qe.on('active', ({ jobId }) => { if (isOurs(jobId)) { lastActivity = Date.now(); running.add(jobId); report(); } });
      for (const ev of ['progress', 'delayed'] as const) qe.on(ev, ({ jobId }: { jobId: string }) => { if (isOurs(jobId)) lastActivity = Date.now(); });
      qe.on('completed', ({ jobId }) => {
        if (!isOurs(jobId)) return;
        lastActivity = Date.now();
        running.delete(jobId); failed.delete(jobId); done.add(jobId); report();
        if (jobId === root.spec.id && qn === rootQueue) rootFinished?.();
      });
      qe.on('failed', ({ jobId }) => {
        if (!isOurs(jobId)) return;
        lastActivity = Date.now();
        running.delete(jobId); failed.add(jobId); report();
        if (jobId === root.spec.id && qn === rootQueue) rootFinished?.();
      });
      events.push(qe);
      openEvents.add(qe);
    }
    try {
      await Promise.all(events.map((e) => e.waitUntilReady()));
      let { submitted, reusable } = await submit(nodes, byId);
      for (const id of reusable) done.add(id);
      report();
      lastActivity = Date.now();
      let stopped: FlowResult['stopped'];
      if (submitted) {
        // Wait for the root: its event, or (event missed during a Redis outage) a poll of its state.
        // If Redis lost the tree (restarted without persistence), submit again: ids keep it idempotent.
        let resubmits = 0;
        let nextWorkerCheck = 0;
        for (;;) {
          if (opts.onNotice && Date.now() >= nextWorkerCheck) nextWorkerCheck = await noticeUnservedQueues(nodes, opts.onNotice);
          const finishedByEvent = new Promise<void>((res) => { rootFinished = res; });
          let timer: NodeJS.Timeout | undefined;
          await Promise.race([finishedByEvent, new Promise<void>((res) => { timer = setTimeout(res, pollMs); })]);
          clearTimeout(timer);
          if (closed) throw new ServiceError('the BullMQ runner was closed while a run was in progress');
          const state = await queue(root.spec.name).getJobState(root.spec.id);
          if (state === 'completed' || state === 'failed') break;
          if (options.stallTimeoutMs !== undefined && Date.now() - lastActivity > options.stallTimeoutMs) {
            // A job in hand is activity too (a long scene), as long as its worker holds the lock.
            if (await activeCount(nodes) > 0) lastActivity = Date.now();
            else {
              stopped = await stalledStop(nodes, lastActivity);
              break;
            }
          }
          if (state === 'unknown') {
            if (++resubmits > 10) throw new ServiceError(`job tree ${root.spec.id} keeps vanishing from Redis; is it being flushed?`);
            ({ reusable } = await submit(nodes, byId));
            done.clear(); failed.clear(); running.clear();
            for (const id of reusable) done.add(id);
            report();
          }
        }
      }
      const result: FlowResult = await collect(nodes);
      if (stopped) result.stopped = stopped;
      // Final counts from the stored states (events may have been lost in an outage).
      done.clear(); failed.clear(); running.clear();
      for (const id of result.results.keys()) done.add(id);
      for (const f of result.failures) failed.add(f.id);
      report();
      return result;
    } finally {
      rootFinished = null;
      await Promise.all(events.map(async (e) => { openEvents.delete(e); await settleWithin(e.close(), 2_000); }));
      for (const c of eventConnections) { c.disconnect(); openEventConnections.delete(c); }
    }
  }

  return {
    runFlow,
    async close() {
      closed = true;
      onError.silence();
      if (connection.status !== 'ready') {
        // Redis is away: BullMQ's close() would wait for a reconnect; start the closes without waiting and drop the connections.
        for (const e of openEvents) void e.close().catch(() => undefined);
        openEvents.clear();
        for (const c of openEventConnections) c.disconnect();
        openEventConnections.clear();
        connection.disconnect();
        return;
      }
      // Bounded all the same: Redis may go away while closing.
      for (const e of openEvents) await settleWithin(e.close(), 2_000);
      for (const q of queues.values()) await settleWithin(q.close(), 2_000);
      await settleWithin(flow.close(), 2_000);
      for (const c of openEventConnections) c.disconnect();
      openEventConnections.clear();
      connection.disconnect();
    },
  };
}

export interface StartWorkerOptions {
  redisUrl: string;
  /** File URL (or path) of the processors registry module. */
  processorsModule: string | URL;
  /** Jobs run at once per queue; default 1. */
  concurrency?: number;
  /** Processor names to serve; default every processor in the module. */
  names?: string[];
  /** Stalled-job check interval (ms); default STALLED_INTERVAL_MS. Must match across all workers. */
  stalledInterval?: number;
  /** Job lock duration (ms); default LOCK_DURATION_MS. Must match across all workers. */
  lockDuration?: number;
  prefix?: string;
  queueNames?: Record<string, string>;
  /** Environment handed to createRepo; default process.env. */
  env?: Record<string, string | undefined>;
  /** Close gracefully on SIGTERM/SIGINT; default true. */
  handleSignals?: boolean;
  /** Where job log lines go; default BullMQ's job log. */
  onLog?(jobId: string, line: string): void;
  /** Structured log of the worker's jobs and connection errors (workers/log.ts gives one). */
  logger?: WorkerLogger;
}

/**
 * What the worker logs through (pino's call shape: fields, then message).
 * debug: a job taken, a processor's log line; info: a job done (with its
 * milliseconds); warn: a try that failed and may be retried; error: a job
 * refused as bad input (never retried), a connection error.
 */
export interface WorkerLogger {
  debug(fields: object, message: string): void;
  info(fields: object, message: string): void;
  warn(fields: object, message: string): void;
  error(fields: object, message: string): void;
}

export interface WorkerHandle {
  /** Stop taking jobs, let running ones finish, close the repository and connections. */
  close(): Promise<void>;
  /** Resolves once the worker has closed (by close() or a signal). */
  closed: Promise<void>;
}

/**
 * The workers' back-off strategy: the producer's retry rule (in the job's
 * envelope) applied to the try that just failed; -1 tells BullMQ to fail the job.
 */
function backoffStrategy(triesMade: number, _type?: string, err?: Error, job?: MinimalJob): number {
  const env = (job?.data ?? {}) as Partial<JobEnvelope>;
  const policy: RetryPolicy = env.retry ?? { attempts: DEFAULT_ATTEMPTS, backoffMs: DEFAULT_BACKOFF_MS, serviceBudgetMs: 0 };
  const last = asFailureRecord((err as { failure?: unknown } | undefined)?.failure) ?? lastFailureOf(job)
    ?? { kind: 'bug' as const, error: err?.message ?? 'Error', atMs: Date.now() };
  return nextRetryDelayMs(policy, triesMade, last, Date.now()) ?? -1;
}

/**
 * Check that this worker's stalled-check interval is the one the workers
 * already serving this Redis (same prefix) use, and record it. BullMQ's
 * stalled check is shared Redis-wide: two intervals would make one worker
 * take another's jobs for stalled ones.
 */
async function agreeStalledInterval(connection: Redis, prefix: string, queueName: string, stalledIntervalMs: number): Promise<void> {
  const key = `${prefix}:${SETTINGS_KEY}`;
  const recorded = Number(await connection.hget(key, 'stalledIntervalMs'));
  if (Number.isFinite(recorded) && recorded > 0 && recorded !== stalledIntervalMs) {
    const q = new Queue(queueName, { connection, prefix });
    q.on('error', () => undefined); // the connection's own listener reports it
    try {
      if ((await q.getWorkersCount()) > 0) {
        throw new InputError(
          `--stalled-interval is ${stalledIntervalMs / 1000} s but the heatledger workers already serving this Redis use ${recorded / 1000} s; give every worker the same value (option or HEATLEDGER_STALLED_INTERVAL)`,
        );
      }
    } finally {
      await q.close().catch(() => undefined);
    }
  }
  await connection.hset(key, 'stalledIntervalMs', String(stalledIntervalMs));
}

/**
 * Start one BullMQ worker per queue of the processors module (the
 * `heatledger worker` process). A processor's failure is recorded in the
 * job's progress with its kind (retry.ts); an InputError fails the job at
 * once, service errors are retried for the producer's budget, bugs a few
 * times, then the job fails with the reason.
 */
export async function startWorker(options: StartWorkerOptions): Promise<WorkerHandle> {
  const mod = await loadProcessors(options.processorsModule);
  const names = options.names ?? Object.keys(mod.processors);
  for (const n of names) {
    if (typeof mod.processors[n] !== 'function') throw new ServiceError(`no processor named ${n} in the processors module`);
  }
  const prefix = options.prefix ?? DEFAULT_PREFIX;
  const logger = options.logger;
  const onError = quietErrors('heatledger worker', logger);
  const stalledInterval = options.stalledInterval ?? STALLED_INTERVAL_MS;
  const connection = connect(options.redisUrl, onError);
  let repoHandle: { repo: unknown; close(): Promise<void> };
  try {
    await agreeStalledInterval(connection, prefix, options.queueNames?.[names[0]] ?? queueNameFor(names[0]), stalledInterval);
    repoHandle = await mod.createRepo(options.env ?? process.env);
  } catch (e) {
    connection.disconnect();
    throw e;
  }
  const { repo, close: closeRepo } = repoHandle;
  const workers: Worker[] = [];
  for (const name of names) {
    const qn = options.queueNames?.[name] ?? queueNameFor(name);
    const w = new Worker(qn, async (job: Job) => {
      const env = (job.data ?? { input: null, reused: {} }) as JobEnvelope;
      const childrenValues: Record<string, unknown> = { ...(env.reused ?? {}) };
      const [values, ignored] = env.queuedChildren === 0 ? [{}, {}]
        : await Promise.all([job.getChildrenValues(), job.getIgnoredChildrenFailures()]);
      for (const [k, v] of Object.entries(values ?? {})) childrenValues[idFromKey(k)] = v;
      const failedChildren = Object.keys(ignored ?? {}).map(idFromKey).sort();
      const fields = { job: job.name, job_id: job.id, attempt: job.attemptsMade + 1 };
      const log = options.onLog
        ? (line: string) => { logger?.debug({ ...fields, line }, 'job log'); options.onLog!(job.id!, line); }
        : (line: string) => { logger?.debug({ ...fields, line }, 'job log'); void job.log(line).catch(() => undefined); };
      const started = performance.now();
      logger?.debug(fields, 'job taken');
      try {
        const value = await runAttempt(mod.processors, {
          jobId: job.id!, name: job.name, data: env.input, childrenValues: sortedRecord(childrenValues),
          failedChildren, attempt: job.attemptsMade + 1,
        }, repo, log);
        logger?.info({ ...fields, ms: Math.round(performance.now() - started) }, 'job done');
        return value === undefined ? null : value;
      } catch (e) {
        const failure = failureRecord(e, lastFailureOf(job), Date.now());
        const failed = { ...fields, ms: Math.round(performance.now() - started), kind: failure.kind, error: failure.error };
        if (isInputError(e)) logger?.error(failed, 'job failed: bad input, not retried');
        else logger?.warn(failed, 'job try failed; retried while the retry rule allows');
        // Recorded for the producer (kind, service, since when) and the next try's back-off.
        await job.updateProgress({ failure } satisfies FailureProgress).catch(() => undefined);
        if (isInputError(e)) throw new UnrecoverableError(failure.error);
        const err = Object.assign(new Error(failure.error), { failure });
        err.stack = (e as Error)?.stack ?? err.stack;
        throw err;
      }
    }, {
      connection,
      prefix,
      concurrency: Math.max(1, options.concurrency ?? 1),
      stalledInterval,
      lockDuration: options.lockDuration ?? LOCK_DURATION_MS,
      maxStalledCount: MAX_STALLED_COUNT,
      settings: { backoffStrategy },
    });
    w.on('error', onError);
    workers.push(w);
  }

  let resolveClosed!: () => void;
  const closed = new Promise<void>((res) => { resolveClosed = res; });
  let closing: Promise<void> | null = null;
  const onSignal = () => { void close(); };
  const close = () => closing ??= (async () => {
    if (options.handleSignals !== false) {
      process.off('SIGTERM', onSignal);
      process.off('SIGINT', onSignal);
    }
    // worker.close() waits for the jobs in hand to finish.
    await Promise.all(workers.map((w) => w.close().catch(onError)));
    await closeRepo().catch(onError);
    connection.disconnect();
    resolveClosed();
  })();
  if (options.handleSignals !== false) {
    process.once('SIGTERM', onSignal);
    process.once('SIGINT', onSignal);
  }
  await Promise.all(workers.map((w) => w.waitUntilReady()));
  return { close, closed };
}
