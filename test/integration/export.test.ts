/**
 * `heatledger export` read back by readers that are not ours, and compared
 * with the database to the stated precision (README.md, `table`: 0.0001 K,
 * ATI 6 significant digits):
 * - CSV by csv-parse (npm, an RFC 4180 parser);
 * - Parquet by DuckDB's own Parquet reader (@duckdb/node-api), with its column types;
 * - GeoJSON by @turf/turf (area, winding, bounding box).
 * The reference values are read from the stored derived rows with SQL of this
 * test (plain averages over derived_metrics), not through the export's queries.
 * Store: a small generated archive of the invented city (5 summers, 2 day/night
 * pairs each), ingested embedded, its rural ring cut by the city's water polygons
 * kept in a folder whose name holds blanks. No sidecar names a folder of this
 * machine (project rule, no source: files handed on are named by their names alone).
 */
import { createHash } from 'node:crypto';
import { existsSync, mkdirSync, mkdtempSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { parse as parseCsv } from 'csv-parse/sync';
import * as turf from '@turf/turf';
import { DuckDBInstance, type DuckDBConnection } from '@duckdb/node-api';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { openStore } from '../../workers/store/store.js';
import { writeWaterGeoJson } from '../../demo-data/city.js';
import { cleanEnv, cliOk, ensurePipelineBuild, killAllChildren, makeArchive, repoRoot, runCli } from '../support/pipeline-harness.js';

await ensurePipelineBuild();

const tmp = mkdtempSync(path.join(tmpdir(), 'heatledger-export-'));
const archiveDir = path.join(tmp, 'archive');
const dataDir = path.join(tmp, 'store');
const out = (name: string) => path.join(tmp, name);
const waterPath = path.join(tmp, 'server side', 'sea and river.geojson');
const VERSION = JSON.parse(readFileSync(path.join(repoRoot, 'package.json'), 'utf8')).version as string;
const KELVIN = ['lst_day_k', 'lst_night_k', 'suhi_day_k', 'suhi_night_k'];

interface Ref { [key: string]: number | string | null }
let dateRef = new Map<string, Ref>();
let sceneRef = new Map<string, Ref>();
let usedHashes: string[] = [];
let duck: DuckDBConnection;
let ingestStderr = '';

beforeAll(async () => {
  await makeArchive(archiveDir, { years: 5, pairsPerYear: 2, pixelSizeMetres: 500 });
  await writeWaterGeoJson(waterPath, 12000);
  // with progress (the default): standard error is a pipe here, not a terminal
  const ingest = await runCli(['ingest', archiveDir, '--districts', path.join(archiveDir, 'corvenmouth_districts.geojson'), '--water', waterPath, '--data-dir', dataDir, '--threads', '1'], cleanEnv(), 300_000);
  if (ingest.code !== 0) throw new Error(`ingest exited ${ingest.code}: ${ingest.stderr.slice(0, 2000)}`);
  ingestStderr = ingest.stderr;
  const run = (args: string[]) => cliOk(['export', ...args, '--data-dir', dataDir], cleanEnv());
  await run(['--format', 'csv', '--level', 'date', '--out', out('date.csv')]);
  await run(['--format', 'csv', '--level', 'year', '--out', out('year.csv')]);
  await run(['--format', 'csv', '--level', 'scene', '--out', out('scene.csv')]);
  await run(['--format', 'parquet', '--level', 'date', '--out', out('date.parquet')]);
  await run(['--format', 'parquet', '--level', 'scene', '--out', out('scene.parquet')]);
  await run(['--format', 'csv', '--level', 'year', '--metric', 'suhi_night', '--from', '2020', '--to', '2021', '--out', out('part.csv')]);
  await run(['--format', 'geojson', '--min-dates', '1', '--out', out('districts.geojson')]);

  // Reference values straight from the stored derived rows (every pair weighs the same within a date).
  const store = await openStore({ dataDir, readOnly: true });
  try {
    const daily = await store.query<Ref>(
      `SELECT district_id, obs_date::text AS date, avg(t_day_k) AS lst_day_k, avg(t_night_k) AS lst_night_k,
              avg(suhi_day_k) AS suhi_day_k, avg(suhi_night_k) AS suhi_night_k, avg(ati_per_k) AS ati_per_k
       FROM derived_metrics GROUP BY district_id, obs_date`);
    dateRef = new Map(daily.map((r) => [`${r.district_id}|${r.date}`, r]));
    const day = await store.query<Ref>(
      `SELECT m.district_id, s.content_hash, m.t_day_k AS lst_day_k, m.suhi_day_k, m.ati_per_k
       FROM derived_metrics m JOIN scenes s ON s.id = m.day_scene_id`);
    const night = await store.query<Ref>(
      `SELECT DISTINCT m.district_id, s.content_hash, m.t_night_k AS lst_night_k, m.suhi_night_k
       FROM derived_metrics m JOIN scenes s ON s.id = m.night_scene_id`);
    sceneRef = new Map([...day, ...night].map((r) => [`${r.district_id}|${r.content_hash}`, r]));
    usedHashes = (await store.query<{ h: string }>(
      `SELECT DISTINCT s.content_hash AS h FROM derived_metrics m
       JOIN scenes s ON s.id IN (m.day_scene_id, m.night_scene_id, m.albedo_scene_id) ORDER BY 1`)).map((r) => r.h);
  } finally {
    await store.close();
  }
  duck = await (await DuckDBInstance.create(':memory:')).connect();
}, 600_000);

afterAll(async () => {
  await killAllChildren();
  duck?.closeSync();
  rmSync(tmp, { recursive: true, force: true });
});

/** Digits after the decimal point of a printed number. */
const decimals = (text: string) => (text.includes('.') ? text.split('.')[1].length : 0);
/** Significant digits of a printed number (no exponent expected here). */
const significant = (text: string) => text.replace(/^-/, '').replace('.', '').replace(/^0+/, '').length;

/** |exported − stored| within half a unit of the last stated digit (rounding to the stated precision: common practice, no source). */
function expectKelvin(exported: number | null, stored: number | null) {
  if (stored === null) return expect(exported).toBeNull();
  expect(exported).not.toBeNull();
  expect(Math.abs((exported as number) - stored)).toBeLessThanOrEqual(0.00005 + 1e-9);
}
function expectAti(exported: number | null, stored: number | null) {
  if (stored === null) return expect(exported).toBeNull();
  expect(exported).not.toBeNull();
  const halfUnit = 0.5 * 10 ** (Math.floor(Math.log10(Math.abs(stored))) - 5);
  expect(Math.abs((exported as number) - stored)).toBeLessThanOrEqual(halfUnit * (1 + 1e-9));
}
const cellNumber = (s: string): number | null => (s === '' ? null : Number(s));

function readCsvFile(name: string): Record<string, string>[] {
  return parseCsv(readFileSync(out(name), 'utf8'), { columns: true, skip_empty_lines: true }) as Record<string, string>[];
}

describe('ingest progress without a terminal', () => {
  it('plain lines of scenes done, ending with every scene, and no bar or control characters', () => {
    const lines = ingestStderr.split('\n').filter((l) => l.startsWith('scenes: '));
    expect(lines.length).toBeGreaterThanOrEqual(2);
    for (const l of lines) expect(l).toMatch(/^scenes: \d+\/25 done \(\d+ %\), failed 0, \d+\.\d scenes\/s$/);
    const done = lines.map((l) => Number(/: (\d+)\//.exec(l)![1]));
    expect([...done].sort((a, b) => a - b)).toEqual(done);
    expect(done.at(-1)).toBe(25);
    expect(ingestStderr).not.toMatch(/[\r\u001b\u2591\u2588]/);
  });
});

describe('CSV, read by csv-parse', () => {
  it('date level: one row per district and date, units in the headers, equal to the stored rows to 0.0001 K and 6 significant digits', () => {
    const rows = readCsvFile('date.csv');
    expect(Object.keys(rows[0])).toEqual(['district', 'name', 'date', 'lst_day_k', 'lst_night_k', 'suhi_day_k', 'suhi_night_k', 'ati_per_k', 'day_scenes', 'night_scenes']);
    expect(rows.length).toBe(dateRef.size);
    expect(new Set(rows.map((r) => `${r.district}|${r.date}`)).size).toBe(rows.length);
    for (const r of rows) {
      const ref = dateRef.get(`${r.district}|${r.date}`)!;
      expect(ref).toBeDefined();
      for (const k of KELVIN) {
        expect(decimals(r[k])).toBeLessThanOrEqual(4);
        expectKelvin(cellNumber(r[k]), ref[k] as number | null);
      }
      expect(significant(r.ati_per_k)).toBeLessThanOrEqual(6);
      expectAti(cellNumber(r.ati_per_k), ref.ati_per_k as number | null);
    }
  });

  it('year level: the mean of the year\'s dates, and --metric/--from/--to keep only what was asked', () => {
    const rows = readCsvFile('year.csv');
    const byYear = new Map<string, number[]>();
    for (const [key, ref] of dateRef) {
      const [district, date] = key.split('|');
      if (ref.suhi_night_k === null) continue;
      const k = `${district}|${date.slice(0, 4)}`;
      byYear.set(k, [...(byYear.get(k) ?? []), ref.suhi_night_k as number]);
    }
    let compared = 0;
    for (const r of rows) {
      const v = byYear.get(`${r.district}|${r.year}`);
      if (!v) { expect(r.suhi_night_k).toBe(''); continue; }
      expectKelvin(cellNumber(r.suhi_night_k), v.reduce((s, x) => s + x, 0) / v.length);
      compared++;
    }
    expect(compared).toBeGreaterThan(50);
    const part = readCsvFile('part.csv');
    expect(Object.keys(part[0])).toEqual(['district', 'name', 'year', 'dates', 'suhi_night_k', 'day_scenes', 'night_scenes']);
    expect([...new Set(part.map((r) => r.year))].sort()).toEqual(['2020', '2021']);
    expect(part).toEqual(rows.filter((r) => r.year === '2020' || r.year === '2021').map((r) => ({
      district: r.district, name: r.name, year: r.year, dates: r.dates, suhi_night_k: r.suhi_night_k, day_scenes: r.day_scenes, night_scenes: r.night_scenes,
    })));
  });

  it('scene level: one row per district and pass with its scene hash, equal to the stored pass values', () => {
    const rows = readCsvFile('scene.csv');
    expect(rows.length).toBe(sceneRef.size);
    for (const r of rows) {
      expect(r.scene_hash).toMatch(/^[0-9a-f]{64}$/);
      expect(r.acquired_at).toMatch(/^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\.\d{3}Z$/);
      const ref = sceneRef.get(`${r.district}|${r.scene_hash}`)!;
      if (r.pass === 'day') {
        expectKelvin(cellNumber(r.lst_day_k), ref.lst_day_k as number | null);
        expectKelvin(cellNumber(r.suhi_day_k), ref.suhi_day_k as number | null);
        expectAti(cellNumber(r.ati_per_k), ref.ati_per_k as number | null);
        expect(r.lst_night_k).toBe('');
      } else {
        expect(r.pass).toBe('night');
        expectKelvin(cellNumber(r.lst_night_k), ref.lst_night_k as number | null);
        expectKelvin(cellNumber(r.suhi_night_k), ref.suhi_night_k as number | null);
        expect(r.lst_day_k).toBe('');
      }
    }
  });
});

describe('Parquet, read by DuckDB', () => {
  it('typed columns: text, DATE, INTEGER counts, DOUBLE values, UTC timestamps', async () => {
    const types = async (file: string) => Object.fromEntries((await duck.runAndReadAll(`DESCRIBE SELECT * FROM read_parquet('${out(file)}')`))
      .getRowObjectsJson().map((r) => [r.column_name, r.column_type]));
    expect(await types('date.parquet')).toEqual({
      district: 'VARCHAR', name: 'VARCHAR', date: 'DATE', lst_day_k: 'DOUBLE', lst_night_k: 'DOUBLE', suhi_day_k: 'DOUBLE',
      suhi_night_k: 'DOUBLE', ati_per_k: 'DOUBLE', day_scenes: 'INTEGER', night_scenes: 'INTEGER',
    });
    expect((await types('scene.parquet')).acquired_at).toBe('TIMESTAMP WITH TIME ZONE');
  });

  it('the same rows and numbers as the stored values, to the stated precision, and as the CSV', async () => {
    const rows = (await duck.runAndReadAll(`SELECT district, strftime(date, '%Y-%m-%d') AS date, lst_day_k, lst_night_k, suhi_day_k, suhi_night_k, ati_per_k, day_scenes, night_scenes
      FROM read_parquet('${out('date.parquet')}')`)).getRowObjectsJson() as Record<string, number | string | null>[];
    expect(rows.length).toBe(dateRef.size);
    const csv = new Map(readCsvFile('date.csv').map((r) => [`${r.district}|${r.date}`, r]));
    for (const r of rows) {
      const ref = dateRef.get(`${r.district}|${r.date}`)!;
      for (const k of KELVIN) {
        expectKelvin(r[k] as number | null, ref[k] as number | null);
        expect(r[k]).toBe(cellNumber(csv.get(`${r.district}|${r.date}`)![k]));
      }
      expectAti(r.ati_per_k as number | null, ref.ati_per_k as number | null);
    }
    const scenes = (await duck.runAndReadAll(`SELECT count(*)::INTEGER AS n, count(DISTINCT scene_hash)::INTEGER AS h,
      min(epoch_ms(acquired_at)) AS first FROM read_parquet('${out('scene.parquet')}')`)).getRowObjectsJson()[0];
    expect(scenes.n).toBe(sceneRef.size);
    const firstCsv = readCsvFile('scene.csv').map((r) => Date.parse(r.acquired_at)).reduce((a, b) => Math.min(a, b));
    expect(Number(scenes.first)).toBe(firstCsv);
  });
});

describe('GeoJSON, read by @turf/turf', () => {
  it('one feature per district in lon/lat, outer rings counter-clockwise (RFC 7946 §3.1.6), area_m2 close to turf\'s spherical area', () => {
    const fc = JSON.parse(readFileSync(out('districts.geojson'), 'utf8')) as GeoJSON.FeatureCollection<GeoJSON.Polygon | GeoJSON.MultiPolygon>;
    expect(fc.features.map((f) => f.properties!.id)).toEqual(Array.from({ length: 17 }, (_, i) => `D${String(i + 1).padStart(2, '0')}`));
    const [minX, minY, maxX, maxY] = turf.bbox(fc);
    expect(minX).toBeGreaterThanOrEqual(-180);
    expect(maxX).toBeLessThanOrEqual(180);
    expect(minY).toBeGreaterThanOrEqual(-90);
    expect(maxY).toBeLessThanOrEqual(90);
    for (const f of fc.features) {
      const polygons = f.geometry.type === 'Polygon' ? [f.geometry.coordinates] : f.geometry.coordinates;
      for (const p of polygons) expect(turf.booleanClockwise(p[0])).toBe(false);
      // turf's area is on a sphere of radius 6 371 008.8 m; an ellipsoidal area differs by well under 1 % (common practice, no source)
      expect(Math.abs(turf.area(f) - (f.properties!.area_m2 as number)) / turf.area(f)).toBeLessThan(0.01);
    }
  });

  it('area_m2 is given to 0.1 m²', () => {
    const fc = JSON.parse(readFileSync(out('districts.geojson'), 'utf8')) as GeoJSON.FeatureCollection;
    for (const f of fc.features) {
      const a = f.properties!.area_m2 as number;
      expect(Number(a.toFixed(1))).toBe(a);
    }
  });

  it('yearly values equal the stored yearly means and trends equal `heatledger trend` for the same years', async () => {
    const fc = JSON.parse(readFileSync(out('districts.geojson'), 'utf8')) as GeoJSON.FeatureCollection;
    const trend = JSON.parse(await cliOk(['trend', '--metric', 'suhi_night', '--min-dates', '1', '--format', 'json', '--data-dir', dataDir], cleanEnv())) as Record<string, number | string | null>[];
    let compared = 0;
    for (const f of fc.features) {
      const p = f.properties!;
      for (let year = 2019; year <= 2023; year++) {
        const values = [...dateRef.entries()].filter(([k, r]) => k.startsWith(`${p.id}|${year}-`) && r.suhi_night_k !== null).map(([, r]) => r.suhi_night_k as number);
        if (values.length === 0) { expect(p[`suhi_night_${year}_k`]).toBeNull(); continue; }
        expectKelvin(p[`suhi_night_${year}_k`], values.reduce((s, x) => s + x, 0) / values.length);
        compared++;
      }
      const t = trend.find((r) => r.district === p.id)!;
      expect(p.suhi_night_trend_years).toBe(t.n);
      expect(p.suhi_night_slope_k_per_decade).toBe(t.slope_per_decade);
      // trend prints the interval per year to 0.0001 K, so ten times it is within 0.0005 K of the exported per-decade bound (0.0001 K)
      if (t.slope_ci_lower === null) expect(p.suhi_night_slope_ci_lower_k_per_decade).toBeNull();
      else expect(Math.abs((p.suhi_night_slope_ci_lower_k_per_decade as number) - (t.slope_ci_lower as number) * 10)).toBeLessThanOrEqual(0.00055);
      expect(p.suhi_night_trend_p).toBe(t.p);
      expect(p.suhi_night_trend_q).toBe(t.q);
      expect(p.suhi_night_trend).toBe(t.direction);
    }
    expect(compared).toBeGreaterThan(50);
  });
});

describe('numbers at the stated precision in the GeoJSON', () => {
  it('temperatures and slopes to 0.0001 K, ATI to 6 significant digits, p and q to 6 significant digits', () => {
    const fc = JSON.parse(readFileSync(out('districts.geojson'), 'utf8')) as GeoJSON.FeatureCollection;
    let checked = 0;
    for (const f of fc.features) {
      for (const [k, v] of Object.entries(f.properties!)) {
        if (typeof v !== 'number') continue;
        // the fewest decimals / significant digits that give back the same double
        const fewestDecimals = Array.from({ length: 21 }, (_, d) => d).find((d) => Number(v.toFixed(d)) === v) ?? 21;
        const fewestSignificant = Array.from({ length: 21 }, (_, d) => d + 1).find((d) => Number(v.toPrecision(d)) === v) ?? 22;
        if (/_per_k$/.test(k) || /_trend_[pq]$/.test(k)) expect(fewestSignificant, `${k} = ${v}`).toBeLessThanOrEqual(6);
        else if (/_per_k_per_decade$/.test(k)) expect(fewestDecimals, `${k} = ${v}`).toBeLessThanOrEqual(8);
        else if (/_k(_per_decade)?$/.test(k)) expect(fewestDecimals, `${k} = ${v}`).toBeLessThanOrEqual(4);
        checked++;
      }
    }
    expect(checked).toBeGreaterThan(17 * 30);
  });
});

describe('the demo\'s exports', () => {
  it('writes the four exports and their sidecars into the folder it is given, and names each file', async () => {
    const { demoOutputLines, writeDemoExports } = await import('../../workers/commands/demo.js');
    const folder = out('heatledger-output');
    mkdirSync(folder);
    const store = await openStore({ dataDir, readOnly: true });
    let outputs: Awaited<ReturnType<typeof writeDemoExports>>;
    try {
      outputs = await writeDemoExports(store, folder);
    } finally {
      await store.close();
    }
    const names = ['district-table-by-date.csv', 'district-table-by-year.csv', 'district-table-by-scene.parquet', 'districts.geojson'];
    expect(readdirSync(folder).sort()).toEqual(names.flatMap((n) => [n, `${n}.json`]).sort());
    const lines = demoOutputLines(outputs, folder);
    expect(lines[0]).toBe(`Files written into ${folder}:`);
    for (const n of names) {
      expect(lines.some((l) => l.startsWith(`  ${n} `))).toBe(true);
      expect(lines.some((l) => l.startsWith(`  ${n}.json `))).toBe(true);
    }
    // the same table as the export command gives
    expect(readFileSync(path.join(folder, 'district-table-by-year.csv'), 'utf8')).toBe(readFileSync(out('year.csv'), 'utf8'));
  });
});

describe('sidecar PATH.json', () => {
  it('names the version, the options, the file\'s hash, the runs and the scene hashes behind the values', () => {
    const side = JSON.parse(readFileSync(out('date.csv.json'), 'utf8'));
    expect(side.version).toBe(VERSION);
    expect(side.parameters).toEqual({ format: 'csv', level: 'date', metrics: ['lst_day', 'lst_night', 'suhi_day', 'suhi_night', 'ati'], from: null, to: null });
    // SHA-256 by Node's crypto (OpenSSL) of the bytes written
    expect(side.sha256).toBe(createHash('sha256').update(readFileSync(out('date.csv'))).digest('hex'));
    expect(side.runs.length).toBe(1);
    expect(side.runs[0].software_version).toBe(VERSION);
    expect(side.runs[0].parameters).toBeTypeOf('object');
    const hashes = side.scenes.map((s: { content_hash: string }) => s.content_hash).sort();
    expect(hashes).toEqual(usedHashes);
    // every hash is the SHA-256 of a file of the archive
    const archiveHashes = new Set(readdirSync(archiveDir).filter((f) => f.endsWith('.tif'))
      .map((f) => createHash('sha256').update(readFileSync(path.join(archiveDir, f))).digest('hex')));
    for (const h of hashes) expect(archiveHashes.has(h)).toBe(true);
    expect(side.caution).toMatch(/not (the )?air temperature/i);
  });

  it('names files by their names alone: no folder of this machine in any sidecar, the water file in the run\'s rural reference', () => {
    const sidecars = readdirSync(tmp).filter((f) => f.endsWith('.json'));
    expect(sidecars.length).toBeGreaterThanOrEqual(7);
    for (const f of sidecars) {
      const text = readFileSync(path.join(tmp, f), 'utf8');
      expect(text, f).not.toContain(tmp);
      expect(text, f).not.toContain('server side');
    }
    const side = JSON.parse(readFileSync(out('districts.geojson.json'), 'utf8'));
    expect(side.runs[0].parameters.rural_reference.description).toBe('ring 2000-10000 m outside the union of the districts, water from sea and river.geojson excluded');
    expect(side.runs[0].parameters.district_ids.length).toBe(17);
  });

  it('a --from/--to export names only the scenes of those years', () => {
    const side = JSON.parse(readFileSync(out('part.csv.json'), 'utf8'));
    expect(side.scenes.length).toBeGreaterThan(0);
    expect(side.scenes.length).toBeLessThan(usedHashes.length);
    for (const s of side.scenes) expect(['2020', '2021']).toContain(String(s.acquired_at).slice(0, 4));
  });
});

describe('bad requests: one clear line, exit 2, nothing written', () => {
  const refused = async (args: string[], message: RegExp, file: string) => {
    const r = await runCli(['export', ...args, '--out', file, '--data-dir', dataDir], cleanEnv());
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(message);
    expect(r.stderr.trim().split('\n')).toHaveLength(1);
    expect(existsSync(file)).toBe(false);
    expect(existsSync(`${file}.json`)).toBe(false);
  };
  it('an --out folder that does not exist', () => refused(['--format', 'csv'], /--out .*the folder .*no-such-folder does not exist/, out('no-such-folder/t.csv')));
  it('an unknown metric', () => refused(['--format', 'csv', '--metric', 'suhi_nigth'], /--metric "suhi_nigth" is not a metric; choose from lst_day, lst_night, suhi_day, suhi_night, ati/, out('m.csv')));
  it('--from after --to', () => refused(['--format', 'parquet', '--from', '2023', '--to', '2020'], /--from 2023 is after --to 2020/, out('r.parquet')));
  it('GeoJSON at date level', () => refused(['--format', 'geojson', '--level', 'date'], /--level date: the GeoJSON holds one feature per district/, out('g.geojson')));
});
