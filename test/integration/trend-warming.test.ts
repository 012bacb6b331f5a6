/**
 * The built-in warming is found: a small generated archive of the invented
 * city (8 summers, one day/night pair each) where Merrowin Vale (D16) warms
 * by a known 0.6 K a year and no other district warms is ingested embedded,
 * then `heatledger trend` must report D16's rise (the true slope inside the
 * slope interval, significant after Benjamini–Hochberg) and no significant
 * trend for the flat districts. The same archive in a PostgreSQL server
 * database (when reachable) must give the same JSON byte for byte, so the
 * named query runs alike on PostgreSQL 15 and PGlite.
 *
 * Truth: the generator adds trendKelvinPerYear × years to every pixel of the
 * district (demo-data/generate.ts); the rural reference does not warm, so
 * night SUHI rises by the same slope.
 */
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { cleanEnv, cliOk, createTempDatabase, ensurePipelineBuild, killAllChildren, makeArchive, runCli, type TempDatabase } from '../support/pipeline-harness.js';
import { serviceAvailable } from '../support/services.js';

await ensurePipelineBuild();
const pgAvailable = await serviceAvailable('postgres', 'trend-warming.test.ts (PostgreSQL server)');

const TRUE_SLOPE_K_PER_YEAR = 0.6;
const tmp = mkdtempSync(path.join(tmpdir(), 'heatledger-trend-'));
const dataDir = path.join(tmp, 'store');
let districtsPath = '';
let db: TempDatabase | null = null;

beforeAll(async () => {
  const archive = await makeArchive(path.join(tmp, 'archive'), {
    years: 8, pairsPerYear: 1, pixelSizeMetres: 500, trendsKelvinPerYear: { D16: TRUE_SLOPE_K_PER_YEAR },
  });
  districtsPath = archive.districtsPath;
  await cliOk(['ingest', path.join(tmp, 'archive'), '--districts', districtsPath, '--data-dir', dataDir, '--no-progress', '--threads', '1'], cleanEnv(), 150_000);
}, 180_000);

afterAll(async () => {
  await killAllChildren();
  if (db) await db.drop();
  rmSync(tmp, { recursive: true, force: true });
});

interface TrendRow {
  district: string; n: number; p: number | null; q: number | null; slope_per_year: number | null;
  slope_ci_lower: number | null; slope_ci_upper: number | null; direction: string | null; direction_raw: string | null;
  years_used: string; dates_per_year: string;
}

describe('trend finds the built-in warming', () => {
  let rows: TrendRow[] = [];
  let json = '';
  it('trend --metric suhi_night over every district', async () => {
    json = await cliOk(['trend', '--metric', 'suhi_night', '--min-dates', '1', '--format', 'json', '--data-dir', dataDir], cleanEnv());
    rows = JSON.parse(json) as TrendRow[];
    expect(rows.map((r) => r.district)).toEqual(Array.from({ length: 17 }, (_, i) => `D${String(i + 1).padStart(2, '0')}`));
    // A cloudy pass can cost a district a year (valid fraction below 0.5): at most 8 years, never more.
    expect(rows.every((r) => r.n >= 1 && r.n <= 8)).toBe(true);
    expect(rows.find((r) => r.district === 'D16')!.years_used).toBe('2019-2026');
  });

  it('the warming district rises significantly after FDR, with the true slope inside its interval', () => {
    const d16 = rows.find((r) => r.district === 'D16')!;
    expect(d16.direction).toBe('increasing');
    expect(d16.q).not.toBeNull();
    expect(d16.q as number).toBeLessThanOrEqual(0.05);
    expect(d16.slope_ci_lower as number).toBeLessThanOrEqual(TRUE_SLOPE_K_PER_YEAR);
    expect(d16.slope_ci_upper as number).toBeGreaterThanOrEqual(TRUE_SLOPE_K_PER_YEAR);
    expect(d16.dates_per_year).toBe('2019:1,2020:1,2021:1,2022:1,2023:1,2024:1,2025:1,2026:1');
  });

  it('a flat district (Larchholt, D12) shows no significant trend after FDR, and none of the flat ones does', () => {
    expect(rows.find((r) => r.district === 'D12')!.direction).toBe('none');
    expect(rows.filter((r) => r.district !== 'D16' && r.direction !== 'none')).toEqual([]);
  });

  it('years below --min-dates are left out with a note and the fields stay null (n = 3, short ranges: unit tests)', async () => {
    const few = JSON.parse(await cliOk(['trend', '--metric', 'suhi_night', '--district', 'D16', '--min-dates', '2', '--format', 'json', '--data-dir', dataDir], cleanEnv())) as (TrendRow & { note: string })[];
    expect(few[0].n).toBe(0);
    expect(few[0].slope_per_year).toBeNull();
    expect(few[0].note).toMatch(/left out for fewer than 2 dates: 2019 \(1\)/);
  });

  it('hotspots --year gives Gi* per district and Moran\'s I; bad options exit 2 with a message', async () => {
    const out = JSON.parse(await cliOk(['hotspots', '--metric', 'suhi_night', '--year', '2026', '--min-dates', '1', '--format', 'json', '--data-dir', dataDir], cleanEnv()));
    expect(out.districts).toHaveLength(17);
    expect(out.moran_i.expected).toBeCloseTo(-1 / 16, 6); // E[I] = −1/(n − 1) (Moran 1950)
    const bad = await runCli(['trend', '--metric', 'suhi_nite', '--data-dir', dataDir], cleanEnv());
    expect(bad.code).toBe(2);
    expect(bad.stderr).toMatch(/--metric must be one of lst_day, lst_night, suhi_day, suhi_night, ati, got "suhi_nite"/);
    // k outside 1..n−1 is refused by the weights module (unit test hotspot-stats).
  });

  it.skipIf(!pgAvailable)('the same archive in a PostgreSQL server gives the same trend JSON', async () => {
    db = await createTempDatabase('trend');
    const env = cleanEnv({ DATABASE_URL: db.url });
    await cliOk(['ingest', path.join(tmp, 'archive'), '--districts', districtsPath, '--no-progress', '--threads', '1'], env, 150_000);
    const fromServer = await cliOk(['trend', '--metric', 'suhi_night', '--min-dates', '1', '--format', 'json'], env);
    expect(fromServer).toBe(json);
  }, 180_000);
});

describe('trend --series: one series from a file', () => {
  it('a year file with a missing year gives the documented JSON fields', async () => {
    const file = path.join(tmp, 'series.csv');
    writeFileSync(file, 'year,value\n2015,1.2\n2016,NA\n2017,1.5\n2018,1.4\n2019,\n2020,1.9\n2021,2.2\n');
    const r = JSON.parse(await cliOk(['trend', '--series', file, '--format', 'json', '--serial-correction', 'hamed-rao'], cleanEnv()));
    expect(Object.keys(r)).toEqual([
      'n', 's', 'var_s', 'z', 'p', 'tau', 'slope_per_year', 'slope_per_decade', 'slope_ci_lower', 'slope_ci_upper', 'direction',
      'z_corrected', 'p_corrected', 'years_used', 'dates_per_year', 'note',
    ]);
    // 5 years with values: S counted by hand = 8 (one decrease, 1.5 → 1.4); Var = 5·4·15/18 (Gilbert 1987 eq. 16.4)
    expect(r).toMatchObject({ n: 5, s: 8, var_s: 16.6667, years_used: '2015,2017-2018,2020-2021' });
  });

  it('bad files exit 2 with the file name and the problem', async () => {
    const missing = await runCli(['trend', '--series', path.join(tmp, 'nope.csv')], cleanEnv());
    expect(missing.code).toBe(2);
    expect(missing.stderr).toContain('nope.csv: cannot read the series file');
    const bad = path.join(tmp, 'bad.csv');
    writeFileSync(bad, 'year,value\n2019,warm\n');
    const r = await runCli(['trend', '--series', bad], cleanEnv());
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('bad.csv: line 2: value "warm" is not a number');
  });
});
