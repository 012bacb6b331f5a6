/**
 * The pipeline distributed: two `heatledger worker` processes on Redis (a
 * unique key prefix) writing into a fresh PostgreSQL database, fed by
 * `heatledger ingest`. The district table must equal, byte for byte, the table
 * of the same archive run embedded (in-process runner, PGlite): same
 * processors, same SQL, so any difference is a bug in how the queue hands work
 * around (common practice, no source: a distributed run is checked against the
 * single-process run of the same input).
 *
 * Row counts are derived from the generator's options: 14 files x 18 targets
 * zonal rows, 6 dates x 18 targets derived rows.
 */
import { mkdtemp, rm } from 'node:fs/promises';
import os from 'node:os';
import path from 'node:path';
import { Queue } from 'bullmq';
import { Redis } from 'ioredis';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { DISTRICTS } from '../../demo-data/city.js';
import type { ArchiveResult } from '../../demo-data/generate.js';
import { queueNameFor } from '../../workers/queue/settings.js';
import { serviceAvailable, testRedisUrl } from '../support/services.js';
import {
  SMALL_ARCHIVE, cleanEnv, cleanRedisPrefix, cliOk, createTempDatabase, ensurePipelineBuild, killAllChildren,
  makeArchive, serverCounts, startCliWorker, stopChild, uniquePrefix, type TempDatabase, waitFor, type WorkerProcess,
} from '../support/pipeline-harness.js';

await ensurePipelineBuild();
const up = (await serviceAvailable('redis', 'distributed pipeline')) && (await serviceAvailable('postgres', 'distributed pipeline'));

const FILES = SMALL_ARCHIVE.years! * (2 * SMALL_ARCHIVE.pairsPerYear! + 1);
const DATES = SMALL_ARCHIVE.years! * SMALL_ARCHIVE.pairsPerYear!;
const TARGETS = DISTRICTS.length + 1;

describe.skipIf(!up)('distributed pipeline: 2 worker processes, Redis, PostgreSQL', () => {
  let tmp: string;
  let archive: ArchiveResult;
  let db: TempDatabase | undefined;
  const prefix = uniquePrefix('dist');
  const workers: WorkerProcess[] = [];

  beforeAll(async () => {
    tmp = await mkdtemp(path.join(os.tmpdir(), 'hlp-dist-'));
    archive = await makeArchive(path.join(tmp, 'archive'));
    db = await createTempDatabase('dist');
  });

  afterAll(async () => {
    await killAllChildren();
    await db?.drop();
    await cleanRedisPrefix(testRedisUrl, prefix);
    if (tmp) await rm(tmp, { recursive: true, force: true });
  });

  it('gives exactly the embedded table, re-runs nothing when ingested again, and its workers stop cleanly on SIGTERM', async () => {
    const archiveDir = path.dirname(archive.districtsPath);
    const env = cleanEnv({ REDIS_URL: testRedisUrl, DATABASE_URL: db!.url, HEATLEDGER_QUEUE_PREFIX: prefix });
    const embeddedDir = path.join(tmp, 'embedded');
    const embeddedArgs = ['--data-dir', embeddedDir];

    // The embedded run of the same archive goes on beside the distributed one.
    const embedded = (async () => {
      const e = cleanEnv();
      await cliOk(['ingest', archiveDir, '--districts', archive.districtsPath, '--json', '--threads', '1', ...embeddedArgs], e);
      return {
        date: await cliOk(['table', '--format', 'json', ...embeddedArgs], e),
        year: await cliOk(['table', '--level', 'year', '--format', 'json', ...embeddedArgs], e),
      };
    })();

    workers.push(await startCliWorker(env), await startCliWorker(env));
    // both processes are connected to the queues they serve (waited for: a worker registers as it connects)
    const conn = new Redis(testRedisUrl, { maxRetriesPerRequest: 1 });
    try {
      for (const name of ['scene', 'derive']) {
        const q = new Queue(queueNameFor(name), { connection: conn, prefix });
        let count = 0;
        await waitFor(async () => (count = await q.getWorkersCount()) >= 2, `two workers on the ${name} queue`);
        expect(count, name).toBe(2);
        await q.close();
      }
    } finally {
      conn.disconnect();
    }

    const started = performance.now();
    const summary = JSON.parse(await cliOk(['ingest', archiveDir, '--districts', archive.districtsPath, '--json'], env));
    const distributedSeconds = (performance.now() - started) / 1000;
    expect(summary.mode).toBe('distributed');
    expect(summary.scenes).toBe(FILES);
    expect(summary.failures).toEqual([]);
    expect(summary.derive).toEqual({ rows: DATES * TARGETS, ok: expect.any(Number), scenes: { processed: FILES, failed: 0 } });
    expect(await serverCounts(db!.url)).toEqual({ scenes: FILES, zonal: FILES * TARGETS, derived: DATES * TARGETS, zonalDuplicates: 0 });

    const date = await cliOk(['table', '--format', 'json'], env);
    const year = await cliOk(['table', '--level', 'year', '--format', 'json'], env);
    const base = await embedded;
    expect(JSON.parse(date)).toHaveLength(DATES * TARGETS);
    expect(date).toBe(base.date);
    expect(year).toBe(base.year);

    // Same archive again: content-derived job ids, so the completed tree is reused.
    const again = JSON.parse(await cliOk(['ingest', archiveDir, '--districts', archive.districtsPath, '--json'], env));
    expect(again.failures).toEqual([]);
    expect(again.run_id).toBe(summary.run_id + 1);
    expect(await cliOk(['table', '--format', 'json'], env)).toBe(date);
    expect(await serverCounts(db!.url)).toEqual({ scenes: FILES, zonal: FILES * TARGETS, derived: DATES * TARGETS, zonalDuplicates: 0 });

    // SIGTERM: each worker stops by itself (not killed after the generous grace period); how long it took is printed, not asserted
    const stops = await Promise.all(workers.map((w) => stopChild(w.child, 'SIGTERM')));
    for (const [i, s] of stops.entries()) {
      expect(s, `worker ${i}: ${workers[i].stderr()}`).toMatchObject({ code: 0, signal: null, forced: false });
      expect(workers[i].stderr()).toContain('heatledger worker: stopped');
    }
    console.log(`distributed ingest of ${FILES} scenes with 2 workers: ${distributedSeconds.toFixed(1)} s; SIGTERM stops in ${stops.map((s) => s.ms.toFixed(0)).join(' / ')} ms`);
  }, 1_200_000);
});
