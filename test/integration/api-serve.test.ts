/**
 * `heatledger serve` as a process (dist/), on the small seeded archive of the
 * invented city:
 * - a server started before an ingest shows the ingest's new year as soon as its
 *   run ends, without a restart: embedded (the ingest, asked for over
 *   POST /api/ingest, takes the store over from the server and the server reads
 *   through it) and distributed (PostgreSQL + Redis, a queue worker, an ingest
 *   from the command line);
 * - the start-up line: 127.0.0.1 by default; --host 0.0.0.0 is said to reach other machines.
 * The expected years come from the generator's options (years 2019-2020), the
 * rows from the command-line `table` of the same store.
 */
import { cpSync, mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { ArchiveResult } from '../../demo-data/generate.js';
import {
  SMALL_ARCHIVE, cleanEnv, cleanRedisPrefix, cliOk, createTempDatabase, ensurePipelineBuild, killAllChildren, makeArchive, runCli, startCliUntil,
  startCliWorker, stopChild, uniquePrefix, waitFor, type StartedCli,
} from '../support/pipeline-harness.js';
import { serviceAvailable, testRedisUrl } from '../support/services.js';

await ensurePipelineBuild();
const serversUp = (await serviceAvailable('postgres', 'api-serve distributed')) && (await serviceAvailable('redis', 'api-serve distributed'));

const TOKEN = 'serve-test-token-0123456789';
const FIRST = 2019; // generator default firstYear; SMALL_ARCHIVE has 2 years
let tmp: string;
let root: string;
let archive: ArchiveResult;
let firstYear: string[];
let secondYear: string[];

/** Start a server and return it with the port from its start-up line. */
async function serve(args: string[], env: NodeJS.ProcessEnv): Promise<{ server: StartedCli; base: string }> {
  const server = await startCliUntil(['serve', '--port', '0', ...args], env, /heatledger API on http:\/\/\S+:\d+\//);
  const port = /heatledger API on http:\/\/\S+?:(\d+)\//.exec(server.stderr())![1];
  return { server, base: `http://127.0.0.1:${port}` };
}

async function districts(base: string): Promise<{ status: number; etag: string | null; year: number | null; years: number[] }> {
  const r = await fetch(`${base}/api/districts?metric=lst_day`);
  const body = r.status === 200 ? ((await r.json()) as { year: number | null; years: number[] }) : { year: null, years: [] };
  return { status: r.status, etag: r.headers.get('etag'), year: body.year, years: body.years };
}

beforeAll(async () => {
  tmp = mkdtempSync(path.join(tmpdir(), 'heatledger-api-serve-'));
  root = path.join(tmp, 'root');
  mkdirSync(root);
  archive = await makeArchive(path.join(root, 'archive'), SMALL_ARCHIVE);
  cpSync(archive.districtsPath, path.join(root, 'districts.geojson'));
  firstYear = archive.files.filter((f) => path.basename(f).includes(`_${FIRST}`));
  secondYear = archive.files.filter((f) => path.basename(f).includes(`_${FIRST + 1}`));
  expect(firstYear.length).toBeGreaterThan(0);
  expect(secondYear.length).toBeGreaterThan(0);
}, 600_000);
afterAll(async () => {
  await killAllChildren();
  if (tmp) rmSync(tmp, { recursive: true, force: true });
});

describe('serve settings from the environment', () => {
  it('refuses a short token and a rate that is not plain digits, by name, with exit 2 (bad input)', async () => {
    const cases: [Record<string, string>, RegExp][] = [
      [{ HEATLEDGER_TOKEN: 'short' }, /HEATLEDGER_TOKEN must be 16 to 512 printable characters without blanks/],
      [{ HEATLEDGER_READ_TOKEN: 'has blanks in it, 0123456789' }, /HEATLEDGER_READ_TOKEN must be 16 to 512 printable characters without blanks/],
      [{ HEATLEDGER_READS_PER_MINUTE: '1e3' }, /HEATLEDGER_READS_PER_MINUTE must be a whole number of requests per minute from 1 to 1000000000 in decimal digits, got "1e3"/],
      [{ HEATLEDGER_WRITES_PER_MINUTE: '0' }, /HEATLEDGER_WRITES_PER_MINUTE must be a whole number/],
    ];
    for (const [extra, message] of cases) {
      const r = await runCli(['serve', '--port', '0', '--data-dir', path.join(tmp, 'nowhere')], cleanEnv(extra), 120_000);
      expect(r.code, JSON.stringify(extra)).toBe(2);
      expect(r.stderr, JSON.stringify(extra)).toMatch(message);
      expect(r.stderr).not.toContain('short');
    }
  }, 600_000);
});

describe('a running server shows a new year once its ingest ends', () => {
  it('embedded: POST /api/ingest runs the ingest, GET /api/jobs/{id} follows it, /api/districts shows the year', async () => {
    const dataDir = path.join(tmp, 'data-embedded');
    await cliOk(['ingest', ...firstYear, '--districts', archive.districtsPath, '--threads', '1', '--no-progress', '--data-dir', dataDir], cleanEnv(), 480_000);
    const env = cleanEnv({ HEATLEDGER_TOKEN: TOKEN, HEATLEDGER_DATA_ROOT: root, LOG_LEVEL: 'warn' });
    const { server, base } = await serve(['--host', '0.0.0.0', '--data-dir', dataDir], env);
    try {
      // the explicit choice to listen beyond this machine is said at start-up
      expect(server.stderr()).toMatch(/heatledger API on http:\/\/0\.0\.0\.0:\d+\/api\//);
      expect(server.stderr()).toContain('listening on 0.0.0.0, not only on this machine (127.0.0.1): other machines can reach it');
      const before = await districts(base);
      expect(before).toMatchObject({ status: 200, year: FIRST, years: [FIRST] });

      const files = secondYear.map((f) => path.relative(root, f));
      const post = await fetch(`${base}/api/ingest`, { method: 'POST', headers: { authorization: `Bearer ${TOKEN}`, 'content-type': 'application/json' }, body: JSON.stringify({ files }) });
      expect(post.status).toBe(202);
      const { job_id: id } = (await post.json()) as { job_id: string };
      const job = await waitFor(async () => {
        const r = await fetch(`${base}/api/jobs/${id}`, { headers: { authorization: `Bearer ${TOKEN}` } });
        expect(r.status).toBe(200);
        const j = (await r.json()) as { state: string };
        return j.state === 'queued' || j.state === 'running' ? undefined : j;
      }, 'the ingest job to end', 480_000, 250);
      expect(job).toMatchObject({ id, state: 'succeeded', scenes_asked: secondYear.length, scenes_done: secondYear.length, scenes_failed: 0, errors: [] });
      expect((job as unknown as { run_id: number }).run_id).toBeGreaterThan(0);

      const after = await waitFor(async () => { const d = await districts(base); return d.years.length === 2 ? d : undefined; }, 'the new year on the server');
      expect(after).toMatchObject({ status: 200, year: FIRST + 1, years: [FIRST, FIRST + 1] });
      expect(after.etag).not.toBe(before.etag);
      // the server's table equals the command line's table of the same store (the server hands it back once done)
      const table = (await (await fetch(`${base}/api/table?level=year`)).json()) as { rows: unknown[] };
      const health = (await (await fetch(`${base}/api/health`)).json()) as { last_run: { id: number; state: string } };
      expect(health.last_run).toMatchObject({ id: (job as unknown as { run_id: number }).run_id, state: 'succeeded' });
      // a file that is not a raster: the job ends incomplete, naming it relative to the data root only
      writeFileSync(path.join(root, 'not-a-scene.tif'), 'plain text, not a TIFF\n');
      const bad = await fetch(`${base}/api/ingest`, { method: 'POST', headers: { authorization: `Bearer ${TOKEN}`, 'content-type': 'application/json' }, body: JSON.stringify({ files: ['not-a-scene.tif'] }) });
      expect(bad.status).toBe(202);
      const badId = ((await bad.json()) as { job_id: string }).job_id;
      const badJob = await waitFor(async () => {
        const j = (await (await fetch(`${base}/api/jobs/${badId}`, { headers: { authorization: `Bearer ${TOKEN}` } })).json()) as { state: string; errors: string[] };
        return j.state === 'queued' || j.state === 'running' ? undefined : j;
      }, 'the failing job to end', 480_000, 250);
      expect(badJob).toMatchObject({ state: 'incomplete', scenes_asked: 1, scenes_done: 0, scenes_failed: 1 });
      expect(badJob.errors.length).toBeGreaterThan(0);
      expect(badJob.errors[0].startsWith('not-a-scene.tif: ')).toBe(true);
      for (const e of badJob.errors) expect(e).not.toContain(tmp);
      const stopped = await stopChild(server.child, 'SIGTERM');
      expect(stopped.code).toBe(0);
      const cli = JSON.parse(await cliOk(['table', '--level', 'year', '--format', 'json', '--data-dir', dataDir], cleanEnv(), 240_000)) as unknown[];
      expect(table.rows).toEqual(cli);
    } finally {
      await stopChild(server.child, 'SIGTERM');
    }
  }, 900_000);

  it.skipIf(!serversUp)('distributed: a command-line ingest through a queue worker; the server shows the year after the run', async () => {
    const db = await createTempDatabase('apiserve');
    const prefix = uniquePrefix('apiserve');
    const env = cleanEnv({ REDIS_URL: testRedisUrl, DATABASE_URL: db.url, HEATLEDGER_QUEUE_PREFIX: prefix, LOG_LEVEL: 'warn' });
    const worker = await startCliWorker(env);
    try {
      await cliOk(['ingest', ...firstYear, '--districts', archive.districtsPath, '--no-progress'], env, 480_000);
      const { server, base } = await serve([], env);
      try {
        // bound to this machine only by default; no warning line
        expect(server.stderr()).toMatch(/heatledger API on http:\/\/127\.0\.0\.1:\d+\/api\//);
        expect(server.stderr()).not.toContain('other machines can reach it');
        const before = await districts(base);
        expect(before).toMatchObject({ status: 200, year: FIRST, years: [FIRST] });
        await cliOk(['ingest', ...secondYear, '--districts', archive.districtsPath, '--no-progress'], env, 480_000);
        const after = await waitFor(async () => { const d = await districts(base); return d.years.length === 2 ? d : undefined; }, 'the new year on the server');
        expect(after).toMatchObject({ year: FIRST + 1, years: [FIRST, FIRST + 1] });
        expect(after.etag).not.toBe(before.etag);
      } finally {
        await stopChild(server.child, 'SIGTERM');
      }
    } finally {
      await stopChild(worker.child, 'SIGTERM');
      await cleanRedisPrefix(testRedisUrl, prefix);
      await db.drop();
    }
  }, 900_000);
});
