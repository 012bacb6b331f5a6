/**
 * Units and names in every output: the district table's fields carry their
 * unit in JSON, CSV and the terminal table (CLI and API); CSV and JSON numbers
 * are rounded to the stated precision; `status --format csv` is one CSV table;
 * `zonal` states the unit of its statistics once, from the raster's metadata.
 *
 * Outside references: Python's csv module (RFC 4180 reader) and its decimal
 * formatting (`.4f`, `.6g`); GDAL's Python bindings for a raster's scale and
 * offset and to write the albedo and plain-integer rasters; the GDAL/rasterio +
 * NumPy statistics in test/fixtures/reference/expected_a_centre.json.
 * The field names and precisions themselves are the documented contract
 * (README.md, `table` and `zonal`).
 */
import { execFile, execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildApp } from '../../api/app.js';
import { openStore } from '../../workers/store/store.js';
import { replaceDerived, upsertDistricts } from '../../workers/store/index.js';
import { seedHeatStore } from '../support/heat-store.js';
import { cleanEnv, cliPath, ensurePipelineBuild, repoRoot, runCli } from '../support/pipeline-harness.js';
import { pythonModulesAvailable } from '../support/services.js';

const PYTHON = '/usr/bin/python3';
const FIX = path.join(repoRoot, 'test/fixtures/reference');
const hasGdal = await pythonModulesAvailable(['osgeo.gdal', 'numpy'], 'output-units zonal unit check');

/** Field names of the district table with their units (README.md, `table`). */
const DATE_FIELDS = ['district', 'name', 'date', 'lst_day_k', 'lst_night_k', 'suhi_day_k', 'suhi_night_k', 'ati_per_k', 'day_scenes', 'night_scenes'];
const YEAR_FIELDS = ['district', 'name', 'year', 'dates', 'lst_day_k', 'lst_night_k', 'suhi_day_k', 'suhi_night_k', 'ati_per_k', 'day_scenes', 'night_scenes'];
const KELVIN_FIELDS = ['lst_day_k', 'lst_night_k', 'suhi_day_k', 'suhi_night_k'];
const ZONAL_FIELDS = ['district', 'pixels', 'valid', 'valid_fraction', 'mean', 'std', 'min', 'max', 'median', 'p10', 'p90'];

/** A day mean with float noise of the kind a mean of scaled integers leaves. */
const NOISY_DAY_K = 312.74024810000003;
const MILL = { tDay: NOISY_DAY_K, tNight: 290.1, albedo: 0.137 };
// the derived values as the store holds them: SUHI = T - T_rural (rural 305 K by day, 289 K by night,
// test/support/heat-store.ts); ATI = (1 - a) / (T_day - T_night) (Price 1977)
const MILL_RAW = {
  lst_day_k: MILL.tDay, lst_night_k: MILL.tNight, suhi_day_k: MILL.tDay - 305, suhi_night_k: MILL.tNight - 289,
  ati_per_k: (1 - MILL.albedo) / (MILL.tDay - MILL.tNight),
};

/** Python's csv module (an RFC 4180 reader). */
function readCsv(text: string): string[][] {
  return JSON.parse(execFileSync(PYTHON, ['-c', 'import csv, io, json, sys; print(json.dumps(list(csv.reader(io.StringIO(sys.stdin.read(), newline="")))))'], { input: text, encoding: 'utf8' }));
}

/** Python's decimal formatting of each value with a format spec (".4f", ".6g"). */
function pythonFormat(values: Record<string, number>, spec: string): Record<string, number> {
  return JSON.parse(execFileSync(PYTHON, ['-c', 'import json, sys; print(json.dumps({k: float(format(v, sys.argv[2])) for k, v in json.loads(sys.argv[1]).items()}))', JSON.stringify(values), spec], { encoding: 'utf8' }));
}

/** Digits after the decimal point of a printed number (no exponent expected here). */
const decimals = (text: string) => (text.includes('.') ? text.split('.')[1].length : 0);
/** Significant digits of a printed number. */
const significant = (text: string) => text.replace(/^-/, '').replace(/e.*$/i, '').replace('.', '').replace(/^0+/, '').length;

let tmp: string;
let dataDir: string;
const env = () => cleanEnv();

beforeAll(async () => {
  await ensurePipelineBuild();
  tmp = mkdtempSync(path.join(tmpdir(), 'heatledger-units-'));
  dataDir = path.join(tmp, 'store');
  const store = await openStore({ dataDir });
  try {
    await seedHeatStore(store, path.join(tmp, 'archive'));
    // a fourth district whose day mean carries float noise
    await upsertDistricts(store, [{ id: 'mill', name: 'Mill', geometry: [[[[-35.54, 44.2], [-35.53, 44.2], [-35.53, 44.21], [-35.54, 44.21], [-35.54, 44.2]]]], areaSquareMetres: 1e6 }]);
    const [day] = await store.query<{ id: number }>(`SELECT id FROM scenes WHERE pass = 'day'`);
    const [night] = await store.query<{ id: number }>(`SELECT id FROM scenes WHERE pass = 'night'`);
    await replaceDerived(store, [{
      obsDate: '2024-07-14', districtId: 'mill', daySceneId: day.id, nightSceneId: night.id, albedoSceneId: null, albedoSource: 'property',
      tDayKelvin: MILL.tDay, tNightKelvin: MILL.tNight, albedo: MILL.albedo, atiPerKelvin: MILL_RAW.ati_per_k,
      suhiDayKelvin: MILL_RAW.suhi_day_k, suhiNightKelvin: MILL_RAW.suhi_night_k, status: 'ok',
    }]);
  } finally {
    await store.close();
  }
}, 600_000);
afterAll(() => {
  if (tmp) rmSync(tmp, { recursive: true, force: true });
});

describe('district table: field names carry their unit', () => {
  it('in JSON, CSV and the terminal table of the CLI', async () => {
    for (const [level, fields] of [['date', DATE_FIELDS], ['year', YEAR_FIELDS]] as const) {
      const json = await runCli(['table', '--level', level, '--format', 'json', '--data-dir', dataDir], env());
      expect(json.code, json.stderr).toBe(0);
      for (const row of JSON.parse(json.stdout) as Record<string, unknown>[]) expect(Object.keys(row)).toEqual(fields);
      const csv = await runCli(['table', '--level', level, '--format', 'csv', '--data-dir', dataDir], env());
      expect(csv.code, csv.stderr).toBe(0);
      expect(readCsv(csv.stdout)[0]).toEqual(fields);
    }
    const table = await runCli(['table', '--data-dir', dataDir], env());
    expect(table.code, table.stderr).toBe(0);
    const header = table.stdout.split('\n')[0];
    for (const label of ['lst_day K', 'lst_night K', 'suhi_day K', 'suhi_night K', 'ati 1/K']) expect(header).toContain(label);
  });
  it('in the API: /api/table as JSON and CSV, /api/districts with area_m2', async () => {
    const store = await openStore({ dataDir, readOnly: true });
    const app = buildApp(store, { logLevel: 'silent' });
    try {
      const body = (await app.inject({ method: 'GET', url: '/api/table?level=year' })).json() as { units: Record<string, string>; rows: Record<string, unknown>[] };
      expect(body.units).toEqual({ lst_day_k: 'K', lst_night_k: 'K', suhi_day_k: 'K', suhi_night_k: 'K', ati_per_k: '1/K' });
      for (const row of body.rows) expect(Object.keys(row)).toEqual(YEAR_FIELDS);
      const csv = (await app.inject({ method: 'GET', url: '/api/table?level=date&format=csv' })).body;
      expect(readCsv(csv)[0]).toEqual(DATE_FIELDS);
      const districts = ((await app.inject({ method: 'GET', url: '/api/districts' })).json() as { features: { properties: Record<string, unknown> }[] }).features.map((f) => f.properties);
      for (const d of districts) {
        expect(Object.keys(d)).toEqual(['id', 'name', 'role', 'area_m2', 'lst_day_k', 'lst_night_k', 'suhi_day_k', 'suhi_night_k', 'ati_per_k', 'dates_day', 'dates_night', 'value']);
      }
      // the seeded areas (test/support/heat-store.ts): 1 km² per district, 50 km² for the rural reference
      expect(districts.find((d) => d.id === 'rural')!.area_m2).toBe(5e7);
    } finally {
      await app.close();
      await store.close();
    }
  }, 600_000);
});

describe('district table: CSV and JSON numbers to the stated precision', () => {
  it('prints 312.74024810000003 as 312.7402 and every value with at most its digits', async () => {
    // reference: Python's decimal formatting, .4f for K (0.0001 K) and .6g for ATI (6 significant digits)
    const kelvin = pythonFormat(Object.fromEntries(KELVIN_FIELDS.map((f) => [f, MILL_RAW[f as keyof typeof MILL_RAW]])), '.4f');
    const ati = pythonFormat({ ati_per_k: MILL_RAW.ati_per_k }, '.6g');
    expect(kelvin.lst_day_k).toBe(312.7402);

    const json = await runCli(['table', '--format', 'json', '--data-dir', dataDir], env());
    expect(json.code, json.stderr).toBe(0);
    const mill = (JSON.parse(json.stdout) as Record<string, number | string>[]).find((r) => r.district === 'mill')!;
    expect(Object.fromEntries(KELVIN_FIELDS.map((f) => [f, mill[f]]))).toEqual(kelvin);
    expect(mill.ati_per_k).toBe(ati.ati_per_k);
    expect(json.stdout).toContain('"lst_day_k": 312.7402,');

    const csv = await runCli(['table', '--format', 'csv', '--data-dir', dataDir], env());
    expect(csv.code, csv.stderr).toBe(0);
    const [header, ...rows] = readCsv(csv.stdout);
    const millCsv = rows.find((r) => r[0] === 'mill')!;
    expect(millCsv[header.indexOf('lst_day_k')]).toBe('312.7402');
    // every number of every row, in both formats, within its stated digits
    for (const r of rows) {
      for (const f of KELVIN_FIELDS) if (r[header.indexOf(f)] !== '') expect(decimals(r[header.indexOf(f)]), `${r[0]} ${f}`).toBeLessThanOrEqual(4);
      const a = r[header.indexOf('ati_per_k')];
      if (a !== '') expect(significant(a), `${r[0]} ati_per_k ${a}`).toBeLessThanOrEqual(6);
    }
    for (const line of json.stdout.split('\n')) {
      const m = /"(lst_day_k|lst_night_k|suhi_day_k|suhi_night_k|ati_per_k)": (-?[0-9.e+-]+)/.exec(line);
      if (!m) continue;
      if (m[1] === 'ati_per_k') expect(significant(m[2]), line).toBeLessThanOrEqual(6);
      else expect(decimals(m[2]), line).toBeLessThanOrEqual(4);
    }
  });
});

describe('hotspots: the value column is named after the metric and its unit', () => {
  it('suhi_night_k in CSV and JSON, rounded to 0.0001 K', async () => {
    // four districts with a 2024 value (test/support/heat-store.ts and mill above); knn keeps none without neighbours
    const args = ['hotspots', '--metric', 'suhi_night', '--year', '2024', '--min-dates', '1', '--weights', 'knn', '--k', '2', '--data-dir', dataDir];
    const csv = await runCli([...args, '--format', 'csv'], env());
    expect(csv.code, csv.stderr).toBe(0);
    const [header, ...rows] = readCsv(csv.stdout);
    expect(header).toEqual(['district', 'name', 'suhi_night_k', 'years', 'neighbours', 'gi_z', 'gi_p', 'gi_q', 'spot', 'confidence']);
    // reference: Python's .4f of the stored night SUHI (290.1 - 289 carries float noise)
    const want = pythonFormat({ suhi_night_k: MILL_RAW.suhi_night_k }, '.4f');
    expect(Number(rows.find((r) => r[0] === 'mill')![2])).toBe(want.suhi_night_k);
    const json = await runCli([...args, '--format', 'json'], env());
    expect(json.code, json.stderr).toBe(0);
    const body = JSON.parse(json.stdout) as { unit: string; districts: Record<string, unknown>[] };
    expect(body.unit).toBe('K');
    for (const d of body.districts) expect(Object.keys(d)).toContain('suhi_night_k');
  });
});

describe('status', () => {
  it('--format csv is one CSV table with one header line', async () => {
    const r = await runCli(['status', '--format', 'csv', '--data-dir', dataDir], env());
    expect(r.code, r.stderr).toBe(0);
    const rows = readCsv(r.stdout);
    expect(rows[0]).toEqual(['kind', 'pass', 'status', 'scenes']);
    // every line a record of the same width, no blank or prose line, the header once
    expect(r.stdout.trimEnd().split('\n')).toHaveLength(rows.length);
    for (const row of rows.slice(1)) {
      expect(row).toHaveLength(4);
      expect(row).not.toEqual(rows[0]);
      expect(row[3]).toMatch(/^[0-9]+$/);
    }
    // the counts add up to the scenes of the store: the seeded pair and the broken file (test/support/heat-store.ts)
    expect(rows.slice(1).reduce((s, row) => s + Number(row[3]), 0)).toBe(3);
  });
  it('--format json has snake_case keys only and failures without class names', async () => {
    const r = await runCli(['status', '--format', 'json', '--data-dir', dataDir], env());
    expect(r.code, r.stderr).toBe(0);
    const body = JSON.parse(r.stdout) as Record<string, unknown>;
    const keys = (v: unknown): string[] => (Array.isArray(v) ? v.flatMap(keys) : v && typeof v === 'object' ? Object.entries(v).flatMap(([k, x]) => [k, ...keys(x)]) : []);
    for (const k of keys(body)) expect(k).toMatch(/^[a-z0-9]+(_[a-z0-9]+)*$/);
    expect(Object.keys(body)).toEqual(['store', 'scenes', 'by_kind', 'failures', 'thermal_scenes', 'last_run']);
    const failures = body.failures as { error: string; error_kind: string; content_hash: string | null; scene_id: number }[];
    expect(failures).toHaveLength(1);
    expect(failures[0].error).not.toMatch(/^\w*Error: /);
    expect(failures[0].error_kind).toBe('input'); // a broken file is bad input (workers/core/errors.ts)
  });
});

describe.skipIf(!hasGdal)('zonal states the unit of its statistics once (GDAL Python bindings; skipped without them)', () => {
  const lst = path.join(FIX, 'lst_utm33_uint16.tif');
  const districts = path.join(FIX, 'districts.geojson');
  let work: string;
  let albedo: string;
  let plain: string;
  let lstScale: { scale: number; offset: number };

  beforeAll(() => {
    work = mkdtempSync(path.join(tmpdir(), 'heatledger-zonal-units-'));
    albedo = path.join(work, 'albedo_from_lst.tif');
    plain = path.join(work, 'counts_u16.tif');
    // From the LST raster: an albedo raster a = (K - 170) / 190 (float64, -9999 where the LST is nodata),
    // which maps the plausible LST window 170-360 K onto the albedo range 0-1, so the same pixels are
    // valid and every statistic is the same affine map of the LST one; and the same DNs without scale/offset.
    const code = [
      'import json, sys', 'import numpy as np', 'from osgeo import gdal',
      'src = gdal.Open(sys.argv[1]); b = src.GetRasterBand(1)',
      'dn = b.ReadAsArray().astype(np.float64); scale = b.GetScale(); offset = b.GetOffset(); nodata = b.GetNoDataValue()',
      'k = dn * scale + offset',
      'drv = gdal.GetDriverByName("GTiff")',
      'def write(path, arr, dtype, nd):',
      '    out = drv.Create(path, src.RasterXSize, src.RasterYSize, 1, dtype)',
      '    out.SetGeoTransform(src.GetGeoTransform()); out.SetProjection(src.GetProjection())',
      '    ob = out.GetRasterBand(1); ob.SetNoDataValue(nd); ob.WriteArray(arr); out.FlushCache()',
      'write(sys.argv[2], np.where(dn == nodata, -9999.0, (k - 170.0) / 190.0), gdal.GDT_Float64, -9999.0)',
      'write(sys.argv[3], dn.astype(np.uint16), gdal.GDT_UInt16, nodata)',
      'print(json.dumps({"scale": scale, "offset": offset}))',
    ].join('\n');
    lstScale = JSON.parse(execFileSync(PYTHON, ['-c', code, lst, albedo, plain], { encoding: 'utf8' }));
  });
  afterAll(() => {
    if (work) rmSync(work, { recursive: true, force: true });
  });

  const zonal = (raster: string, format: string) => new Promise<{ code: number; stdout: string; stderr: string }>((resolve) => {
    execFile(process.execPath, [cliPath, 'zonal', raster, '--districts', districts, '--format', format], { cwd: repoRoot, timeout: 480_000, maxBuffer: 16 << 20 },
      (err, stdout, stderr) => resolve({ code: err ? Number((err as { code?: unknown }).code) : 0, stdout, stderr }));
  });

  it('K for an LST raster with a scale/offset, in one place per format', async () => {
    // GDAL reads a scale and offset on the band: LST in K after them
    expect(lstScale.scale).not.toBe(1);
    const json = await zonal(lst, 'json');
    expect(json.code, json.stderr).toBe(0);
    const body = JSON.parse(json.stdout) as { unit: string | null; kind: string; rows: Record<string, unknown>[] };
    expect({ unit: body.unit, kind: body.kind }).toEqual({ unit: 'K', kind: 'lst' });
    for (const row of body.rows) expect(Object.keys(row)).toEqual(ZONAL_FIELDS);
    const table = await zonal(lst, 'table');
    expect(table.code, table.stderr).toBe(0);
    const lines = table.stdout.split('\n');
    expect(lines[0]).toMatch(/^values: K \(/);
    expect(lines[1].split(/\s+/)).toEqual(ZONAL_FIELDS); // no unit beside each statistic
    expect(lines.slice(1).join('\n')).not.toMatch(/\bK\b/); // stated once, in the first line
    const csv = await zonal(lst, 'csv');
    expect(csv.code, csv.stderr).toBe(0);
    expect(readCsv(csv.stdout)[0]).toEqual(ZONAL_FIELDS);
    expect(csv.stderr).toMatch(/^heatledger: values: K \(/);
  });

  it('no unit for an albedo raster, whose statistics follow the LST reference through a = (K - 170) / 190', async () => {
    const r = await zonal(albedo, 'json');
    expect(r.code, r.stderr).toBe(0);
    const body = JSON.parse(r.stdout) as { unit: string | null; kind: string; rows: Record<string, number | string | null>[] };
    expect({ unit: body.unit, kind: body.kind }).toEqual({ unit: null, kind: 'albedo' });
    // reference: GDAL/rasterio + NumPy statistics of the LST raster (make_reference.py, case a_centre)
    const ref = JSON.parse(readFileSync(path.join(FIX, 'expected_a_centre.json'), 'utf8')) as { rows: Record<string, number | string | null>[] };
    expect(body.rows.map((x) => x.district)).toEqual(ref.rows.map((x) => x.district));
    for (const want of ref.rows) {
      const got = body.rows.find((x) => x.district === want.district)!;
      expect([got.pixels, got.valid], String(want.district)).toEqual([want.pixels, want.valid]);
      // printed to 6 decimals (README, `zonal`): within 1e-6 of the mapped reference
      const map = (f: string, v: number) => (f === 'std' ? v / 190 : f === 'valid_fraction' ? v : (v - 170) / 190);
      for (const f of ['valid_fraction', 'mean', 'std', 'min', 'max', 'median', 'p10', 'p90']) {
        const w = want[f] as number | null;
        if (w === null) expect(got[f], `${want.district} ${f}`).toBeNull();
        else expect(Math.abs((got[f] as number) - map(f, w)), `${want.district} ${f}`).toBeLessThanOrEqual(1e-6);
      }
    }
  });

  it('no unit for integer samples without scale/offset', async () => {
    const r = await zonal(plain, 'json');
    expect(r.code, r.stderr).toBe(0);
    const body = JSON.parse(r.stdout) as { unit: string | null; kind: string };
    expect({ unit: body.unit, kind: body.kind }).toEqual({ unit: null, kind: 'unknown' });
  });
});
