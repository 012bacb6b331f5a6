/**
 * `npm run bench -- --store-open`: how long a command waits for a new embedded
 * store, in fresh processes (module loading included): from the prepared
 * template (dist/store-template, made by `npm run build`) against the engine's
 * own initdb plus every migration, alternating which goes first each round.
 * Figures, not assertions.
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { usableTemplate } from '../../workers/store/template.js';
import { median, timeProcess } from './timing.js';

const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), '../../..');
const CHILD = join(ROOT, 'dist/test/bench/store-open-child.js');

export interface StoreOpenResult {
  rounds: number;
  template_open_ms: number[];
  scratch_open_ms: number[];
  template_median_ms: number;
  scratch_median_ms: number;
  template_cpu_median_ms: number;
  scratch_cpu_median_ms: number;
  /** scratch / template, medians of the same run. */
  speedup: number;
}

function openOnce(mode: 'template' | 'scratch'): { open_ms: number; cpu_ms: number } {
  const dir = mkdtempSync(join(tmpdir(), `heatledger-open-${mode}-`));
  try {
    const r = timeProcess(process.execPath, [CHILD, mode, join(dir, 'store')], 300);
    if (r.status !== 0) throw new Error(`store-open child (${mode}) exited with ${r.status}: ${r.stderr.trim()}`);
    return JSON.parse(r.stdout.trim().split('\n').pop()!) as { open_ms: number; cpu_ms: number };
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

export function runStoreOpenBench(say: (line?: string) => void, rounds = 5): StoreOpenResult {
  if (!usableTemplate()) throw new Error('no store template matching the migrations in dist/store-template; run `npm run build` first');
  say(`\n[store-open] a new embedded store in a fresh process, ${rounds} rounds (order alternating)`);
  const template: number[] = [], scratch: number[] = [], templateCpu: number[] = [], scratchCpu: number[] = [];
  for (let round = 1; round <= rounds; round++) {
    const order: ('template' | 'scratch')[] = round % 2 === 1 ? ['template', 'scratch'] : ['scratch', 'template'];
    for (const mode of order) {
      const r = openOnce(mode);
      (mode === 'template' ? template : scratch).push(r.open_ms);
      (mode === 'template' ? templateCpu : scratchCpu).push(r.cpu_ms);
    }
  }
  const t = median(template), s = median(scratch), tc = median(templateCpu), sc = median(scratchCpu);
  say(`  from the template (openStore: lock, template copy, migrations checked, read socket): median ${t.toFixed(0)} ms  [${template.map((x) => x.toFixed(0)).join(', ')}]`);
  say(`  from scratch (initdb + migrations, no lock or socket):                           median ${s.toFixed(0)} ms  [${scratch.map((x) => x.toFixed(0)).join(', ')}]`);
  say(`  CPU time of the opening process (user + system), medians: template ${tc.toFixed(0)} ms, scratch ${sc.toFixed(0)} ms`);
  say(`  ratio scratch / template: wall ${(s / t).toFixed(1)}x, CPU ${(sc / tc).toFixed(1)}x`);
  return {
    rounds, template_open_ms: template, scratch_open_ms: scratch, template_median_ms: t, scratch_median_ms: s,
    template_cpu_median_ms: tc, scratch_cpu_median_ms: sc, speedup: s / t,
  };
}
