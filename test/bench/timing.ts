/**
 * Wall-clock timing of whole processes and small statistics of timings.
 */
import { spawnSync } from 'node:child_process';
import { reapedChildrenCpuSeconds } from './proc-cpu.js';

export interface ProcessRun {
  /** Wall seconds from spawn to exit. */
  seconds: number;
  /**
   * CPU seconds (user + system, all threads) of the process and of the
   * processes it waited for, from this process's cutime + cstime before and
   * after (/proc/self/stat, in clock ticks of 10 ms); null off Linux.
   */
  cpuSeconds: number | null;
  stdout: string;
  stderr: string;
  /** Exit code; null when the process was killed (e.g. by the timeout). */
  status: number | null;
}

/**
 * Run a command to completion and time it (spawn to exit, wall clock).
 * @param command executable
 * @param args arguments
 * @param timeoutSeconds kill after this long (a bench must never hang)
 * @param env the child's environment (default: this process's)
 * @example timeProcess('node', ['-e', '']).seconds // ~0.05
 */
export function timeProcess(command: string, args: readonly string[], timeoutSeconds = 180, env: NodeJS.ProcessEnv = process.env): ProcessRun {
  const cpu0 = childrenCpuSeconds();
  const t0 = performance.now();
  const r = spawnSync(command, args, { encoding: 'utf8', maxBuffer: 64 * 1024 * 1024, timeout: timeoutSeconds * 1000, env });
  const seconds = (performance.now() - t0) / 1000;
  const cpu1 = childrenCpuSeconds();
  const cpuSeconds = cpu0 === null || cpu1 === null ? null : cpu1 - cpu0;
  if (r.error && (r.error as NodeJS.ErrnoException).code === 'ENOENT') {
    return { seconds, cpuSeconds, stdout: '', stderr: `${command}: not found`, status: 127 };
  }
  return { seconds, cpuSeconds, stdout: r.stdout ?? '', stderr: r.stderr ?? '', status: r.status };
}

/** CPU seconds of the children this process has waited for, or null where /proc is not there. */
function childrenCpuSeconds(): number | null {
  try {
    return reapedChildrenCpuSeconds();
  } catch {
    return null;
  }
}

/**
 * Median of a non-empty list (mean of the two middle values for an even count).
 * @example median([3, 1, 2]) // 2
 */
export function median(xs: readonly number[]): number {
  if (xs.length === 0) throw new Error('median of an empty list');
  const s = [...xs].sort((p, q) => p - q);
  const m = s.length >> 1;
  return s.length % 2 === 1 ? s[m] : (s[m - 1] + s[m]) / 2;
}

/** Milliseconds since `t0` (a performance.now() reading). */
export function msSince(t0: number): number {
  return performance.now() - t0;
}
