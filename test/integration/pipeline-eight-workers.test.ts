/**
 * Correctness of scale-out (not its speed): the same archive ingested by one
 * `heatledger worker` process and by eight, each into a fresh PostgreSQL
 * database on its own Redis key prefix. Both must store the same rows —
 * every zonal statistic of every scene and district, every derived value,
 * the district table — and neither may hold a duplicate row (common
 * practice, no source: a parallel run is checked against the serial run of
 * the same input). Eight processes on a two-core machine interleave their
 * jobs far more than two do, so races in claiming, retrying or writing jobs
 * show here if anywhere.
 *
 * Row counts are derived from the generator's options: files x targets zonal
 * rows, dates x targets derived rows.
 */
import { mkdtemp, rm } from 'node:fs/promises';
import os from 'node:os';
import path from 'node:path';
import pg from 'pg';
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
const up = (await serviceAvailable('redis', 'eight-worker pipeline')) && (await serviceAvailable('postgres', 'eight-worker pipeline'));

const FILES = SMALL_ARCHIVE.years! * (2 * SMALL_ARCHIVE.pairsPerYear! + 1);
const DATES = SMALL_ARCHIVE.years! * SMALL_ARCHIVE.pairsPerYear!;
const TARGETS = DISTRICTS.length + 1;

/** Every stored zonal and derived row, keyed by content (scene hashes, not ids, which depend on the order of registration). */
async function storedRows(databaseUrl: string): Promise<{ zonal: unknown[]; derived: unknown[]; derivedDuplicates: number }> {
  const c = new pg.Client({ connectionString: databaseUrl });
  await c.connect();
  try {
    const zonal = await c.query(
      `SELECT s.content_hash, z.district_id, z.pixels, z.valid, z.valid_fraction, z.mean_k, z.std_k, z.min_k, z.max_k,
              z.median_k, z.p10_k, z.p90_k
         FROM zonal_stats z JOIN scenes s ON s.id = z.scene_id ORDER BY 1, 2`,
    );
    const derived = await c.query(
      `SELECT d.obs_date::text AS obs_date, d.district_id, sd.content_hash AS day_hash, sn.content_hash AS night_hash,
              d.t_day_k, d.t_night_k, d.ati_per_k, d.suhi_day_k, d.suhi_night_k
         FROM derived_metrics d JOIN scenes sd ON sd.id = d.day_scene_id LEFT JOIN scenes sn ON sn.id = d.night_scene_id
        ORDER BY 1, 2`,
    );
    const dup = await c.query<{ n: string }>(
      'SELECT count(*) AS n FROM (SELECT obs_date, district_id FROM derived_metrics GROUP BY 1, 2 HAVING count(*) > 1) d',
    );
    return { zonal: zonal.rows, derived: derived.rows, derivedDuplicates: Number(dup.rows[0].n) };
  } finally {
    await c.end();
  }
}

describe.skipIf(!up)('distributed pipeline: 8 worker processes store what 1 stores', () => {
  let tmp: string;
  let archive: ArchiveResult;
  const dbs: TempDatabase[] = [];
  const prefixes = [uniquePrefix('one'), uniquePrefix('eight')];
  const workers: WorkerProcess[] = [];

  beforeAll(async () => {
    tmp = await mkdtemp(path.join(os.tmpdir(), 'hlp-eight-'));
    archive = await makeArchive(path.join(tmp, 'archive'));
    dbs.push(await createTempDatabase('one'), await createTempDatabase('eight'));
  });

  afterAll(async () => {
    await killAllChildren();
    for (const db of dbs) await db.drop();
    for (const p of prefixes) await cleanRedisPrefix(testRedisUrl, p);
    if (tmp) await rm(tmp, { recursive: true, force: true });
  });

  /** Start `count` workers on one prefix and database, ingest, stop them; the stored rows, the table and the counts. */
  async function ingestWith(count: number, db: TempDatabase, prefix: string) {
    const env = cleanEnv({ REDIS_URL: testRedisUrl, DATABASE_URL: db.url, HEATLEDGER_QUEUE_PREFIX: prefix });
    const mine: WorkerProcess[] = [];
    // one after the other: the first one migrates the fresh database
    for (let k = 0; k < count; k++) {
      const w = await startCliWorker(env);
      mine.push(w);
      workers.push(w);
    }
    const conn = new Redis(testRedisUrl, { maxRetriesPerRequest: 1 });
    try {
      for (const name of ['scene', 'derive']) {
        const q = new Queue(queueNameFor(name), { connection: conn, prefix });
        await waitFor(async () => (await q.getWorkersCount()) >= count, `${count} workers on the ${name} queue`);
        await q.close();
      }
    } finally {
      conn.disconnect();
    }
    const archiveDir = path.dirname(archive.districtsPath);
    const summary = JSON.parse(await cliOk(['ingest', archiveDir, '--districts', archive.districtsPath, '--json'], env));
    const table = await cliOk(['table', '--format', 'json'], env);
    const stops = await Promise.all(mine.map((w) => stopChild(w.child, 'SIGTERM')));
    for (const [i, s] of stops.entries()) expect(s, `worker ${i + 1} of ${count}: ${mine[i].stderr()}`).toMatchObject({ code: 0, forced: false });
    return { summary, table, counts: await serverCounts(db.url), rows: await storedRows(db.url) };
  }

  it('gives the same zonal rows, derived rows and district table, with no duplicate row', async () => {
    const one = await ingestWith(1, dbs[0], prefixes[0]);
    const eight = await ingestWith(8, dbs[1], prefixes[1]);
    for (const r of [one, eight]) {
      expect(r.summary.mode).toBe('distributed');
      expect(r.summary.failures).toEqual([]);
      expect(r.summary.scenes).toBe(FILES);
      expect(r.counts).toEqual({ scenes: FILES, zonal: FILES * TARGETS, derived: DATES * TARGETS, zonalDuplicates: 0 });
      expect(r.rows.derivedDuplicates).toBe(0);
    }
    expect(eight.rows.zonal).toHaveLength(FILES * TARGETS);
    expect(eight.rows.zonal).toEqual(one.rows.zonal);
    expect(eight.rows.derived).toEqual(one.rows.derived);
    expect(JSON.parse(eight.table)).toHaveLength(DATES * TARGETS);
    expect(eight.table).toBe(one.table);
  }, 1_200_000);
});
