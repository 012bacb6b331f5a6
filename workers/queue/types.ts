/**
 * Shared types of the two job runners (in-process and BullMQ).
 *
 * Processors are plain async functions; the runner decides where and when
 * they run, retries them, and hands each parent the results of its children.
 */

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
 * bad input (permanent, not retried); any other error is retried with back-off.
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
  /** `<ErrorName>: <message>` of the last attempt. */
  error: string;
}

export interface FlowResult {
  /** Result of every job of the tree that completed, keyed by job id (tree pre-order). */
  results: Map<string, unknown>;
  /** Jobs of the tree that failed permanently (tree pre-order). */
  failures: JobFailure[];
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
