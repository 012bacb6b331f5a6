/**
 * Running one job attempt: look the processor up and call it with its context.
 * Shared by the main thread, worker threads and BullMQ workers.
 */
import { InputError } from '../core/errors.js';
import type { JobContext, Processor, ProcessorsModule } from './types.js';

/** What a runner knows about a job attempt before calling its processor. */
export interface JobAttempt {
  jobId: string;
  name: string;
  data: unknown;
  childrenValues: Record<string, unknown>;
  failedChildren: string[];
  attempt: number;
}

/** Import a processors registry from its file URL (or path) and check its shape. */
export async function loadProcessors(moduleUrl: string | URL): Promise<ProcessorsModule> {
  const href = moduleUrl instanceof URL ? moduleUrl.href : moduleUrl;
  let mod: Partial<ProcessorsModule>;
  try {
    mod = (await import(href)) as Partial<ProcessorsModule>;
  } catch (e) {
    throw new InputError(`cannot load the processors module: ${(e as Error).message}`, href);
  }
  if (!mod.processors || typeof mod.processors !== 'object') {
    throw new InputError('the processors module does not export `processors` (an object of async functions)', href);
  }
  if (typeof mod.createRepo !== 'function') {
    throw new InputError('the processors module does not export `createRepo(env)`', href);
  }
  return mod as ProcessorsModule;
}

/** Call the processor named `a.name` with its context; rejects with whatever it throws. */
export async function runAttempt(
  processors: Record<string, Processor>, a: JobAttempt, repo: unknown, log: (msg: string) => void,
): Promise<unknown> {
  const proc = Object.prototype.hasOwnProperty.call(processors, a.name) ? processors[a.name] : undefined;
  if (typeof proc !== 'function') {
    // A tree naming a processor that does not exist will not get better with retries.
    throw new InputError(`no processor named ${a.name} (job ${a.jobId})`);
  }
  const ctx: JobContext = {
    jobId: a.jobId, name: a.name, childrenValues: a.childrenValues,
    failedChildren: a.failedChildren, repo, log, attempt: a.attempt,
  };
  return proc(a.data, ctx);
}

/** A copy of `values` with keys in sorted order, so both runners hand children over alike. */
export function sortedRecord(values: Record<string, unknown>): Record<string, unknown> {
  const out: Record<string, unknown> = {};
  for (const k of Object.keys(values).sort()) out[k] = values[k];
  return out;
}
