/**
 * Where a process's work goes, in instructions counted by valgrind's callgrind
 * tool: the whole process with all its threads, and the inclusive counts of a
 * few parts of Node and V8 found by their symbol names. Seconds on a shared
 * two-core machine swing by half from run to run; these counts move by about
 * 1-3 % (how far the background compiler gets before the main thread needs
 * its code), so they tell the parts of a run apart where timing cannot.
 *
 * Instructions are not seconds: code with more instructions per cycle (V8's
 * optimized loops) costs fewer seconds per instruction than, say, Python's
 * interpreter. Use the split for shares within one process, never as a ratio
 * between two programs.
 */
import { spawnSync } from 'node:child_process';
import { rmSync } from 'node:fs';

export interface InstructionPart {
  name: string;
  /** Inclusive instruction count (the part and everything it calls). */
  instructions: number;
}

export interface InstructionSplit {
  /** Every instruction of the process, all threads. */
  total: number;
  /** Named parts (inclusive; a part running inside another is counted in both only where noted). */
  parts: InstructionPart[];
  /** total minus the named parts. */
  rest: number;
}

/** The named parts: symbol patterns of callgrind_annotate --inclusive=yes lines, summed per part. */
const PARTS: { name: string; symbols: RegExp[] }[] = [
  {
    name: 'Node start: the CA bundle named by NODE_EXTRA_CA_CERTS, parsed at every start',
    symbols: [/^node::crypto::UseExtraCaCerts\(/],
  },
  {
    name: 'optimizing compiler (TurboFan, on a background thread)',
    symbols: [/^v8::internal::OptimizingCompileDispatcher::CompileTask::RunInternal\(\)/],
  },
  {
    name: 'parsing and bytecode compilation (modules and lazily compiled functions)',
    symbols: [
      /^v8::internal::Compiler::Compile\(v8::internal::Isolate\*, v8::internal::Handle<v8::internal::SharedFunctionInfo>/,
      /^v8::internal::parsing::ParseProgram\(/,
    ],
  },
  {
    name: 'garbage collector (pauses of the main thread)',
    symbols: [/^v8::internal::Heap::CollectGarbage\(/],
  },
  { name: 'inflate (zlib, DEFLATE blocks)', symbols: [/^inflate$/] },
];

/** Whether valgrind is on this machine (Debian package valgrind). */
export function valgrindAvailable(): boolean {
  const r = spawnSync('valgrind', ['--version'], { encoding: 'utf8' });
  // callgrind_annotate prints its version with exit status 255: only its presence is tested
  return r.status === 0 && spawnSync('callgrind_annotate', ['--version'], { encoding: 'utf8' }).error === undefined;
}

/** Inclusive counts per symbol from callgrind_annotate's `count (pct)  file:function [object]` lines. */
function inclusiveCounts(outFile: string): Map<string, number> {
  const r = spawnSync('callgrind_annotate', ['--inclusive=yes', '--threshold=100', outFile], { encoding: 'utf8', maxBuffer: 256 * 1024 * 1024 });
  if (r.status !== 0) throw new Error(`callgrind_annotate failed on ${outFile}: ${r.stderr.trim()}`);
  const counts = new Map<string, number>();
  for (const line of r.stdout.split('\n')) {
    const m = /^\s*([\d,]+) \([\s\d.]+%\)\s+(?:\S*?:)?(.+?) \[[^\]]*\]\s*$/.exec(line);
    if (!m) continue;
    // the first (outermost) entry of a symbol; recursion levels carry a 'N suffix
    if (!counts.has(m[2])) counts.set(m[2], Number(m[1].replace(/,/g, '')));
  }
  return counts;
}

/**
 * Run `command args` under callgrind, writing its profile to `outFile`; returns
 * the instruction total of every thread. `jit`: the program writes machine code
 * as it runs (Node's V8), which valgrind must be told to watch.
 */
function runCallgrind(command: string, args: readonly string[], outFile: string, env: NodeJS.ProcessEnv, jit: boolean): number {
  const r = spawnSync('valgrind', ['--tool=callgrind', `--callgrind-out-file=${outFile}`, ...(jit ? ['--smc-check=all-non-file'] : []), command, ...args], {
    encoding: 'utf8', env, maxBuffer: 64 * 1024 * 1024, timeout: 20 * 60 * 1000,
  });
  if (r.status !== 0) throw new Error(`${command} under valgrind exited with ${r.status}: ${(r.stderr ?? '').trim().split('\n').slice(-3).join(' ')}`);
  const total = Number(/Collected : (\d+)/.exec(r.stderr)?.[1] ?? NaN);
  if (!Number.isFinite(total)) throw new Error('callgrind printed no instruction total');
  return total;
}

/**
 * Count the instructions of one run of `command args` (a Node process) under
 * callgrind and split them into the named parts. About 50-100 times slower than the run.
 * @param outFile where callgrind writes its profile (removed afterwards)
 */
export function countInstructions(command: string, args: readonly string[], outFile: string, env: NodeJS.ProcessEnv = process.env): InstructionSplit {
  try {
    const total = runCallgrind(command, args, outFile, env, true);
    const counts = inclusiveCounts(outFile);
    const parts = PARTS.map((p) => ({
      name: p.name,
      instructions: [...counts].filter(([symbol]) => p.symbols.some((s) => s.test(symbol))).reduce((s, [, n]) => s + n, 0),
    }));
    return { total, parts, rest: total - parts.reduce((s, p) => s + p.instructions, 0) };
  } finally {
    rmSync(outFile, { force: true });
  }
}

/** Total instructions only (for a peer whose symbols mean nothing to the split). */
export function countTotalInstructions(command: string, args: readonly string[], outFile: string): number {
  try {
    return runCallgrind(command, args, outFile, process.env, false);
  } finally {
    rmSync(outFile, { force: true });
  }
}

/** `1,234 M (12.3 %)` lines of a split, for the bench's output. */
export function describeSplit(s: InstructionSplit): string[] {
  const m = (n: number): string => `${(n / 1e6).toFixed(0)} M`;
  const pct = (n: number): string => `${((100 * n) / s.total).toFixed(1)} %`;
  return [
    `total ${m(s.total)}`,
    ...s.parts.map((p) => `  ${p.name}: ${m(p.instructions)} (${pct(p.instructions)})`),
    `  the rest (running JavaScript in the interpreter, baseline and optimized code; Node's own start-up and module loading): ${m(s.rest)} (${pct(s.rest)})`,
  ];
}
