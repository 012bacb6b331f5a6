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
import { FlowProducer, Job, Queue, QueueEvents, UnrecoverableError, Worker, type FlowJob } from 'bullmq';
import { Redis } from 'ioredis';
import { isInputError, ServiceError } from '../core/errors.js';
import { loadProcessors, runAttempt, sortedRecord } from './execute.js';
import {
  DEFAULT_ATTEMPTS, DEFAULT_BACKOFF_MS, DEFAULT_PREFIX, LOCK_DURATION_MS, MAX_STALLED_COUNT,
  STALLED_INTERVAL_MS, queueNameFor,
} from './settings.js';
import { describeError, flattenTree, reusableIds, type FlatNode } from './tree.js';
import { NamedIdSet, progressOf, totalsByName } from './progress.js';
import type { FlowResult, JobFailure, JobSpec, Runner, RunFlowOptions } from './types.js';

/** What a BullMQ job carries: the processor input plus results of children reused from earlier runs. */
interface JobEnvelope {
  input: unknown;
  reused: Record<string, unknown>;
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
}

/** An ioredis connection as BullMQ needs it (commands wait through reconnects). */
function connect(redisUrl: string, onError: (e: Error) => void): Redis {
  const r = new Redis(redisUrl, {
    maxRetriesPerRequest: null,
    // Reconnect quickly but not in a tight loop while Redis is away.
    retryStrategy: (times) => Math.min(times * 200, 2_000),
  });
  r.on('error', onError);
  return r;
}

/** Reports a repeating connection error once until it changes. */
function quietErrors(prefix: string): (e: Error) => void {
  let last = '';
  return (e) => {
    const text = `${prefix}: ${e.message}`;
    if (text !== last) { last = text; process.stderr.write(`${text}\n`); }
  };
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
      const data: JobEnvelope = { input: n.spec.data, reused };
      const job = {
        name: n.spec.name,
        queueName: queueOf(n.spec.name),
        data,
        opts: {
          jobId: n.spec.id,
          attempts,
          backoff: { type: 'exponential', delay: backoffMs },
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
      throw new ServiceError(`could not submit job tree ${root.spec.id} to Redis: ${(e as Error).message}`, { cause: e });
    }
    return { submitted: true, reusable };
  }

  async function collect(nodes: FlatNode[]): Promise<FlowResult> {
    const states = await inspect(nodes);
    const results = new Map<string, unknown>();
    const failures: JobFailure[] = [];
    for (const n of nodes) {
      const s = states.get(n.spec.id)!;
      if (s.state === 'completed') results.set(n.spec.id, s.job!.returnvalue ?? null);
      else {
        const error = s.state === 'failed' ? (s.job!.failedReason || 'Error: failed without a reason')
          : `Error: job ended in state ${s.state}`;
        failures.push({ id: n.spec.id, name: n.spec.name, error });
      }
    }
    return { results, failures };
  }

  async function runFlow(rootSpec: JobSpec, opts: RunFlowOptions = {}): Promise<FlowResult> {
    if (closed) throw new ServiceError('the BullMQ runner is closed');
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
    const events: QueueEvents[] = [];
    const eventConnections: Redis[] = [];
    for (const qn of new Set(nodes.map((n) => queueOf(n.spec.name)))) {
      // QueueEvents blocks on its connection: give it its own (closed below).
      const ec = connection.duplicate();
      ec.on('error', onError);
      eventConnections.push(ec);
      const qe = new QueueEvents(qn, { connection: ec, prefix });
      qe.on('error', onError);
      const isOurs = (id: string) => byId.has(id) && queueOf(byId.get(id)!.spec.name) === qn;
      qe.on('active', ({ jobId }) => { if (isOurs(jobId)) { running.add(jobId); report(); } });
      qe.on('completed', ({ jobId }) => {
        if (!isOurs(jobId)) return;
        running.delete(jobId); failed.delete(jobId); done.add(jobId); report();
        if (jobId === root.spec.id && qn === rootQueue) rootFinished?.();
      });
      qe.on('failed', ({ jobId }) => {
        if (!isOurs(jobId)) return;
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
      if (submitted) {
        // Wait for the root: its event, or (event missed during a Redis outage) a poll of its state.
        // If Redis lost the tree (restarted without persistence), submit again: ids keep it idempotent.
        let resubmits = 0;
        let nextWorkerCheck = 0;
        for (;;) {
          if (opts.onNotice && Date.now() >= nextWorkerCheck) {
            // A queue nobody serves waits for ever: say so, every 30 s, until a worker shows up.
            const counts = await Promise.all([...new Set(nodes.map((n) => n.spec.name))].map((name) => queue(name).getWorkersCount().catch(() => 1)));
            if (counts.some((c) => c === 0)) {
              opts.onNotice(`no heatledger worker is serving ${counts.every((c) => c === 0) ? 'the' : 'some of the'} queues yet; start one with \`heatledger worker\` (same REDIS_URL and DATABASE_URL)`);
              nextWorkerCheck = Date.now() + 30_000;
            } else nextWorkerCheck = Infinity;
          }
          const finishedByEvent = new Promise<void>((res) => { rootFinished = res; });
          let timer: NodeJS.Timeout | undefined;
          await Promise.race([finishedByEvent, new Promise<void>((res) => { timer = setTimeout(res, pollMs); })]);
          clearTimeout(timer);
          if (closed) throw new ServiceError('the BullMQ runner was closed while a run was in progress');
          const state = await queue(root.spec.name).getJobState(root.spec.id);
          if (state === 'completed' || state === 'failed') break;
          if (state === 'unknown') {
            if (++resubmits > 10) throw new ServiceError(`job tree ${root.spec.id} keeps vanishing from Redis; is it being flushed?`);
            ({ reusable } = await submit(nodes, byId));
            done.clear(); failed.clear(); running.clear();
            for (const id of reusable) done.add(id);
            report();
          }
        }
      }
      const result = await collect(nodes);
      // Final counts from the stored states (events may have been lost in an outage).
      done.clear(); failed.clear(); running.clear();
      for (const id of result.results.keys()) done.add(id);
      for (const f of result.failures) failed.add(f.id);
      report();
      return result;
    } finally {
      rootFinished = null;
      await Promise.all(events.map(async (e) => { openEvents.delete(e); await e.close().catch(() => undefined); }));
      for (const c of eventConnections) c.disconnect();
    }
  }

  return {
    runFlow,
    async close() {
      closed = true;
      for (const e of openEvents) await e.close().catch(() => undefined);
      for (const q of queues.values()) await q.close().catch(() => undefined);
      await flow.close().catch(() => undefined);
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
}

export interface WorkerHandle {
  /** Stop taking jobs, let running ones finish, close the repository and connections. */
  close(): Promise<void>;
  /** Resolves once the worker has closed (by close() or a signal). */
  closed: Promise<void>;
}

/**
 * Start one BullMQ worker per queue of the processors module (the
 * `heatledger worker` process). An InputError from a processor fails the job
 * at once; other errors are retried with back-off and then fail with the reason.
 */
export async function startWorker(options: StartWorkerOptions): Promise<WorkerHandle> {
  const mod = await loadProcessors(options.processorsModule);
  const names = options.names ?? Object.keys(mod.processors);
  for (const n of names) {
    if (typeof mod.processors[n] !== 'function') throw new ServiceError(`no processor named ${n} in the processors module`);
  }
  const prefix = options.prefix ?? DEFAULT_PREFIX;
  const onError = quietErrors('heatledger worker');
  const { repo, close: closeRepo } = await mod.createRepo(options.env ?? process.env);
  const connection = connect(options.redisUrl, onError);
  const workers: Worker[] = [];
  for (const name of names) {
    const qn = options.queueNames?.[name] ?? queueNameFor(name);
    const w = new Worker(qn, async (job: Job) => {
      const env = (job.data ?? { input: null, reused: {} }) as JobEnvelope;
      const childrenValues: Record<string, unknown> = { ...(env.reused ?? {}) };
      for (const [k, v] of Object.entries((await job.getChildrenValues()) ?? {})) childrenValues[idFromKey(k)] = v;
      const failedChildren = Object.keys((await job.getIgnoredChildrenFailures()) ?? {}).map(idFromKey).sort();
      const log = options.onLog
        ? (line: string) => options.onLog!(job.id!, line)
        : (line: string) => { void job.log(line).catch(() => undefined); };
      try {
        const value = await runAttempt(mod.processors, {
          jobId: job.id!, name: job.name, data: env.input, childrenValues: sortedRecord(childrenValues),
          failedChildren, attempt: job.attemptsMade + 1,
        }, repo, log);
        return value === undefined ? null : value;
      } catch (e) {
        if (isInputError(e)) throw new UnrecoverableError(describeError(e));
        const err = new Error(describeError(e));
        err.stack = (e as Error)?.stack ?? err.stack;
        throw err;
      }
    }, {
      connection,
      prefix,
      concurrency: Math.max(1, options.concurrency ?? 1),
      stalledInterval: options.stalledInterval ?? STALLED_INTERVAL_MS,
      lockDuration: options.lockDuration ?? LOCK_DURATION_MS,
      maxStalledCount: MAX_STALLED_COUNT,
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
