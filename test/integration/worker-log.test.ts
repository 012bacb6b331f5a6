/**
 * `heatledger worker` logs structured JSON lines on standard output at the
 * level LOG_LEVEL names: every line parses as JSON with pino's fields (numeric
 * `level`, `time`, `msg`); at debug the jobs taken show, at warn only warnings
 * and errors (the job refused as bad input) remain; a LOG_LEVEL that is not a
 * level is refused before the worker starts. pino's level numbers (10 trace,
 * 20 debug, 30 info, 40 warn, 50 error, 60 fatal) are pino's documented
 * defaults (from memory). Needs Redis and PostgreSQL (the distributed mode).
 */
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import {
  cleanEnv, cleanRedisPrefix, createTempDatabase, ensurePipelineBuild, killAllChildren, makeArchive, runCli, startCliUntil, stopChild,
  type TempDatabase, uniquePrefix,
} from '../support/pipeline-harness.js';
import { serviceAvailable, testRedisUrl } from '../support/services.js';

await ensurePipelineBuild();
const available = (await serviceAvailable('postgres', 'worker-log.test.ts')) && (await serviceAvailable('redis', 'worker-log.test.ts'));

const tmp = mkdtempSync(path.join(tmpdir(), 'heatledger-wlog-'));
const archiveDir = path.join(tmp, 'archive');
const databases: TempDatabase[] = [];
const prefixes: string[] = [];

interface LogLine { level: number; time: number; msg: string; name?: string; job?: string; error?: string; [k: string]: unknown }

/** Run a distributed ingest of the small archive through one worker at `level`; the worker's standard output, parsed line by line. */
async function workerRun(level: string): Promise<{ lines: LogLine[]; raw: string[]; ingestCode: number | null }> {
  const db = await createTempDatabase('wlog');
  databases.push(db);
  const prefix = uniquePrefix('wlog');
  prefixes.push(prefix);
  const env = cleanEnv({ REDIS_URL: testRedisUrl, DATABASE_URL: db.url, HEATLEDGER_QUEUE_PREFIX: prefix, LOG_LEVEL: level });
  const worker = await startCliUntil(['worker'], env, /heatledger worker: serving/);
  const ingest = await runCli(['ingest', archiveDir, '--districts', path.join(archiveDir, 'corvenmouth_districts.geojson'), '--no-progress'], env);
  const stopped = await stopChild(worker.child, 'SIGTERM');
  expect(stopped.forced).toBe(false);
  const raw = worker.stdout().split('\n').filter((l) => l !== '');
  return { lines: raw.map((l) => JSON.parse(l) as LogLine), raw, ingestCode: ingest.code };
}

beforeAll(async () => {
  if (!available) return;
  await makeArchive(archiveDir, { years: 1, pairsPerYear: 1, pixelSizeMetres: 1000 });
  // a file that is not a GeoTIFF: its ingest job fails as bad input on the worker
  writeFileSync(path.join(archiveDir, 'corvenmouth_broken.tif'), 'not a raster\n');
}, 300_000);

afterAll(async () => {
  await killAllChildren();
  for (const p of prefixes) await cleanRedisPrefix(testRedisUrl, p);
  for (const d of databases) await d.drop();
  rmSync(tmp, { recursive: true, force: true });
});

describe.skipIf(!available)('worker log lines', () => {
  it('LOG_LEVEL=debug: JSON lines with level, time and message; jobs taken and done, the refused file as an error', async () => {
    const { lines, ingestCode } = await workerRun('debug');
    expect(ingestCode).toBe(2); // the broken file was refused; the rest stored
    for (const l of lines) {
      expect([10, 20, 30, 40, 50, 60]).toContain(l.level);
      expect(Number.isInteger(l.time)).toBe(true);
      expect(typeof l.msg).toBe('string');
      expect(l.name).toBe('heatledger-worker');
    }
    expect(lines.map((l) => l.msg)).toContain('worker ready');
    expect(lines.at(-1)!.msg).toBe('worker stopped');
    expect(lines.some((l) => l.level === 20 && l.msg === 'job taken')).toBe(true);
    const done = lines.filter((l) => l.level === 30 && l.msg === 'job done');
    expect(new Set(done.map((l) => l.job))).toEqual(new Set(['scene', 'derive']));
    for (const l of done) expect(l.ms).toBeTypeOf('number');
    const refused = lines.filter((l) => l.level === 50);
    expect(refused.length).toBeGreaterThanOrEqual(1);
    expect(refused[0].msg).toBe('job failed: bad input, not retried');
    expect(refused[0].error).toMatch(/corvenmouth_broken\.tif/);
  });

  it('LOG_LEVEL=warn: nothing below warn, and the refused file still shows', async () => {
    const { lines } = await workerRun('warn');
    expect(lines.length).toBeGreaterThanOrEqual(1);
    for (const l of lines) expect(l.level).toBeGreaterThanOrEqual(40);
    expect(lines.some((l) => l.level === 50 && String(l.error).includes('corvenmouth_broken.tif'))).toBe(true);
  });

  it('a LOG_LEVEL that is not a level: one line naming the variable and the levels, exit 2', async () => {
    const r = await runCli(['worker'], cleanEnv({ REDIS_URL: testRedisUrl, DATABASE_URL: 'postgres://127.0.0.1:1/none', LOG_LEVEL: 'verbose' }));
    expect(r.code).toBe(2);
    expect(r.stderr).toBe('heatledger: LOG_LEVEL must be one of fatal, error, warn, info, debug, trace, silent, got "verbose"\n');
    expect(r.stdout).toBe('');
  });
});
