/**
 * Where a profiled pipeline run spends its time, per thread and per phase:
 * the self time of a V8 .cpuprofile (`node --cpu-prof`) restricted to a
 * window of the process's monotonic clock (the profile's timestamps are
 * microseconds of the same clock as process.hrtime), grouped by npm package,
 * project file or V8 pseudo-frame.
 */
import { readFile } from 'node:fs/promises';

interface CallFrame { functionName: string; url: string; lineNumber: number }
interface ProfileNode { id: number; callFrame: CallFrame }
interface CpuProfile { nodes: ProfileNode[]; samples: number[]; timeDeltas: number[]; startTime: number; endTime: number }

/** Self time of one thread inside a window, milliseconds. */
export interface WindowProfile {
  /** Window length covered by the profile, ms. */
  windowMs: number;
  /** Sampled time that was not (idle): running JavaScript, WebAssembly, GC or native code. */
  busyMs: number;
  /** Largest groups by self time (busy only), ms. */
  byModule: { name: string; ms: number }[];
  byFunction: { name: string; ms: number }[];
}

function groupOf(frame: CallFrame, root: string): string {
  const url = frame.url;
  if (url === '') return frame.functionName.startsWith('(') ? frame.functionName : `(native ${frame.functionName || '?'})`;
  if (url.startsWith('node:')) return 'node internals';
  if (url.startsWith('wasm://')) return 'WebAssembly';
  const nm = url.lastIndexOf('node_modules/');
  if (nm >= 0) {
    const parts = url.slice(nm + 'node_modules/'.length).split('/');
    return parts[0].startsWith('@') ? `${parts[0]}/${parts[1]}` : parts[0];
  }
  const path = url.startsWith('file://') ? decodeURIComponent(new URL(url).pathname) : url;
  return path.startsWith(root + '/') ? path.slice(root.length + 1) : path;
}

function top(map: Map<string, number>, n: number): { name: string; ms: number }[] {
  return [...map.entries()].sort((a, b) => b[1] - a[1]).slice(0, n).map(([name, us]) => ({ name, ms: us / 1000 }));
}

/**
 * Self time of the samples of `path` that fall in [startUs, endUs) (profile
 * clock, microseconds; default the whole profile).
 * @param path a .cpuprofile file
 * @param root project root, stripped from project file names
 * @param window [startUs, endUs] on the process.hrtime clock
 * @param n how many groups to list
 */
export async function profileWindow(path: string, root: string, window?: [number, number], n = 8): Promise<WindowProfile> {
  const p = JSON.parse(await readFile(path, 'utf8')) as CpuProfile;
  const byId = new Map(p.nodes.map((node) => [node.id, node.callFrame]));
  const [w0, w1] = window ?? [p.startTime, p.endTime];
  const modules = new Map<string, number>();
  const functions = new Map<string, number>();
  let t = p.startTime;
  let busyUs = 0;
  // sample i was taken at t_i = startTime + sum(timeDeltas[0..i]); it stands for the time up to the next sample
  for (let i = 0; i < p.samples.length; i++) {
    t += p.timeDeltas[i];
    const dt = i + 1 < p.timeDeltas.length ? p.timeDeltas[i + 1] : 0;
    if (t < w0 || t >= w1) continue;
    const frame = byId.get(p.samples[i]);
    if (!frame || frame.functionName === '(idle)') continue;
    busyUs += dt;
    const g = groupOf(frame, root);
    modules.set(g, (modules.get(g) ?? 0) + dt);
    const fname = frame.url ? `${frame.functionName || '(anonymous)'} ${g}` : frame.functionName;
    functions.set(fname, (functions.get(fname) ?? 0) + dt);
  }
  const covered = Math.max(0, Math.min(w1, p.endTime) - Math.max(w0, p.startTime));
  return { windowMs: covered / 1000, busyMs: busyUs / 1000, byModule: top(modules, n), byFunction: top(functions, n) };
}
