/**
 * The pipeline bench's repository wrapper (registered by pipeline-register.ts
 * through the store's `wrapPipelineRepos`): every repository the process makes
 * is the real one with each method timed. Processors get the same methods,
 * only slower by a performance.now() pair per call.
 *
 * Figures are kept in `globalThis.__heatledgerBenchRepoTiming` (read by the
 * embedded child) and, when BENCH_REPO_TIMING_FILE is set, written to that
 * file as JSON when the process exits (read after a worker process stops).
 */
import { writeFileSync } from 'node:fs';
import type { PipelineRepo } from '../../workers/store/pipeline-repo.js';

/** Calls of one repository method. */
export interface MethodTiming {
  calls: number;
  totalMs: number;
  /** Rows handed over (storeProcessedScene, replaceDerivedFor). */
  rows: number;
}

/** What the wrapper records in one process. */
export interface RepoTiming {
  pid: number;
  methods: Record<string, MethodTiming>;
  /** [start, end] of every result write (storeProcessedScene, replaceDerivedFor), epoch milliseconds. */
  writeIntervals: [number, number][];
  /** Start of the first and end of the last repository call, epoch milliseconds (null before any call). */
  firstCallAt: number | null;
  lastCallEnd: number | null;
  /** The same on the monotonic clock of process.hrtime, microseconds (the clock of V8 .cpuprofile timestamps). */
  firstCallHrUs: number | null;
  lastCallEndHrUs: number | null;
}

/** Methods that write results: the storage share of a run is their time. */
export const RESULT_WRITES = ['storeProcessedScene', 'replaceDerivedFor'];

const timing: RepoTiming = { pid: process.pid, methods: {}, writeIntervals: [], firstCallAt: null, lastCallEnd: null, firstCallHrUs: null, lastCallEndHrUs: null };
(globalThis as { __heatledgerBenchRepoTiming?: RepoTiming }).__heatledgerBenchRepoTiming = timing;

const outFile = process.env.BENCH_REPO_TIMING_FILE;
if (outFile) process.on('exit', () => { writeFileSync(outFile, JSON.stringify(timing)); });

const epochNow = () => performance.timeOrigin + performance.now();
const hrUs = () => Number(process.hrtime.bigint() / 1000n);

/** The repository with each method timed (wall time from call to settlement). */
export function timePipelineRepo(real: PipelineRepo): PipelineRepo {
  const repo = real as unknown as Record<string, (...args: unknown[]) => Promise<unknown>>;
  const out: Record<string, (...args: unknown[]) => Promise<unknown>> = {};
  for (const [name, fn] of Object.entries(repo)) {
    const m: MethodTiming = (timing.methods[name] ??= { calls: 0, totalMs: 0, rows: 0 });
    const isWrite = RESULT_WRITES.includes(name);
    out[name] = async (...args: unknown[]) => {
      const t0 = epochNow();
      timing.firstCallAt ??= t0;
      timing.firstCallHrUs ??= hrUs();
      try {
        return await fn(...args);
      } finally {
        const t1 = epochNow();
        timing.lastCallEnd = Math.max(timing.lastCallEnd ?? t1, t1);
        timing.lastCallEndHrUs = hrUs();
        m.calls++;
        m.totalMs += t1 - t0;
        if (isWrite) {
          timing.writeIntervals.push([t0, t1]);
          // storeProcessedScene(scene, rows, warnings) and replaceDerivedFor(districtIds, rows)
          if (Array.isArray(args[1])) m.rows += args[1].length;
        }
      }
    };
  }
  return out as unknown as PipelineRepo;
}
