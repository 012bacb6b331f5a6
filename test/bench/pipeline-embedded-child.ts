/**
 * One embedded pipeline run in a fresh process, for the pipeline bench:
 *
 *     node --import dist/test/bench/pipeline-register.js dist/test/bench/pipeline-embedded-child.js \
 *          <archive dir> <districts.geojson> <threads> <data dir>
 *
 * Runs runPipeline (in-process runner, PGlite in <data dir>) with <threads>
 * worker threads and prints one JSON line: the run summary, the timed
 * repository calls (pipeline-timing-repo.ts, registered by the --import preload)
 * and when runPipeline started and ended (epoch ms and process.hrtime µs).
 * The data dir belongs to the caller, who removes it. When the bench that
 * spawned this process over IPC goes away, the process ends.
 */
import type { RepoTiming } from './pipeline-timing-repo.js';

if (process.send) {
  process.on('disconnect', () => process.exit(1));
  process.channel?.unref();
}

const [archiveDir, districtsPath, threadsText, dataDir] = process.argv.slice(2);
const threads = Number(threadsText);
if (!archiveDir || !districtsPath || !dataDir || !Number.isInteger(threads) || threads < 1) {
  process.stderr.write('usage: pipeline-embedded-child.js <archive dir> <districts.geojson> <threads> <data dir>\n');
  process.exit(2);
}

const { runPipeline } = await import('../../workers/run/pipeline.js');
const { runtimeConfig } = await import('../../workers/run/config.js');
// An empty environment: embedded mode even when the bench's shell has REDIS_URL or DATABASE_URL set.
const startedHrUs = Number(process.hrtime.bigint() / 1000n);
const startedAt = performance.timeOrigin + performance.now();
const summary = await runPipeline({ inputs: [archiveDir], districtsPath, threads, dataDir }, runtimeConfig({ dataDir }, {}));
const timing = (globalThis as { __heatledgerBenchRepoTiming?: RepoTiming }).__heatledgerBenchRepoTiming ?? null;
const endedHrUs = Number(process.hrtime.bigint() / 1000n);
const endedAt = performance.timeOrigin + performance.now();
process.stdout.write(JSON.stringify({ summary, timing, startedAt, endedAt, startedHrUs, endedHrUs }) + '\n');
