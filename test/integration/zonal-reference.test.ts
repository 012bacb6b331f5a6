/**
 * District zonal statistics checked against an outside reference: GDAL /
 * rasterio + NumPy (and shapely cell-intersection areas for the coverage-
 * fraction mode), computed once by
 *
 *     /usr/bin/python3 test/fixtures/make_reference.py
 *
 * which writes the GeoTIFFs, GeoJSON and expected_<case>.json files in
 * test/fixtures/reference/ (see the script's docstring for what each holds).
 * No Python runs at test time. The CLI part spawns the compiled
 * `dist/workers/cli.js` (build first: `npx tsc -p tsconfig.json`).
 */
import { execFile } from 'node:child_process';
import { copyFileSync, existsSync, mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { basename, dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, describe, expect, it } from 'vitest';
import { zonalTable } from '../../workers/commands/zonal-table.js';
import { snakeCaseKeys } from '../../workers/format.js';

const HERE = dirname(fileURLToPath(import.meta.url));
const ROOT = resolve(HERE, '../..');
const FIX = resolve(HERE, '../fixtures/reference');
const CLI = join(ROOT, 'dist/workers/cli.js');

/** Output fields and their order (CLI JSON and CSV). */
const FIELDS = ['district', 'pixels', 'valid', 'valid_fraction', 'mean', 'std', 'min', 'max', 'median', 'p10', 'p90'];
/** Kelvin statistics (and valid_fraction, dimensionless): within 1e-6 of the reference. */
const TOL_KELVIN = 1e-6;
/** The CLI prints K to 0.0001 (README, `zonal`): half of that on top of the tolerance. */
const TOL_KELVIN_PRINTED = TOL_KELVIN + 0.00005;
type Num = number | null;
interface Row { district: string; pixels: number; valid: number; valid_fraction: Num; mean: Num; std: Num; min: Num; max: Num; median: Num; p10: Num; p90: Num }
interface Case {
  case: string;
  reference: string;
  options: { raster: string; districts: string; rural?: string; qa?: string; qaMask?: number; idField?: string; coverage: 'centre' | 'fraction' };
  /** Expected rows; fraction-mode rows omit median/p10/p90 (no reference for weighted quantiles). */
  rows: Array<Partial<Row> & { district: string }>;
}

const cases: Case[] = readdirSync(FIX)
  .filter((f) => /^expected_.*\.json$/.test(f))
  .sort()
  .map((f) => JSON.parse(readFileSync(join(FIX, f), 'utf8')) as Case);

const fx = (name: string) => join(FIX, name);

/** Every mismatch as a readable line; an empty list means the rows agree. */
function differences(actual: readonly Record<string, unknown>[], c: Case, tol = TOL_KELVIN): string[] {
  const out: string[] = [];
  const got = actual.map((r) => String(r.district));
  const want = c.rows.map((r) => r.district);
  if (JSON.stringify(got) !== JSON.stringify(want)) out.push(`${c.case}: districts ${JSON.stringify(got)} != ${JSON.stringify(want)}`);
  for (const exp of c.rows) {
    const act = actual.find((r) => r.district === exp.district);
    if (!act) continue;
    for (const [key, e] of Object.entries(exp)) {
      if (key === 'district') continue;
      const a = act[key];
      const where = `${c.case} ${exp.district}.${key}`;
      if (e === null) {
        if (a !== null) out.push(`${where}: got ${String(a)}, expected null`);
        continue;
      }
      if (typeof a !== 'number' || !Number.isFinite(a)) {
        out.push(`${where}: got ${String(a)}, expected ${e}`);
        continue;
      }
      // cell counts (centre rule: centres inside; fraction rule: cells with coverage > 0) are exact
      if (key === 'pixels' || key === 'valid') {
        if (a !== e) out.push(`${where}: got ${a}, expected exactly ${e}`);
      } else if (Math.abs(a - (e as number)) > tol) {
        out.push(`${where}: got ${a}, expected ${e} (diff ${(a - (e as number)).toExponential(3)}, tol ${tol})`);
      }
    }
  }
  return out;
}

function tableOptions(c: Case) {
  const o = c.options;
  return {
    rasterPath: fx(o.raster),
    districtsPath: fx(o.districts),
    ...(o.rural ? { ruralPath: fx(o.rural) } : {}),
    ...(o.qa ? { qaPath: fx(o.qa), qaMask: o.qaMask } : {}),
    ...(o.idField ? { idField: o.idField } : {}),
    coverage: o.coverage,
  };
}

function cliArgs(c: Case, format: 'json' | 'csv'): string[] {
  const o = c.options;
  const args = ['zonal', fx(o.raster), '--districts', fx(o.districts)];
  if (o.rural) args.push('--rural', fx(o.rural));
  if (o.qa) args.push('--qa', fx(o.qa), '--qa-mask', String(o.qaMask));
  if (o.idField) args.push('--id-field', o.idField);
  args.push('--coverage', o.coverage, '--format', format);
  return args;
}

interface Run { code: number | null; stdout: string; stderr: string }
function runCli(args: string[]): Promise<Run> {
  return new Promise((res) => {
    execFile(process.execPath, [CLI, ...args], { cwd: ROOT, timeout: 480_000, maxBuffer: 16 << 20 }, (err, stdout, stderr) => {
      const code = err ? ((err as { code?: unknown }).code as number | null) : 0;
      res({ code: typeof code === 'number' ? code : null, stdout: String(stdout), stderr: String(stderr) });
    });
  });
}

/** The rows of a zonalTable result with the output field names (valid_fraction for validFraction). */
function rowsOf(result: { rows: readonly object[] }): Record<string, unknown>[] {
  return result.rows.map((r) => snakeCaseKeys(r) as Record<string, unknown>);
}

describe('fixtures', () => {
  it('holds every reference case and keeps the folder small', () => {
    // the case list is what make_reference.py writes; a missing file would silently shrink coverage
    expect(cases.map((c) => c.case)).toEqual([
      'a_centre', 'a_code', 'a_fraction', 'a_fraction_qa', 'a_qa', 'a_rural', 'b_centre', 'b_fraction', 'd_centre', 'd_fraction',
    ]);
    const bytes = readdirSync(FIX).reduce((s, f) => s + readFileSync(join(FIX, f)).length, 0);
    expect(bytes).toBeLessThan(1_000_000);
  });
});

describe('zonalTable against GDAL/rasterio + NumPy', () => {
  for (const c of cases) {
    it(`${c.case}: ${c.options.raster} (${c.options.coverage}${c.options.qa ? ', QA' : ''}${c.options.rural ? ', rural' : ''})`, async () => {
      const rows = rowsOf(await zonalTable(tableOptions(c)));
      // reference: c.reference (GDAL rasterize centre rule / shapely areas + NumPy std ddof 0, percentile type 7)
      expect(differences(rows, c)).toEqual([]);
    });
  }
});

describe('zonal CLI (dist/workers/cli.js)', () => {
  it('is built', () => {
    expect(existsSync(CLI)).toBe(true);
  });

  // One CLI run costs ~1 s of start-up here, so the CLI checks a subset that uses every
  // option (--qa/--qa-mask, --rural, --id-field, --coverage) and every raster; the
  // numbers themselves are checked for all cases through zonalTable above.
  const cliCases = ['a_qa', 'a_rural', 'a_code', 'b_fraction', 'd_centre'].map((n) => cases.find((c) => c.case === n)!);
  describe.concurrent('--format json equals the reference', () => {
    for (const c of cliCases) {
      it(c.case, async () => {
        const r = await runCli(cliArgs(c, 'json'));
        expect(r.stderr).toBe('');
        expect(r.code).toBe(0);
        const body = JSON.parse(r.stdout) as { unit: string | null; rows: Record<string, unknown>[] };
        expect(Object.keys(body)).toEqual(['unit', 'kind', 'rows']);
        // every reference raster is LST with a scale/offset or float samples (make_reference.py): Kelvin, said once
        expect(body.unit).toBe('K');
        const rows = body.rows;
        for (const row of rows) expect(Object.keys(row)).toEqual(FIELDS);
        // reference: GDAL/rasterio + NumPy, as for zonalTable; printed to 0.0001 K
        expect(differences(rows, c, TOL_KELVIN_PRINTED)).toEqual([]);
      });
    }
  });

  it('--format csv has the header line and one line per row', async () => {
    const c = cases.find((x) => x.case === 'a_rural')!;
    const r = await runCli(cliArgs(c, 'csv'));
    expect(r.code).toBe(0);
    expect(r.stderr).toMatch(/^heatledger: values: K \(/);
    const lines = r.stdout.trimEnd().split('\n');
    expect(lines[0]).toBe(FIELDS.join(','));
    expect(lines.length).toBe(c.rows.length + 1);
    // pixels column, exact (GDAL rasterize centre rule via rasterio.features.geometry_mask)
    const pixels = lines.slice(1).map((l) => l.split(','));
    expect(pixels.map((p) => [p[0], Number(p[1])])).toEqual(c.rows.map((x) => [x.district, x.pixels]));
  });
});

describe('bad input: exit 2, one line naming the file, no stack trace', () => {
  const tmp = mkdtempSync(join(tmpdir(), 'zonal-ref-'));
  afterAll(() => rmSync(tmp, { recursive: true, force: true }));

  const raster = fx('lst_utm33_uint16.tif');
  const full = readFileSync(raster);
  const truncatedData = join(tmp, 'truncated_data.tif');
  writeFileSync(truncatedData, full.subarray(0, Math.floor(full.length * 0.6))); // IFD kept, later tiles cut
  const truncatedHeader = join(tmp, 'truncated_header.tif');
  writeFileSync(truncatedHeader, full.subarray(0, 100)); // cut inside the first IFD
  const missing = join(tmp, 'no_such_districts.geojson');
  const renamed = join(tmp, 'copy of lst.tif');
  copyFileSync(raster, renamed);

  // `mentions`: the problem itself must be in the message, so that e.g. an unknown EPSG code
  // does not pass as "does not overlap" after a silent fallback to some other CRS.
  const bad: Array<{ what: string; args: string[]; names: string[]; mentions?: RegExp }> = [
    { what: 'GeoTIFF truncated in its tile data', args: [truncatedData, '--districts', fx('districts.geojson')], names: [truncatedData] },
    { what: 'GeoTIFF without any CRS', args: [fx('bad_nocrs.tif'), '--districts', fx('districts.geojson')], names: [fx('bad_nocrs.tif')], mentions: /CRS|coordinate reference system/i },
    { what: 'GeoTIFF with an unassigned EPSG code (32699)', args: [fx('bad_unknown_epsg.tif'), '--districts', fx('districts.geojson')], names: [fx('bad_unknown_epsg.tif')], mentions: /32699/ },
    { what: 'GeoJSON with (lat, lon) coordinates', args: [raster, '--districts', fx('bad_swapped.geojson')], names: [fx('bad_swapped.geojson')] },
    { what: 'self-intersecting (bow-tie) district', args: [raster, '--districts', fx('bad_bowtie.geojson')], names: [fx('bad_bowtie.geojson')], mentions: /intersect|cross/i },
    // either file is a fair name for "these two do not meet"
    { what: 'raster that overlaps no district', args: [fx('far_utm33.tif'), '--districts', fx('districts.geojson')], names: [fx('far_utm33.tif'), fx('districts.geojson')], mentions: /overlap/i },
  ];

  describe.concurrent('CLI', () => {
    for (const b of bad) {
      it(b.what, async () => {
        const r = await runCli(['zonal', ...b.args, '--format', 'json']);
        // exit codes: DEVELOPERS.md / workers/core/errors.ts contract (InputError -> 2)
        expect({ code: r.code, stdout: r.stdout }).toEqual({ code: 2, stdout: '' });
        const msg = r.stderr.trimEnd();
        expect(msg.split('\n')).toHaveLength(1);
        expect(b.names.some((n) => msg.includes(basename(n))), `stderr "${msg}" names one of ${b.names.map((n) => basename(n)).join(', ')}`).toBe(true);
        if (b.mentions) expect(msg).toMatch(b.mentions);
        expect(msg).not.toMatch(/^\s+at /m);
        expect(msg).not.toMatch(/TypeError|RangeError|internal error/);
      });
    }
  });

  it('zonalTable rejects with an InputError naming the file (and the problem)', async () => {
    const calls: Array<[{ rasterPath: string; districtsPath: string; qaPath?: string; qaMask?: number }, RegExp]> = [
      [{ rasterPath: truncatedData, districtsPath: fx('districts.geojson') }, /truncated_data\.tif/],
      [{ rasterPath: truncatedHeader, districtsPath: fx('districts.geojson') }, /truncated_header\.tif/],
      [{ rasterPath: renamed, districtsPath: missing }, /no_such_districts\.geojson/],
      [{ rasterPath: raster, districtsPath: fx('bad_swapped.geojson') }, /bad_swapped\.geojson/],
      // a QA raster must share the LST raster's grid; either file is a fair name
      [{ rasterPath: fx('lst_webmerc_f32.tif'), districtsPath: fx('districts.geojson'), qaPath: fx('qa_utm33.tif'), qaMask: 24 }, /qa_utm33\.tif|lst_webmerc_f32\.tif/],
      [{ rasterPath: fx('bad_nocrs.tif'), districtsPath: fx('districts.geojson') }, /bad_nocrs\.tif.*(CRS|coordinate reference system)/i],
      [{ rasterPath: fx('bad_unknown_epsg.tif'), districtsPath: fx('districts.geojson') }, /bad_unknown_epsg\.tif.*32699/],
      [{ rasterPath: raster, districtsPath: fx('bad_bowtie.geojson') }, /bad_bowtie\.geojson/],
      [{ rasterPath: fx('far_utm33.tif'), districtsPath: fx('districts.geojson') }, /overlap/],
    ];
    const failures: string[] = [];
    for (const [o, message] of calls) {
      const label = `${basename(o.rasterPath)} + ${basename(o.districtsPath)}${o.qaPath ? ' + ' + basename(o.qaPath) : ''}`;
      try {
        await zonalTable(o);
        failures.push(`${label}: resolved, expected an InputError`);
      } catch (e) {
        const err = e as Error;
        if (err?.name !== 'InputError') failures.push(`${label}: ${err?.name} (${err?.message}), expected an InputError`);
        else if (!message.test(err.message)) failures.push(`${label}: message "${err.message}" does not match ${message}`);
      }
    }
    expect(failures).toEqual([]);
  });
});
