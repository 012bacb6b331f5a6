/**
 * Self time of a V8 .cpuprofile (as written by `node --cpu-prof`), grouped by
 * package or project file and by function: where a CLI run spends its time.
 */
import { readFile } from 'node:fs/promises';

interface CallFrame { functionName: string; url: string; lineNumber: number }
interface ProfileNode { id: number; callFrame: CallFrame }
interface CpuProfile { nodes: ProfileNode[]; samples: number[]; timeDeltas: number[] }

export interface SelfTime {
  name: string;
  ms: number;
}

export interface ProfileSummary {
  totalMs: number;
  byModule: SelfTime[];
  byFunction: SelfTime[];
}

/** Group key of a frame: the npm package, the project file, node internals, or V8's own pseudo-frames. */
function moduleOf(frame: CallFrame, root: string): string {
  const url = frame.url;
  if (url === '') return frame.functionName.startsWith('(') ? frame.functionName : `(${frame.functionName || 'native'})`;
  if (url.startsWith('node:')) return 'node internals (module loading, fs, zlib glue)';
  const nm = url.lastIndexOf('node_modules/');
  if (nm >= 0) {
    const parts = url.slice(nm + 'node_modules/'.length).split('/');
    return parts[0].startsWith('@') ? `${parts[0]}/${parts[1]}` : parts[0];
  }
  return url.replace(`file://${root}/`, '');
}

/**
 * Summarise one profile file.
 * @param path .cpuprofile file
 * @param root repository root, stripped from project file names
 * @param top rows to keep per table
 */
export async function summariseCpuProfile(path: string, root: string, top = 12): Promise<ProfileSummary> {
  const p = JSON.parse(await readFile(path, 'utf8')) as CpuProfile;
  const byId = new Map(p.nodes.map((n) => [n.id, n]));
  const selfUs = new Map<number, number>();
  p.samples.forEach((id, i) => selfUs.set(id, (selfUs.get(id) ?? 0) + (p.timeDeltas[i] ?? 0)));
  const mods = new Map<string, number>();
  const fns = new Map<string, number>();
  let total = 0;
  for (const [id, us] of selfUs) {
    const f = byId.get(id)!.callFrame;
    total += us;
    const m = moduleOf(f, root);
    mods.set(m, (mods.get(m) ?? 0) + us);
    const where = f.url === '' ? '' : f.url.startsWith('node:') ? ` ${f.url}:${f.lineNumber + 1}` : ` ${m}:${f.lineNumber + 1}`;
    const fn = f.url === '' && f.functionName.startsWith('(') ? f.functionName : `${f.functionName || '(anonymous)'}${where}`;
    fns.set(fn, (fns.get(fn) ?? 0) + us);
  }
  const rank = (m: Map<string, number>): SelfTime[] =>
    [...m.entries()].sort((a, b) => b[1] - a[1]).slice(0, top).map(([name, us]) => ({ name, ms: us / 1000 }));
  return { totalMs: total / 1000, byModule: rank(mods), byFunction: rank(fns) };
}
