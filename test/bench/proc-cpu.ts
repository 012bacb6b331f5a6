/**
 * CPU seconds of processes from the kernel's own accounting (/proc/<pid>/stat,
 * proc(5)): utime and stime of a process (all its threads), cutime and cstime
 * of its children that it has waited for. Linux only; figures in seconds.
 */
import { execFileSync } from 'node:child_process';
import { readFileSync, readdirSync } from 'node:fs';

let ticksPerSecond: number | null = null;

/** sysconf(_SC_CLK_TCK), the unit of the /proc times (100 on Linux in practice). */
export function clockTicksPerSecond(): number {
  if (ticksPerSecond === null) {
    try {
      ticksPerSecond = Number(execFileSync('getconf', ['CLK_TCK'], { encoding: 'utf8' }).trim()) || 100;
    } catch {
      ticksPerSecond = 100;
    }
  }
  return ticksPerSecond;
}

export interface ProcTimes {
  pid: number;
  ppid: number;
  /** utime + stime, seconds. */
  self: number;
  /** cutime + cstime (children waited for), seconds. */
  children: number;
}

/** The times of one process, or null when it is gone. */
export function procTimes(pid: number): ProcTimes | null {
  let text: string;
  try {
    text = readFileSync(`/proc/${pid}/stat`, 'utf8');
  } catch {
    return null;
  }
  // the command name (field 2) may hold blanks and parentheses: fields after the last ')'
  const f = text.slice(text.lastIndexOf(')') + 2).split(' ');
  const tick = clockTicksPerSecond();
  // f[0] is field 3 (state): ppid field 4, utime 14, stime 15, cutime 16, cstime 17
  return { pid, ppid: Number(f[1]), self: (Number(f[11]) + Number(f[12])) / tick, children: (Number(f[13]) + Number(f[14])) / tick };
}

/** Processes whose parent is `pid`. */
function childrenOf(pid: number): ProcTimes[] {
  const out: ProcTimes[] = [];
  for (const name of readdirSync('/proc')) {
    if (!/^\d+$/.test(name)) continue;
    const t = procTimes(Number(name));
    if (t && t.ppid === pid) out.push(t);
  }
  return out;
}

/**
 * All CPU seconds a server has used so far: the parent's own time, the time of
 * its children that have exited (cutime, cstime) and of those still running.
 * The difference of two readings is the server's CPU between them, whichever
 * of its processes (PostgreSQL backends) came and went in between.
 */
export function serverCpuSeconds(pid: number): number {
  const root = procTimes(pid);
  if (!root) throw new Error(`process ${pid} is gone`);
  return root.self + root.children + childrenOf(pid).reduce((s, c) => s + c.self, 0);
}

/** CPU seconds of this process's children that have exited and been waited for. */
export function reapedChildrenCpuSeconds(): number {
  return procTimes(process.pid)!.children;
}
