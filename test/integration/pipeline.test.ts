/**
 * The whole pipeline, embedded: a small seeded archive of the invented city
 * (2 summers x 3 day/night pairs + 2 albedo scenes = 14 GeoTIFFs, 17 districts
 * + the rural ring) through runPipeline into PGlite, then the district table.
 *
 * Checks and their sources:
 * - district means equal those of rasterio + NumPy (GDAL's decoder, GDAL/PROJ
 *   reprojection, GDAL's pixel-centre rasterize rule), run with Debian's
 *   /usr/bin/python3 — outside the project;
 * - SUHI = district LST minus rural LST of the same scene (Peng et al. 2012);
 * - ATI = (1 - a) / (T_day - T_night) (Price 1977, C = 1), so
 *   1 - ATI * (T_day - T_night) must give back the albedo the generator put
 *   into each district (demo-data/city.ts);
 * - counts derived from the generator's options (files per summer = 2 x pairs + 1);
 * - the embedded runner on the PostgreSQL 15 server gives the same table, to
 *   the last digit, as on PGlite (same SQL, same code — PostgreSQL's avg() on
 *   float8 is the same algorithm in both engines);
 * - ingesting the same archive again changes nothing (content-hash keys);
 *   corrupted files fail with a reason naming the file and the rest is
 *   processed as if they were absent.
 */
import { copyFile, mkdir, mkdtemp, readFile, rm, stat, writeFile } from 'node:fs/promises';
import { randomBytes } from 'node:crypto';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { ArchiveResult } from '../../demo-data/generate.js';
import { DISTRICTS } from '../../demo-data/city.js';
import { runPipeline, type PipelineSummary } from '../../workers/run/pipeline.js';
import { runtimeConfig } from '../../workers/run/config.js';
import { openStore } from '../../workers/store/index.js';
import { districtTable, roundTableRows } from '../../workers/store/district-table.js';
import type { Row } from '../../workers/format.js';
import { pythonModulesAvailable, serviceAvailable } from '../support/services.js';
import {
  SMALL_ARCHIVE, cleanEnv, cliOk, runCli, createTempDatabase, ensurePipelineBuild, killAllChildren, makeArchive,
  rasterioDistrictMeans, type TempDatabase,
} from '../support/pipeline-harness.js';

await ensurePipelineBuild();
const pgUp = await serviceAvailable('postgres', 'pipeline on the PostgreSQL server');
const hasRasterio = await pythonModulesAvailable(['rasterio', 'numpy'], 'pipeline district means against rasterio');

const YEARS = SMALL_ARCHIVE.years!;
const PAIRS = SMALL_ARCHIVE.pairsPerYear!;
const FILES = YEARS * (2 * PAIRS + 1); // derived from the generator: per summer, pairs x (day + night) + 1 albedo
const DATES = YEARS * PAIRS; // one table date per day pass (the night pass ~12 h later pairs with it)
const TARGETS = DISTRICTS.length + 1; // 17 districts + the rural reference
const CORE = DISTRICTS.filter((d) => d.landUse === 'dense_core').map((d) => d.id);
const WATER = DISTRICTS.filter((d) => d.landUse === 'water').map((d) => d.id);

let tmp: string;
let archive: ArchiveResult;
let archiveDir: string;

async function tablesOf(open: Parameters<typeof openStore>[0]): Promise<{ date: Row[]; year: Row[]; counts: Record<string, number> }> {
  const store = await openStore(open);
  try {
    const n = async (t: string) => (await store.query<{ n: number }>(`SELECT count(*)::int AS n FROM ${t}`))[0].n;
    return {
      date: await districtTable(store, 'date'),
      year: await districtTable(store, 'year'),
      counts: { scenes: await n('scenes'), zonal: await n('zonal_stats'), derived: await n('derived_metrics') },
    };
  } finally {
    await store.close();
  }
}

const num = (v: unknown): number | null => (typeof v === 'number' ? v : null);
const meanOf = (xs: number[]) => xs.reduce((s, x) => s + x, 0) / xs.length;

beforeAll(async () => {
  tmp = await mkdtemp(path.join(os.tmpdir(), 'hlp-embedded-'));
  archiveDir = path.join(tmp, 'archive');
  archive = await makeArchive(archiveDir);
});

afterAll(async () => {
  await killAllChildren();
  if (tmp) await rm(tmp, { recursive: true, force: true });
});

let pglite: { date: Row[]; year: Row[]; counts: Record<string, number> };
let pgliteDir: string;

describe('embedded pipeline on PGlite', () => {
  let summary: PipelineSummary;

  beforeAll(async () => {
    pgliteDir = path.join(tmp, 'data-pglite');
    summary = await runPipeline(
      { inputs: [archiveDir], districtsPath: archive.districtsPath, threads: 2 },
      runtimeConfig({ dataDir: pgliteDir }, {}),
    );
    pglite = await tablesOf({ dataDir: pgliteDir });
  }, 1_200_000);

  it('processes every file and derives one row per target and date', () => {
    expect(archive.files).toHaveLength(FILES);
    expect(summary.mode).toBe('embedded');
    expect(summary.scenes).toBe(FILES);
    expect(summary.failures).toEqual([]);
    expect(summary.derive?.rows).toBe(DATES * TARGETS);
    expect(summary.derive?.scenes).toEqual({ processed: FILES, failed: 0 });
    expect(pglite.counts).toEqual({ scenes: FILES, zonal: FILES * TARGETS, derived: DATES * TARGETS });
  });

  it('has table rows for every district and the rural row, on every date and year', () => {
    const ids = [...new Set(pglite.date.map((r) => r.district))].sort();
    expect(ids).toEqual([...DISTRICTS.map((d) => d.id), 'rural'].sort());
    for (const id of ids) {
      expect(pglite.date.filter((r) => r.district === id)).toHaveLength(DATES);
      const years = pglite.year.filter((r) => r.district === id);
      expect(years.map((r) => r.year)).toEqual([2019, 2020]); // generator default firstYear 2019
    }
    const names = new Map(DISTRICTS.map((d) => [d.id, d.name]));
    for (const r of pglite.date) if (r.district !== 'rural') expect(r.name).toBe(names.get(String(r.district)));
  });

  it('has year rows that summarise the date rows (every date weighs the same)', () => {
    // sql/queries/district_table_year.sql: per year, the mean over dates that have the value,
    // `dates` = dates with any value, scene counts summed (derived from those definitions).
    const fields = ['lst_day_k', 'lst_night_k', 'suhi_day_k', 'suhi_night_k', 'ati_per_k'] as const;
    expect(pglite.year).toHaveLength(TARGETS * YEARS);
    for (const y of pglite.year) {
      const rows = pglite.date.filter((r) => r.district === y.district && String(r.date).startsWith(`${y.year}-`));
      expect(rows).toHaveLength(PAIRS);
      expect(y.dates).toBe(rows.filter((r) => fields.some((f) => r[f] !== null)).length);
      expect(y.day_scenes).toBe(rows.reduce((s, r) => s + Number(r.day_scenes), 0));
      expect(y.night_scenes).toBe(rows.reduce((s, r) => s + Number(r.night_scenes), 0));
      for (const f of fields) {
        const vals = rows.map((r) => num(r[f])).filter((v): v is number => v !== null);
        if (vals.length === 0) expect(y[f]).toBeNull();
        else expect(Math.abs(num(y[f])! - meanOf(vals))).toBeLessThan(1e-9);
      }
    }
    expect(pglite.year.some((y) => Number(y.dates) < PAIRS)).toBe(true); // a fully clouded date exists
  });

  it('keeps the dense core warmer by day than by night', () => {
    // Invented surface model: dense core 309.5 K by day, 291.5 K by night, so about
    // 18 K apart before weather (derived from DAY_K / NIGHT_K in demo-data/generate.ts).
    const diffs = pglite.date
      .filter((r) => CORE.includes(String(r.district)) && num(r.lst_day_k) !== null && num(r.lst_night_k) !== null)
      .map((r) => num(r.lst_day_k)! - num(r.lst_night_k)!);
    expect(diffs.length).toBeGreaterThanOrEqual(CORE.length * (DATES - 2));
    expect(meanOf(diffs)).toBeGreaterThan(12);
    expect(meanOf(diffs)).toBeLessThan(24);
    // By day the core is warmer than the water districts (the model's ordering; common practice, no source).
    const dayMean = (ids: string[]) => meanOf(pglite.date.filter((r) => ids.includes(String(r.district)) && num(r.suhi_day_k) !== null).map((r) => num(r.suhi_day_k)!));
    expect(dayMean(CORE)).toBeGreaterThan(dayMean(WATER) + 5);
  });

  it('gives values in plausible ranges', () => {
    // Bounds derived from the generator: day 293.5-312 K, night 286.5-293.5 K per surface,
    // plus at most |3 K season| + 4 sigma of a 2 K (day) / 1.2 K (night) weather spell and trend.
    for (const r of pglite.date) {
      const d = num(r.lst_day_k), n = num(r.lst_night_k);
      if (d !== null) { expect(d).toBeGreaterThan(285); expect(d).toBeLessThan(325); }
      if (n !== null) { expect(n).toBeGreaterThan(278); expect(n).toBeLessThan(302); }
      for (const s of [num(r.suhi_day_k), num(r.suhi_night_k)]) if (s !== null) expect(Math.abs(s)).toBeLessThan(20);
      const ati = num(r.ati_per_k);
      // ATI = (1 - a)/dT (Price 1977) with a in 0.05-0.25 and dT above the 0.5 K floor
      // (DEFAULT_DERIVE_OPTIONS.minDifferenceKelvin) and below 40 K: 0.019-1.9 K^-1
      if (ati !== null) { expect(ati).toBeGreaterThan(0.75 / 40); expect(ati).toBeLessThan(0.95 / 0.5); }
      expect([0, 1]).toContain(r.day_scenes);
      expect([0, 1]).toContain(r.night_scenes);
    }
    // Cloud gaps exist in this archive, so both branches (value and null) are exercised.
    expect(pglite.date.some((r) => r.lst_day_k === null)).toBe(true);
    expect(pglite.date.filter((r) => r.lst_day_k !== null).length).toBeGreaterThan(DATES * TARGETS / 2);
  });

  it.skipIf(!hasRasterio)('has district means equal to rasterio + NumPy on every pass (min valid fraction 0.5)', () => {
    const lst = archive.files.filter((f) => /_lst_(day|night)\.tif$/.test(f)).sort();
    const ref = rasterioDistrictMeans(lst, archive.districtsPath);
    const refOf = new Map(ref.map((p) => [`${path.basename(p.scene)}|${p.district}`, p]));
    // Table date = UTC date of the day pass; its night pass is the next LST file (12 h later).
    const days = lst.filter((f) => f.endsWith('_lst_day.tif'));
    let compared = 0, nulls = 0;
    for (const day of days) {
      const night = lst[lst.indexOf(day) + 1];
      expect(night).toMatch(/_lst_night\.tif$/);
      const stamp = path.basename(day).split('_')[1];
      const date = `${stamp.slice(0, 4)}-${stamp.slice(4, 6)}-${stamp.slice(6, 8)}`;
      for (const d of DISTRICTS) {
        const row = pglite.date.find((r) => r.district === d.id && r.date === date);
        expect(row, `${d.id} ${date}`).toBeDefined();
        for (const [file, value] of [[day, row!.lst_day_k], [night, row!.lst_night_k]] as const) {
          const p = refOf.get(`${path.basename(file)}|${d.id}`)!;
          expect(p.pixels).toBeGreaterThan(0);
          if (p.valid / p.pixels >= 0.5) {
            expect(value, `${d.id} ${path.basename(file)}`).toBeTypeOf('number');
            expect(Math.abs((value as number) - p.meanKelvin!)).toBeLessThan(1e-9);
            compared++;
          } else {
            expect(value, `${d.id} ${path.basename(file)} valid ${p.valid}/${p.pixels}`).toBeNull();
            nulls++;
          }
        }
      }
    }
    expect(compared).toBeGreaterThan(DATES * DISTRICTS.length);
    expect(nulls).toBeGreaterThan(0);
  }, 1_200_000);

  it('has SUHI = district LST minus rural LST of the same pass', () => {
    let checked = 0;
    for (const r of pglite.date) {
      const rural = pglite.date.find((x) => x.district === 'rural' && x.date === r.date)!;
      for (const [suhi, t, tr] of [[r.suhi_day_k, r.lst_day_k, rural.lst_day_k], [r.suhi_night_k, r.lst_night_k, rural.lst_night_k]]) {
        if (num(t) !== null && num(tr) !== null) {
          expect(Math.abs(num(suhi)! - (num(t)! - num(tr)!))).toBeLessThan(1e-9);
          checked++;
        } else {
          expect(suhi).toBeNull();
        }
      }
    }
    expect(checked).toBeGreaterThan(DATES * TARGETS);
    expect(pglite.date.filter((r) => r.district === 'rural').every((r) => r.suhi_day_k === null || r.suhi_day_k === 0)).toBe(true);
  });

  it('has ATI that gives back the albedo put into each district', () => {
    // 1 - ATI * (T_day - T_night) = a (Price 1977). The generator's district albedo is the
    // city.ts value plus a texture of at most +-0.012 and 0.002 noise per pixel.
    let checked = 0;
    for (const r of pglite.date) {
      const spec = DISTRICTS.find((d) => d.id === r.district);
      if (!spec || num(r.ati_per_k) === null) continue;
      const albedo = 1 - num(r.ati_per_k)! * (num(r.lst_day_k)! - num(r.lst_night_k)!);
      expect(Math.abs(albedo - spec.albedo), `${r.district} ${r.date}`).toBeLessThan(0.015);
      checked++;
    }
    expect(checked).toBeGreaterThan(DATES * DISTRICTS.length / 2);
  });
});

describe('ingesting the same archive again (embedded, CLI)', () => {
  it('leaves the table byte-identical and the row counts unchanged', async () => {
    const env = cleanEnv();
    const args = ['--data-dir', pgliteDir];
    const before = await cliOk(['table', '--format', 'json', ...args], env);
    const yearBefore = await cliOk(['table', '--level', 'year', '--format', 'json', ...args], env);
    // the CLI prints the same rows rounded to their stated precision (0.0001 K, ATI 6 significant digits)
    expect(JSON.parse(before)).toEqual(JSON.parse(JSON.stringify(roundTableRows(pglite.date))));
    const summary = JSON.parse(await cliOk(['ingest', archiveDir, '--districts', archive.districtsPath, '--json', '--threads', '2', ...args], env, 120_000));
    expect(summary.failures).toEqual([]);
    expect(summary.scenes).toBe(FILES);
    expect(await cliOk(['table', '--format', 'json', ...args], env)).toBe(before);
    expect(await cliOk(['table', '--level', 'year', '--format', 'json', ...args], env)).toBe(yearBefore);
    const again = await tablesOf({ dataDir: pgliteDir });
    expect(again.counts).toEqual(pglite.counts);
    const status = JSON.parse(await cliOk(['status', '--format', 'json', ...args], env));
    expect(status.scenes).toEqual({ registered: 0, processed: FILES, failed: 0, total: FILES });
    expect(status.last_run.id).toBe(2);
    expect(status.last_run.status).toBe('succeeded');
  }, 1_200_000);
});

describe('corrupted and duplicated scenes (embedded, CLI)', () => {
  let corruptDir: string;
  it('records each as failed with a reason naming the file and processes the rest', async () => {
    const badDir = path.join(tmp, 'bad');
    await mkdir(badDir);
    const source = archive.files.find((f) => f.endsWith('_lst_day.tif'))!;
    const truncated = path.join(badDir, 'truncated_lst_day.tif');
    const { size } = await stat(source);
    await writeFile(truncated, (await readFile(source)).subarray(0, Math.floor(size / 2)));
    const noise = path.join(badDir, 'noise.tif');
    await writeFile(noise, randomBytes(20_000));

    const env = cleanEnv();
    corruptDir = path.join(tmp, 'data-corrupt');
    const dataDir = corruptDir;
    const args = ['--data-dir', dataDir];
    const run = await runCli(['ingest', archiveDir, badDir, '--districts', archive.districtsPath, '--json', '--threads', '2', ...args], env, 120_000);
    // not everything asked for was done: exit 2 (bad input) after the summary; the good scenes are stored
    expect(run.code).toBe(2);
    expect(run.stderr).toMatch(/^heatledger: run \d+: 2 scene job\(s\) failed .*the other scenes are stored\n$/);
    const summary = JSON.parse(run.stdout);
    expect(summary.scenes).toBe(FILES + 2);
    expect(summary.failures.map((f: { error: string }) => f.error).sort()).toEqual([
      expect.stringMatching(new RegExp(`^${noise.replaceAll('/', '\\/')}: `)),
      expect.stringMatching(new RegExp(`^${truncated.replaceAll('/', '\\/')}: .*truncated`)),
    ]);

    const status = JSON.parse(await cliOk(['status', '--format', 'json', ...args], env));
    expect(status.scenes).toEqual({ registered: 0, processed: FILES, failed: 2, total: FILES + 2 });
    const failed = [...status.failures].sort((a: { path: string }, b: { path: string }) => a.path.localeCompare(b.path));
    expect(failed.map((f: { path: string }) => f.path)).toEqual([noise, truncated]);
    for (const f of failed) {
      expect(f.error).toContain(path.basename(f.path)); // the reason names the file
      expect(f.error).not.toMatch(/TypeError|RangeError|undefined/);
    }
    expect(failed[1].error).toMatch(/truncat/i);

    // every other scene processed: the table equals the table of the archive without the bad files
    const table = await cliOk(['table', '--format', 'json', ...args], env);
    expect(JSON.parse(table)).toEqual(JSON.parse(JSON.stringify(roundTableRows(pglite.date))));
  }, 1_200_000);

  it('treats a byte-identical copy of a scene under another name as the same scene', async () => {
    // Archives often hold the same file twice (re-downloads, copies); the content hash
    // makes them one scene (common practice, no source). Reuses the store of the test above.
    expect(corruptDir).toBeDefined();
    const dupDir = path.join(tmp, 'dup');
    await mkdir(dupDir);
    await copyFile(archive.files[1], path.join(dupDir, 'copy_of_second.tif'));
    const env = cleanEnv();
    const args = ['--data-dir', corruptDir];
    const before = await cliOk(['table', '--format', 'json', ...args], env);
    const r = await runCli(['ingest', archiveDir, dupDir, '--districts', archive.districtsPath, '--json', '--threads', '2', ...args], env, 120_000);
    expect(r.stderr).not.toMatch(/appears twice/);
    expect(r.code).toBe(0);
    expect(JSON.parse(r.stdout).failures).toEqual([]);
    expect(await cliOk(['table', '--format', 'json', ...args], env)).toBe(before);
    const status = JSON.parse(await cliOk(['status', '--format', 'json', ...args], env));
    expect(status.scenes.total).toBe(FILES + 2); // 14 good + 2 failed; the copy adds none
  }, 1_200_000);
});

describe.skipIf(!pgUp)('embedded runner on the PostgreSQL server', () => {
  let db: TempDatabase | undefined;
  afterAll(async () => { await db?.drop(); });

  it('gives a table identical to PGlite, to the last digit', async () => {
    db = await createTempDatabase('emb');
    const config = runtimeConfig({}, { DATABASE_URL: db.url });
    expect(config.mode).toBe('embedded');
    const summary = await runPipeline({ inputs: [archiveDir], districtsPath: archive.districtsPath, threads: 2 }, config);
    expect(summary.failures).toEqual([]);
    const server = await tablesOf({ databaseUrl: db.url });
    expect(server.counts).toEqual(pglite.counts);
    expect(server.date).toEqual(pglite.date);
    expect(server.year).toEqual(pglite.year);
    // and through the CLI, byte for byte
    const env = cleanEnv({ DATABASE_URL: db.url });
    const fromServer = await cliOk(['table', '--format', 'json'], env);
    const fromPglite = await cliOk(['table', '--format', 'json', '--data-dir', pgliteDir], cleanEnv());
    expect(fromServer).toBe(fromPglite);
  }, 1_200_000);
});
