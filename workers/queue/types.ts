/**
 * Shared types of the two job runners (in-process and BullMQ).
 *
 * Processors are plain async functions; the runner decides where and when
 * they run, retries them, and hands each parent the results of its children.
 */
import type { FailureKind, ServiceName } from '../core/errors.js';

/** What a processor sees besides its input. */
export interface JobContext<R = unknown> {
  /** The job's id (content-derived, chosen by the caller). */
  jobId: string;
  /** The processor name (e.g. 'zonal'). */
  name: string;
  /** Results of this job's children that completed, keyed by child job id. */
  childrenValues: Record<string, unknown>;
  /** Ids of children that failed permanently (sorted); they are absent from childrenValues. */
  failedChildren: string[];
  /** The persistence object; on a worker thread a proxy whose every method runs on the main thread. */
  repo: R;
  /** Append a line to the job's log. */
  log(msg: string): void;
  /** 1 for the first try, 2 for the first retry, ... */
  attempt: number;
}

/**
 * A processor: input in, JSON-serialisable result out. Throw an InputError for
 * bad input (permanent, not retried), a ServiceError when a database or Redis
 * fails (retried for the service budget); any other error is a bug (retried a
 * few times). See retry.ts.
 */
export type Processor<I = unknown, O = unknown, R = any> = (data: I, ctx: JobContext<R>) => Promise<O>;

/** One node of a job tree; a parent runs only after all its children finished. */
export interface JobSpec {
  /** Processor name; also selects the BullMQ queue. */
  name: string;
  /**
   * Content-derived id (see `deriveJobId`). A job whose id already completed is
   * not run again; put a run nonce into the id only where re-processing is wanted.
   */
  id: string;
  /** Input of the processor; must survive JSON and structured clone. */
  data: unknown;
  children?: JobSpec[];
}

/** Progress counts over the whole tree. */
export interface FlowProgress {
  done: number;
  failed: number;
  total: number;
  running: number;
  /** The same counts per processor name (e.g. `zonal`: one per scene). */
  byName?: Record<string, { done: number; failed: number; total: number }>;
}

export interface RunFlowOptions {
  onProgress?(p: FlowProgress): void;
  /** Something the person waiting should know (e.g. no worker is serving the queues). */
  onNotice?(message: string): void;
}

export interface JobFailure {
  id: string;
  name: string;
  /** The message of the last attempt (its kind apart, below). */
  error: string;
  /** Why it failed: bad input (final), a service (worth running again once it is back), or a bug. */
  kind: FailureKind;
  /** The service that failed, when known. */
  service?: ServiceName;
  /** For a service failure: how long (s) the job kept failing on it before giving up. */
  serviceFailingSeconds?: number;
}

/** Why a runner stopped waiting before the tree finished (its unfinished jobs are in `failures`). */
export interface FlowStop {
  error: string;
  kind: FailureKind;
  service?: ServiceName;
}

export interface FlowResult {
  /** Result of every job of the tree that completed, keyed by job id (tree pre-order). */
  results: Map<string, unknown>;
  /** Jobs of the tree that failed permanently, or did not finish when the runner stopped (tree pre-order). */
  failures: JobFailure[];
  /** Set when the runner stopped waiting (e.g. no worker made progress) before the root finished. */
  stopped?: FlowStop;
}

export interface Runner {
  runFlow(root: JobSpec, options?: RunFlowOptions): Promise<FlowResult>;
  close(): Promise<void>;
}

/** The module a runner is pointed at (by file URL) so threads and processes can import it themselves. */
export interface ProcessorsModule {
  processors: Record<string, Processor>;
  createRepo(env: Record<string, string | undefined>): Promise<{ repo: unknown; close(): Promise<void> }>;
}
