/**
 * `npm run bench`: the zonal job against a rasterio + NumPy peer.
 *
 *     node dist/test/bench/run.js [--json] [--rounds N] [--sizes full,clip]
 *     node dist/test/bench/run.js --instructions [--sizes full,clip]   (also: where ours goes, in instructions under valgrind)
 *     node dist/test/bench/run.js --trends [--json]   (trend and hot-spot statistics only)
 *     node dist/test/bench/run.js --archive [--json] [--archive-reps N] [--archive-configs list]
 *                                        (a 200-scene archive against a Python peer; archive.ts)
 *     node dist/test/bench/run.js --api [--api-seconds N] [--json]   (the HTTP API under load only)
 *     node dist/test/bench/run.js --store-open [--json]   (a new embedded store: template against initdb)
 *     node dist/test/bench/run.js --big-store [--keep] [--big-store-shape DxY] [--json]   (1,000 districts × 10 years on the server, before/after migration 006)
 *
 * 1. Generates (once) a 7000 x 7000 Landsat-like scene, its 1200 x 1200 centre
 *    clip and 60 wards (test/bench/.work/, reused while the generator version matches).
 * 2. Per size, times whole processes: `heatledger zonal ... --format json` (the
 *    bin's file, dist/workers/cli.js, run as the bin link runs it: by its first
 *    line) and test/bench/peer_zonal.py, alternating which goes first each
 *    round, and ours once more as `node dist/workers/cli.js`; medians
 *    of wall and of CPU seconds (user + system of every thread, from the
 *    kernel's accounting of waited-for children) and the ratios peer / ours;
 *    checks that both tables agree.
 * 3. Start-up cost, a phase profile of our run (cold and warm) and the peer's
 *    own phase timings, per size.
 * 4. In-process throughput: decode, coverage (centre masks), statistics.
 *
 * It prints figures; nothing here asserts a time. With --json the last line
 * is one JSON object with every figure.
 */
import { existsSync, mkdirSync, readdirSync, rmSync } from 'node:fs';
import { cpus, loadavg } from 'node:os';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { summariseCpuProfile, type ProfileSummary } from './cpuprofile.js';
import { compareTables, MEAN_TOLERANCE_KELVIN, type Agreement, type StatsRow } from './compare.js';
import { ensureBenchData } from './generate.js';
import { loadTargets, measureCoverage, measureDecode, measureStats, type PhaseProfile } from './profile.js';
import { median, timeProcess } from './timing.js';
import { binStart, pipelineFlags, runPipelineBench } from './pipeline.js';
import { runTrendsBench } from './trends.js';
import { archiveFlags, runArchiveBench } from './archive.js';
import { runApiBench } from './api.js';
import { runStoreOpenBench } from './store-open.js';
import { runBigStoreBench } from './big-store.js';
import { countInstructions, countTotalInstructions, describeSplit, valgrindAvailable, type InstructionSplit } from './instructions.js';

const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), '../../..');
const WORK_DIR = join(ROOT, 'test/bench/.work');
const CLI = join(ROOT, 'dist/workers/cli.js');
const PEER = join(ROOT, 'test/bench/peer_zonal.py');
const CHILD = join(ROOT, 'dist/test/bench/phases-child.js');
const PYTHON = '/usr/bin/python3';
const NODE = process.execPath;

type Size = 'full' | 'clip';

interface Args {
  json: boolean;
  /** Also count instructions under valgrind (slow: about a minute a run). */
  instructions: boolean;
  rounds: number;
  sizes: Size[];
}

function parseArgs(argv: string[]): Args {
  const args: Args = { json: false, rounds: 5, sizes: ['full', 'clip'], instructions: false };
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i];
    if (a === '--json') args.json = true;
    else if (a === '--instructions') args.instructions = true;
    else if (a === '--rounds') {
      const n = Number(argv[++i]);
      if (!Number.isInteger(n) || n < 1 || n > 50) fail(`--rounds needs a whole number from 1 to 50, got "${argv[i]}"`);
      args.rounds = n;
    } else if (a === '--sizes') {
      const list = (argv[++i] ?? '').split(',').map((s) => s.trim()).filter(Boolean);
      if (list.length === 0 || !list.every((s) => s === 'full' || s === 'clip')) fail(`--sizes needs a comma-separated list of full and clip, got "${argv[i]}"`);
      args.sizes = [...new Set(list)] as Size[];
    } else if (a === '--help' || a === '-h') {
      process.stdout.write('usage: node dist/test/bench/run.js [--json] [--rounds N] [--sizes full,clip] [--instructions]\n');
      process.exit(0);
    } else fail(`unknown option "${a}" (try --help)`);
  }
  return args;
}

function fail(message: string): never {
  process.stderr.write(`bench: ${message}\n`);
  process.exit(2);
}

const say = (line = ''): void => { process.stdout.write(line + '\n'); };
const s3 = (x: number): string => x.toFixed(3);
const s2 = (x: number): string => x.toFixed(2);
const ms = (x: number): string => `${x.toFixed(0)} ms`;

function peerAvailable(): boolean {
  if (!existsSync(PYTHON)) return false;
  return timeProcess(PYTHON, ['-c', 'import rasterio, rasterio.features, rasterio.warp, numpy'], 60).status === 0;
}

function parseRows(text: string, who: string): StatsRow[] {
  try {
    // heatledger zonal prints { unit, kind, rows }; the peer a plain array
    const parsed = JSON.parse(text) as StatsRow[] | { rows: StatsRow[] };
    const rows = Array.isArray(parsed) ? parsed : parsed.rows;
    if (!Array.isArray(rows)) throw new Error('not an array of rows');
    return rows;
  } catch (e) {
    throw new Error(`${who} printed output that is not a JSON array of rows (${(e as Error).message})`);
  }
}

interface SizeResult {
  oursSeconds: number[];
  peerSeconds: number[];
  /** Whole-process CPU seconds (user + system, all threads) per round; empty where /proc is not there. */
  oursCpuSeconds: number[];
  peerCpuSeconds: number[];
  /**
   * Ours again in each round started as `node dist/workers/cli.js` (without the bin's
   * first line: NODE_EXTRA_CA_CERTS, when this machine sets it, is read at start and
   * V8 compiles on its background thread; see workers/cli.ts).
   */
  oursPlainSeconds: number[];
  oursPlainCpuSeconds: number[];
  agreement: Agreement | null;
}

/** This environment without NODE_EXTRA_CA_CERTS, or null when it is not set. */
function withoutExtraCaCerts(): NodeJS.ProcessEnv | null {
  if (process.env.NODE_EXTRA_CA_CERTS === undefined) return null;
  const env = { ...process.env };
  delete env.NODE_EXTRA_CA_CERTS;
  return env;
}

/** Alternating rounds for one size: ours first in odd rounds (1, 3, ...), the peer first in even ones. */
function timeSize(raster: string, districts: string, rounds: number, withPeer: boolean): SizeResult {
  // the bin's file run as the bin link runs it (by its first line), then as `node dist/workers/cli.js`
  const ours = (plain = false) => {
    const args = ['zonal', raster, '--districts', districts, '--format', 'json'];
    const r = plain ? timeProcess(NODE, [CLI, ...args]) : timeProcess(CLI, args);
    if (r.status !== 0) throw new Error(`heatledger zonal exited with ${r.status}: ${r.stderr.trim()}`);
    return r;
  };
  const oursPlainSeconds: number[] = [], oursPlainCpuSeconds: number[] = [];
  const peer = () => {
    const r = timeProcess(PYTHON, [PEER, raster, districts]);
    if (r.status !== 0) throw new Error(`peer_zonal.py exited with ${r.status}: ${r.stderr.trim()}`);
    return r;
  };
  const oursSeconds: number[] = [], peerSeconds: number[] = [];
  const oursCpuSeconds: number[] = [], peerCpuSeconds: number[] = [];
  let oursText = '', peerText = '';
  for (let round = 1; round <= rounds; round++) {
    const order = round % 2 === 1 ? ['ours', 'peer'] : ['peer', 'ours'];
    for (const who of order) {
      if (who === 'ours') {
        const r = ours();
        oursSeconds.push(r.seconds);
        if (r.cpuSeconds !== null) oursCpuSeconds.push(r.cpuSeconds);
        oursText ||= r.stdout;
        const c = ours(true);
        oursPlainSeconds.push(c.seconds);
        if (c.cpuSeconds !== null) oursPlainCpuSeconds.push(c.cpuSeconds);
      } else if (withPeer) {
        const r = peer();
        peerSeconds.push(r.seconds);
        if (r.cpuSeconds !== null) peerCpuSeconds.push(r.cpuSeconds);
        peerText ||= r.stdout;
      }
    }
  }
  const agreement = withPeer ? compareTables(parseRows(oursText, 'heatledger zonal'), parseRows(peerText, 'peer_zonal.py')) : null;
  return { oursSeconds, peerSeconds, oursCpuSeconds, peerCpuSeconds, oursPlainSeconds, oursPlainCpuSeconds, agreement };
}

interface ChildProfile {
  bootMs: number;
  importMs: number;
  cold: PhaseProfile;
  warm: PhaseProfile;
}

/** Phase profile in fresh processes: `runs` children, median of each figure. */
function profileInChild(raster: string, districts: string, runs = 3): ChildProfile {
  const all: ChildProfile[] = [];
  const bin = binStart(); // node started as the bin starts it
  for (let i = 0; i < runs; i++) {
    const r = timeProcess(NODE, [...bin.nodeArgs, CHILD, raster, districts, '2'], 180, bin.env(process.env));
    if (r.status !== 0) throw new Error(`phase profile failed: ${r.stderr.trim()}`);
    all.push(JSON.parse(r.stdout.trim().split('\n').pop()!) as ChildProfile);
  }
  const mid = (pick: (c: ChildProfile) => PhaseProfile): PhaseProfile =>
    Object.fromEntries(Object.keys(all[0].cold).map((k) => [k, median(all.map((c) => pick(c)[k as keyof PhaseProfile]))])) as unknown as PhaseProfile;
  return { bootMs: median(all.map((c) => c.bootMs)), importMs: median(all.map((c) => c.importMs)), cold: mid((c) => c.cold), warm: mid((c) => c.warm) };
}

/** One CLI run under `node --cpu-prof`, summarised by self time. */
async function cpuProfileCli(raster: string, districts: string, size: Size): Promise<ProfileSummary> {
  const dir = join(WORK_DIR, `cpuprofile-${size}`);
  rmSync(dir, { recursive: true, force: true });
  mkdirSync(dir, { recursive: true });
  const bin = binStart();
  const r = timeProcess(NODE, [...bin.nodeArgs, '--cpu-prof', '--cpu-prof-dir', dir, '--cpu-prof-interval', '250', CLI, 'zonal', raster, '--districts', districts, '--format', 'json'], 180, bin.env(process.env));
  if (r.status !== 0) throw new Error(`profiled heatledger zonal exited with ${r.status}: ${r.stderr.trim()}`);
  const file = readdirSync(dir).find((f) => f.endsWith('.cpuprofile'));
  if (!file) throw new Error(`node --cpu-prof wrote no profile in ${dir}`);
  return summariseCpuProfile(join(dir, file), ROOT);
}

function peerPhases(raster: string, districts: string): Record<string, number> | null {
  const r = timeProcess(PYTHON, [PEER, raster, districts, '--timings']);
  if (r.status !== 0) return null;
  try {
    return JSON.parse(r.stderr.trim().split('\n').pop()!) as Record<string, number>;
  } catch {
    return null;
  }
}

/** Median wall seconds of `n` runs, and median CPU seconds (null where /proc is not there). */
function medianRun(command: string, args: string[], n: number): { wall: number; cpu: number | null } {
  const xs: number[] = [], cpu: number[] = [];
  for (let i = 0; i < n; i++) {
    const r = timeProcess(command, args);
    if (r.status !== 0) throw new Error(`${command} ${args.join(' ')} exited with ${r.status}: ${r.stderr.trim()}`);
    xs.push(r.seconds);
    if (r.cpuSeconds !== null) cpu.push(r.cpuSeconds);
  }
  return { wall: median(xs), cpu: cpu.length ? median(cpu) : null };
}

function phaseLine(p: PhaseProfile): string {
  return [
    `districts file ${ms(p.districtsMs)}`, `header ${ms(p.headerMs)}`, `reproject ${ms(p.reprojectMs)}`,
    `masks ${ms(p.maskMs)}`, `decode ${ms(p.decodeMs)} (${p.blocks} blocks, ${(p.decodedPixels / 1e6).toFixed(2)} Mpx)`,
    `stats ${ms(p.statsMs)}`, `output ${ms(p.formatMs)}`, `= ${ms(p.totalMs)}`,
  ].join(', ');
}

/**
 * Where our run goes, in instructions (instructions.ts): each size split into
 * Node/V8 parts, Node's own start with and without the CA bundle that
 * NODE_EXTRA_CA_CERTS names (when it is set), and the peer's total.
 */
function instructionSection(sizes: Size[], rasterOf: (s: Size) => string, districts: string, withPeer: boolean): Record<string, unknown> | null {
  say('\n[instructions] counted by valgrind --tool=callgrind (repeatable within a few per cent on a loaded machine; shares, not a ratio to the peer)');
  if (!valgrindAvailable()) {
    say('  valgrind / callgrind_annotate not found (Debian package valgrind); skipped');
    return null;
  }
  const out = join(WORK_DIR, 'callgrind.out');
  const bySize: Partial<Record<Size, { ours: InstructionSplit; peer_total: number | null }>> = {};
  for (const size of sizes) {
    const ours = countInstructions(NODE, [CLI, 'zonal', rasterOf(size), '--districts', districts, '--format', 'json'], out);
    const peer = withPeer ? countTotalInstructions(PYTHON, [PEER, rasterOf(size), districts], out) : null;
    bySize[size] = { ours, peer_total: peer };
    say(`  [${size}] heatledger zonal: ${describeSplit(ours).join('\n    ')}`);
    if (peer !== null) say(`    (the peer: total ${(peer / 1e6).toFixed(0)} M instructions)`);
  }
  const bare = countInstructions(NODE, ['-e', ''], out);
  const caFile = process.env.NODE_EXTRA_CA_CERTS;
  const clean = withoutExtraCaCerts();
  const bareClean = clean ? countInstructions(NODE, ['-e', ''], out, clean) : null;
  say(`  node -e "": ${(bare.total / 1e6).toFixed(0)} M` + (bareClean
    ? `; without NODE_EXTRA_CA_CERTS (set here to ${caFile}) ${(bareClean.total / 1e6).toFixed(0)} M: the bundle costs every Node process ${((bare.total - bareClean.total) / 1e6).toFixed(0)} M before our code runs`
    : ' (NODE_EXTRA_CA_CERTS not set)'));
  return { by_size: bySize, node_bare: bare.total, node_bare_without_extra_ca_certs: bareClean?.total ?? null, node_extra_ca_certs: caFile ?? null };
}

async function main(): Promise<void> {
  const all = process.argv.includes('--all');
  const archiveArgs = archiveFlags(process.argv.slice(2));
  if (archiveArgs.archive && !all) {
    // The whole archive against the Python peer alone (its own servers, about ten minutes)
    const archive = await runArchiveBench({ ...archiveArgs.options, say });
    if (archiveArgs.argv.includes('--json')) process.stdout.write(JSON.stringify({ archive }) + '\n');
    return;
  }
  if (process.argv.includes('--api') && !all) {
    // The HTTP API alone: 20 s per route and store by default (--api-seconds N for another time).
    const i = process.argv.indexOf('--api-seconds');
    const seconds = i >= 0 ? Number(process.argv[i + 1]) : 20;
    if (!Number.isInteger(seconds) || seconds < 1 || seconds > 600) fail(`--api-seconds needs a whole number from 1 to 600, got "${process.argv[i + 1]}"`);
    const api = await runApiBench(say, { seconds, computedSeconds: Math.max(1, Math.round(seconds / 4)) });
    if (process.argv.includes('--json')) process.stdout.write(JSON.stringify({ api }) + '\n');
    return;
  }
  if (process.argv.includes('--big-store')) {
    const shapeArg = process.argv[process.argv.indexOf('--big-store-shape') + 1];
    const m = process.argv.includes('--big-store-shape') ? /^(\d{1,5})x(\d{1,2})$/.exec(shapeArg ?? '') : null;
    if (process.argv.includes('--big-store-shape') && !(m && Number(m[1]) > 0 && Number(m[2]) > 0)) {
      fail(`--big-store-shape needs districts x years, e.g. 20x2, got "${shapeArg ?? ''}"`);
    }
    const shape = m ? { districts: Number(m[1]), years: Number(m[2]), firstYear: 2015 } : undefined;
    const bigStore = await runBigStoreBench(say, { keep: process.argv.includes('--keep'), shape });
    if (process.argv.includes('--json')) process.stdout.write(JSON.stringify({ big_store: bigStore }) + '\n');
    return;
  }
  if (process.argv.includes('--store-open')) {
    const storeOpen = runStoreOpenBench(say);
    if (process.argv.includes('--json')) process.stdout.write(JSON.stringify({ store_open: storeOpen }) + '\n');
    return;
  }
  if (process.argv.includes('--trends') && !all) {
    // Trend and hot-spot statistics alone: pure computation, seconds.
    const trends = runTrendsBench(say);
    if (process.argv.includes('--json')) process.stdout.write(JSON.stringify({ trends }) + '\n');
    return;
  }
  const pipelineArgs = pipelineFlags(archiveArgs.argv.filter((a) => a !== '--trends')); // --pipeline / --all and the section's own flags
  const args = parseArgs(pipelineArgs.argv);
  if (!existsSync(CLI) || !existsSync(CHILD)) fail('dist/ is missing; run `npm run build` first (npm run bench does)');
  const started = performance.now();
  say(`heatledger zonal bench: ${cpus().length} CPU(s), load average ${loadavg().map((x) => x.toFixed(2)).join(' ')} (figures on a shared machine vary)`);
  const files = await ensureBenchData(WORK_DIR, say);
  if (files.generated) say(`  generated in ${files.generateSeconds.toFixed(1)} s`);
  say(`inputs: ${files.full} (7000 x 7000, DEFLATE+predictor 2, ${files.compressionRatio.full.toFixed(2)}x), ${files.clip} (1200 x 1200, ${files.compressionRatio.clip.toFixed(2)}x), ${files.districts} (60 wards)`);
  const withPeer = peerAvailable();
  if (!withPeer) say('peer: /usr/bin/python3 with rasterio + NumPy not found; peer figures are null');

  const rasterOf = (s: Size) => (s === 'full' ? files.full : files.clip);
  const results: Partial<Record<Size, SizeResult>> = {};
  for (const size of args.sizes) {
    say(`\n[${size}] ${args.rounds} rounds, alternating order ...`);
    const r = timeSize(rasterOf(size), files.districts, args.rounds, withPeer);
    results[size] = r;
    say(`  heatledger zonal: median ${s3(median(r.oursSeconds))} s wall  (rounds: ${r.oursSeconds.map(s3).join(', ')})`);
    if (r.oursCpuSeconds.length) say(`                    median ${s2(median(r.oursCpuSeconds))} s CPU   (rounds: ${r.oursCpuSeconds.map(s2).join(', ')})`);
    if (withPeer) {
      const ratio = median(r.peerSeconds) / median(r.oursSeconds);
      say(`  peer (rasterio):  median ${s3(median(r.peerSeconds))} s wall  (rounds: ${r.peerSeconds.map(s3).join(', ')})`);
      if (r.peerCpuSeconds.length) say(`                    median ${s2(median(r.peerCpuSeconds))} s CPU   (rounds: ${r.peerCpuSeconds.map(s2).join(', ')})`);
      say(`  peer / ours = ${ratio.toFixed(2)} wall` +
        (r.oursCpuSeconds.length && r.peerCpuSeconds.length ? `, ${(median(r.peerCpuSeconds) / median(r.oursCpuSeconds)).toFixed(2)} CPU` : ''));
      if (r.oursPlainSeconds.length) {
        const cpu = r.oursPlainCpuSeconds.length ? median(r.oursPlainCpuSeconds) : null;
        say(`  ours as \`node dist/workers/cli.js\` (no bin line${process.env.NODE_EXTRA_CA_CERTS ? '; NODE_EXTRA_CA_CERTS, set here, read at start' : ''}): median ${s3(median(r.oursPlainSeconds))} s wall` +
          (cpu !== null ? ` / ${s2(cpu)} s CPU` : '') + `; peer / that = ${(median(r.peerSeconds) / median(r.oursPlainSeconds)).toFixed(2)} wall` +
          (cpu !== null && r.peerCpuSeconds.length ? `, ${(median(r.peerCpuSeconds) / cpu).toFixed(2)} CPU` : ''));
      }
      const a = r.agreement!;
      if (a.agree) {
        say(`  agree: yes, ${a.rows} districts: pixels and valid equal, worst |mean difference| ${a.worst.mean.difference.toExponential(2)} K (tolerance ${MEAN_TOLERANCE_KELVIN.toExponential(2)} K: ours is printed to 0.0001 K)`);
      } else {
        say(`  agree: NO (${a.problems.length} problem(s)); first: ${a.problems.slice(0, 5).join('; ')}`);
      }
      say(`  worst |difference| per field, K: ${Object.entries(a.worst).map(([k, v]) => `${k} ${v.difference.toExponential(2)}${v.district ? ` (${v.district})` : ''}`).join(', ')}`);
    }
  }

  say('\n[start-up] whole-process medians of 9, wall / CPU seconds');
  const startRuns = 9;
  const bareRun = medianRun(NODE, ['-e', ''], startRuns);
  const importRun = medianRun(NODE, ['-e', `import(${JSON.stringify(join(ROOT, 'dist/workers/commands/zonal-table.js'))})`], startRuns);
  const versionRun = medianRun(CLI, ['--version'], startRuns);
  const pythonRun = withPeer ? medianRun(PYTHON, ['-c', 'import numpy, rasterio, rasterio.features, rasterio.warp'], startRuns) : null;
  const both = (r: { wall: number; cpu: number | null }) => `${s3(r.wall)} / ${r.cpu === null ? 'n/a' : s2(r.cpu)} s`;
  say(`  node -e "" ${both(bareRun)}; node -e "import('zonal-table.js')" ${both(importRun)}; heatledger --version ${both(versionRun)}` +
    (pythonRun !== null ? `; python3 -c "import numpy, rasterio..." ${both(pythonRun)}` : ''));
  const nodeBare = bareRun.wall, importZonal = importRun.wall, cliVersion = versionRun.wall, pythonImport = pythonRun?.wall ?? null;

  const profiles: Partial<Record<Size, { ours: ChildProfile; peer: Record<string, number> | null; cpu: ProfileSummary }>> = {};
  for (const size of args.sizes) {
    const ours = profileInChild(rasterOf(size), files.districts);
    const peer = withPeer ? peerPhases(rasterOf(size), files.districts) : null;
    const cpu = await cpuProfileCli(rasterOf(size), files.districts, size);
    profiles[size] = { ours, peer, cpu };
    say(`\n[profile ${size}] ours, fresh processes (median of 3): boot ${ms(ours.bootMs)}, module import ${ms(ours.importMs)} (of the compiled modules, which the bin's start-up bundle replaces)`);
    say(`  cold run: ${phaseLine(ours.cold)}`);
    say(`  warm run: ${phaseLine(ours.warm)}`);
    const wall = median(results[size]!.oursSeconds) * 1000;
    say(`  CLI wall ${ms(wall)} vs boot + import + cold run ${ms(ours.bootMs + ours.importMs + ours.cold.totalMs)}; the rest (commander, cli.js, exit; noise) ${ms(wall - ours.bootMs - ours.importMs - ours.cold.totalMs)}`);
    if (peer) say(`  peer phases (one run): ${Object.entries(peer).map(([k, v]) => `${k} ${ms(v * 1000)}`).join(', ')}`);
    say(`  CPU profile of one CLI run (self time, ${ms(cpu.totalMs)} sampled):`);
    say(`    by module:   ${cpu.byModule.map((m) => `${m.name} ${ms(m.ms)}`).join('; ')}`);
    say(`    by function: ${cpu.byFunction.map((m) => `${m.name} ${ms(m.ms)}`).join('; ')}`);
  }

  const instructions = args.instructions ? instructionSection(args.sizes, rasterOf, files.districts, withPeer) : null;

  say('\n[throughput] in-process, one thread');
  const decode = await measureDecode(files.full);
  say(`  decode (openRaster().blocks(), whole 7000 x 7000): ${decode.mpixelPerSecond.toFixed(1)} Mpixel/s (${decode.megabytesPerSecond.toFixed(0)} MB/s decoded, ${decode.seconds.toFixed(2)} s per core for the whole scene); native inflate alone ${decode.inflateOnlyMpixelPerSecond.toFixed(1)} Mpixel/s; reading the compressed bytes ${decode.readOnlySeconds.toFixed(2)} s`);
  const { targets, raster } = await loadTargets(files.full, files.districts);
  let coverage, stats;
  try {
    coverage = measureCoverage(targets, raster);
    say(`  coverage (centreMask, 60 wards, ${coverage.cells} cells): ${coverage.mpixelPerSecond.toFixed(1)} Mpixel/s (${ms(coverage.ms)} for all)`);
    stats = await measureStats(targets, raster, coverage.ms);
    say(`  statistics (zonalScene on decoded blocks minus masks): ${stats.mpixelPerSecond.toFixed(1)} Mpixel/s (${ms(stats.statsMs)}; zonalScene without decode ${ms(stats.sceneMs)})`);
  } finally {
    await raster.close();
  }

  const pipeline = pipelineArgs.pipeline ? await runPipelineBench({ ...pipelineArgs.options, say }) : null;
  const trends = all ? runTrendsBench(say) : null;
  const archive = all ? await runArchiveBench({ ...archiveArgs.options, say }) : null;

  const med = (s: Size, k: 'oursSeconds' | 'peerSeconds' | 'oursCpuSeconds' | 'peerCpuSeconds' | 'oursPlainSeconds' | 'oursPlainCpuSeconds') => (results[s] && results[s]![k].length ? median(results[s]![k]) : null);
  const ratios = args.sizes.map((s) => (withPeer ? med(s, 'peerSeconds')! / med(s, 'oursSeconds')! : null)).filter((x): x is number => x !== null);
  const agreements = args.sizes.map((s) => results[s]!.agreement).filter((a): a is Agreement => a !== null);
  const summary = {
    heatledger_seconds: { full: med('full', 'oursSeconds'), clip: med('clip', 'oursSeconds') },
    heatledger_cpu_seconds: { full: med('full', 'oursCpuSeconds'), clip: med('clip', 'oursCpuSeconds') },
    heatledger_as_node_cli_js: {
      seconds: { full: med('full', 'oursPlainSeconds'), clip: med('clip', 'oursPlainSeconds') },
      cpu_seconds: { full: med('full', 'oursPlainCpuSeconds'), clip: med('clip', 'oursPlainCpuSeconds') },
    },
    peer_cpu_seconds: { full: withPeer ? med('full', 'peerCpuSeconds') : null, clip: withPeer ? med('clip', 'peerCpuSeconds') : null },
    cpu_ratio_peer_over_ours: {
      full: withPeer && med('full', 'oursCpuSeconds') ? med('full', 'peerCpuSeconds')! / med('full', 'oursCpuSeconds')! : null,
      clip: withPeer && med('clip', 'oursCpuSeconds') ? med('clip', 'peerCpuSeconds')! / med('clip', 'oursCpuSeconds')! : null,
    },
    peer_seconds: { full: withPeer ? med('full', 'peerSeconds') : null, clip: withPeer ? med('clip', 'peerSeconds') : null },
    ratio_peer_over_ours: {
      full: withPeer && results.full ? med('full', 'peerSeconds')! / med('full', 'oursSeconds')! : null,
      clip: withPeer && results.clip ? med('clip', 'peerSeconds')! / med('clip', 'oursSeconds')! : null,
    },
    speedup_vs_peer: ratios.length ? Math.min(...ratios) : null,
    agree: agreements.length ? agreements.every((a) => a.agree) : null,
    disagreements: agreements.flatMap((a) => a.problems).slice(0, 20),
    worst_difference_kelvin: Object.fromEntries(args.sizes.map((s) => [s, results[s]!.agreement?.worst ?? null])),
    rounds: args.rounds,
    decode_mpixel_per_s: decode.mpixelPerSecond,
    inflate_only_mpixel_per_s: decode.inflateOnlyMpixelPerSecond,
    whole_scene_read_seconds_per_core: decode.seconds,
    coverage_mpixel_per_s: coverage.mpixelPerSecond,
    stats_mpixel_per_s: stats.mpixelPerSecond,
    startup_seconds: { node_bare: nodeBare, import_zonal_table: importZonal, cli_version: cliVersion, python_imports: pythonImport },
    startup_cpu_seconds: { node_bare: bareRun.cpu, import_zonal_table: importRun.cpu, cli_version: versionRun.cpu, python_imports: pythonRun?.cpu ?? null },
    profile_ms: Object.fromEntries(args.sizes.map((s) => [s, profiles[s]])),
    instructions,
    compression_ratio: files.compressionRatio,
    machine: { cpus: cpus().length, loadavg_at_end: loadavg() },
    pipeline,
    trends,
    archive,
    bench_seconds: (performance.now() - started) / 1000,
  };
  const cpuRatios = Object.values(summary.cpu_ratio_peer_over_ours).filter((x): x is number => x !== null);
  say(`\nbench took ${summary.bench_seconds.toFixed(0)} s; speedup vs peer (smaller of the sizes' ratios): ${summary.speedup_vs_peer === null ? 'n/a (no peer)' : summary.speedup_vs_peer.toFixed(2)} wall` +
    `${cpuRatios.length ? `, ${Math.min(...cpuRatios).toFixed(2)} CPU` : ''}; agree: ${summary.agree === null ? 'n/a' : summary.agree ? 'yes' : 'NO'}`);
  if (args.json) process.stdout.write(JSON.stringify(summary) + '\n');
}

main().catch((e) => {
  process.stderr.write(`bench: ${(e as Error).message}\n`);
  process.exitCode = 1;
});
