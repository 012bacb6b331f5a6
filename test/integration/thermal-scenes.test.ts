/**
 * Thermal (Level-1 DN) scenes through the whole pipeline, embedded (PGlite).
 *
 * Checks and their sources:
 * - district statistics of a thermal DN scene equal those of the LST raster that
 *   rasterio + NumPy compute from the same DN with the same published formulas
 *   (L = ML * DN + AL, the radiative transfer equation, T = K2 / ln(K1 / B + 1), the
 *   NDVI-threshold emissivity), read back through GDAL with GDAL's pixel-centre rule:
 *   test/fixtures/make_thermal_fixtures.py, run with Debian's /usr/bin/python3 (its
 *   outputs committed in test/fixtures/thermal/);
 * - ATI = (1 - albedo) / (T_day - T_night) (Price 1977, C = 1): the night LST of the pair
 *   is the thermal scene's;
 * - the derived LST written with --write-lst is a valid cloud-optimised GeoTIFF by GDAL's
 *   own validator (osgeo_utils.samples.validate_cloud_optimized_geotiff) and GDAL reads it
 *   back with the same district statistics;
 * - bad input (no constants anywhere, a metadata file of the other spacecraft, an NDVI
 *   raster on another grid — refused, not resampled —, emissivity outside (0.8, 1]) is
 *   refused with a message naming the file, and what the store held stays as it was.
 */
import { execFileSync } from 'node:child_process';
import { copyFile, mkdir, mkdtemp, readFile, readdir, rm, writeFile } from 'node:fs/promises';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { runPipeline, type PipelineOptions } from '../../workers/run/pipeline.js';
import { openRaster, rasterCrs } from '../../workers/core/raster/index.js';
import { GEOJSON_CRS, reprojectFlat } from '../../workers/core/crs/index.js';
import { zonalThermalScene } from '../../workers/core/zonal/index.js';
import { TIRS_CONSTANTS } from '../../workers/core/thermal/index.js';
import { runtimeConfig } from '../../workers/run/config.js';
import { openStore } from '../../workers/store/index.js';
import { ensurePipelineBuild, cleanEnv, cliOk } from '../support/pipeline-harness.js';
import { pythonModulesAvailable } from '../support/services.js';

await ensurePipelineBuild();
const FIX = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../fixtures/thermal');
const hasGdal = await pythonModulesAvailable(['osgeo_utils.samples.validate_cloud_optimized_geotiff', 'rasterio', 'numpy'], 'thermal --write-lst COG check');

interface Stat { pixels: number; valid: number; nodata: number; mean: number; std: number; min: number; max: number; median: number; p10: number; p90: number }
const expected = JSON.parse(await readFile(path.join(FIX, 'expected.json'), 'utf8')) as {
  atmosphere: { transmittance: number; upwelling: number; downwelling: number };
  cases: Record<'rte_ndvi' | 'plain_097' | 'plain_095', Record<string, Stat>>;
};
/** float32 LST on both sides; the last float32 digit of a value may differ (~3e-5 K at 300 K): 1e-4 K. */
const TOL_K = 1e-4;
const ALBEDO = 0.15;

let tmp: string;
let fx: string;
let districts: string;

async function zonalOf(dataDir: string, scenePath: string) {
  const store = await openStore({ dataDir });
  try {
    return await store.query<{ district_id: string; pixels: number; valid: number; nodata_count: number; mean_k: number; std_k: number; min_k: number; max_k: number; median_k: number; p10_k: number; p90_k: number; emissivity_source: string | null }>(
      `SELECT z.* FROM zonal_stats z JOIN scenes s ON s.id = z.scene_id WHERE s.path = $1 AND z.district_id <> 'rural' ORDER BY z.district_id`, [scenePath]);
  } finally {
    await store.close();
  }
}

async function queryStore<T>(dataDir: string, sql: string, params: unknown[] = []): Promise<T[]> {
  const store = await openStore({ dataDir });
  try {
    return await store.query<T>(sql, params);
  } finally {
    await store.close();
  }
}

function compare(rows: Awaited<ReturnType<typeof zonalOf>>, want: Record<string, Stat>): string[] {
  const out: string[] = [];
  expect(rows.map((r) => r.district_id)).toEqual(Object.keys(want).sort());
  for (const r of rows) {
    const e = want[r.district_id];
    if (r.pixels !== e.pixels || r.valid !== e.valid || r.nodata_count !== e.nodata) out.push(`${r.district_id}: counts ${r.pixels}/${r.valid}/${r.nodata_count} != ${e.pixels}/${e.valid}/${e.nodata}`);
    for (const [k, ek] of [['mean_k', 'mean'], ['std_k', 'std'], ['min_k', 'min'], ['max_k', 'max'], ['median_k', 'median'], ['p10_k', 'p10'], ['p90_k', 'p90']] as const) {
      if (!(Math.abs(r[k] - e[ek]) <= TOL_K)) out.push(`${r.district_id}.${k}: ${r[k]} != ${e[ek]}`);
    }
  }
  return out;
}

const run = (dataDir: string, o: Omit<PipelineOptions, 'districtsPath'> & { districtsPath?: string }) =>
  runPipeline({ districtsPath: districts, threads: 1, ...o }, runtimeConfig({ dataDir }, {}));

beforeAll(async () => {
  tmp = await mkdtemp(path.join(os.tmpdir(), 'hl-thermal-'));
  fx = path.join(tmp, 'fx');
  await mkdir(fx);
  for (const f of await readdir(FIX)) await copyFile(path.join(FIX, f), path.join(fx, f));
  // every district gets an albedo property, so each paired date has an ATI
  const doc = JSON.parse(await readFile(path.join(FIX, 'districts.geojson'), 'utf8'));
  for (const f of doc.features) f.properties.albedo = ALBEDO;
  districts = path.join(tmp, 'districts.geojson');
  await writeFile(districts, JSON.stringify(doc));
});

afterAll(async () => {
  if (tmp) await rm(tmp, { recursive: true, force: true });
});

describe('thermal scene with NDVI of the nearest day scene and the atmosphere of the manifest', () => {
  let dataDir: string;
  let scene: string;

  beforeAll(async () => {
    dataDir = path.join(tmp, 'store-a');
    const archive = path.join(tmp, 'a');
    await mkdir(archive);
    for (const f of ['thermal_B10.tif', 'thermal_MTL.txt', 'day_lst.tif']) await copyFile(path.join(fx, f), path.join(archive, f));
    scene = path.join(archive, 'thermal_B10.tif');
    const a = expected.atmosphere;
    const manifest = path.join(tmp, 'a.csv');
    await writeFile(manifest, [
      'path,kind,ndvi,transmittance,upwelling,downwelling',
      `a/day_lst.tif,lst,fx/ndvi.tif,,,`,
      `a/thermal_B10.tif,,,${a.transmittance},${a.upwelling},${a.downwelling}`,
    ].join('\n') + '\n');
    const summary = await run(dataDir, { inputs: [archive], manifestPath: manifest });
    expect(summary.outcome.status).toBe('succeeded');
  }, 600_000);

  it('gives the district statistics rasterio + NumPy compute from the same DN (fixture script)', async () => {
    const rows = await zonalOf(dataDir, scene);
    expect(compare(rows, expected.cases.rte_ndvi)).toEqual([]);
  });

  it('stores how the LST was made, per scene and per district', async () => {
    const [s] = await queryStore<{ kind: string; pass: string; lst_method: string; atmospheric_correction: boolean; thermal_constants_source: string; emissivity_source: string; sensor: string }>(
      dataDir, 'SELECT kind, pass, lst_method, atmospheric_correction, thermal_constants_source, emissivity_source, sensor FROM scenes WHERE path = $1', [scene]);
    expect(s).toMatchObject({ kind: 'thermal', pass: 'night', lst_method: 'rte', atmospheric_correction: true, sensor: 'LANDSAT_8' });
    expect(s.thermal_constants_source).toBe(`metadata file ${path.join(tmp, 'a', 'thermal_MTL.txt')}`);
    expect(s.emissivity_source).toBe(`NDVI-threshold method on ${path.join(fx, 'ndvi.tif')} of day scene ${path.join(tmp, 'a', 'day_lst.tif')} (2023-07-11T16:40:00Z, 0.4 d away)`);
    const rows = await zonalOf(dataDir, scene);
    expect(new Set(rows.map((r) => r.emissivity_source))).toEqual(new Set([s.emissivity_source]));
  });

  it('pairs the thermal night with the day pass: ATI = (1 - albedo) / (T_day - T_night) (Price 1977)', async () => {
    const rows = await queryStore<{ district_id: string; t_night_k: number; t_day_k: number; ati_per_k: number | null }>(
      dataDir, `SELECT district_id, t_night_k, t_day_k, ati_per_k FROM derived_metrics WHERE district_id <> 'rural' ORDER BY district_id`);
    expect(rows.map((r) => r.district_id)).toEqual(Object.keys(expected.cases.rte_ndvi).sort());
    for (const r of rows) {
      expect(Math.abs(r.t_night_k - expected.cases.rte_ndvi[r.district_id].mean)).toBeLessThan(TOL_K);
      expect(r.ati_per_k).not.toBeNull();
      expect(r.ati_per_k!).toBeCloseTo((1 - ALBEDO) / (r.t_day_k - r.t_night_k), 10);
    }
  });

  describe('bad input is refused, naming the file, and nothing stored is lost', () => {
    let before: unknown[];
    const errors = new Map<string, string>();
    const bad = (name: string) => path.join(tmp, 'bad', name);

    beforeAll(async () => {
      before = await queryStore(dataDir, `SELECT scene_id, district_id, mean_k, emissivity_source FROM zonal_stats ORDER BY scene_id, district_id`);
      await mkdir(path.join(tmp, 'bad'));
      for (const f of ['other_B10.tif', 'bad_craft_B10.tif', 'bad_grid_B10.tif', 'bad_eps_B10.tif']) await copyFile(path.join(fx, f), bad(f));
      const manifest = path.join(tmp, 'bad.csv'); // paths relative to the manifest's folder
      await writeFile(manifest, [
        'path,kind,sensor,metadata,ndvi,emissivity',
        'bad/other_B10.tif,thermal,,,,',
        'bad/bad_craft_B10.tif,thermal,LANDSAT_8,fx/mtl_landsat9.txt,,',
        'bad/bad_grid_B10.tif,thermal,LANDSAT_8,,fx/ndvi_shifted.tif,',
        'bad/bad_eps_B10.tif,thermal,LANDSAT_8,,,fx/emissivity_low.tif',
      ].join('\n') + '\n');
      const summary = await run(dataDir, { inputs: [path.join(tmp, 'bad')], manifestPath: manifest });
      expect(summary.outcome.status).toBe('incomplete');
      for (const r of await queryStore<{ path: string; status: string; error: string }>(dataDir, `SELECT path, status, error FROM scenes WHERE path LIKE $1`, [`${bad('')}%`])) {
        expect(r.status).toBe('failed');
        errors.set(path.basename(r.path), r.error);
      }
    }, 600_000);

    it('keeps what was stored: the earlier scenes and their statistics', async () => {
      expect(await queryStore(dataDir, `SELECT scene_id, district_id, mean_k, emissivity_source FROM zonal_stats ORDER BY scene_id, district_id`)).toEqual(before);
      const [p] = await queryStore<{ n: number }>(dataDir, `SELECT count(*)::int AS n FROM scenes WHERE status = 'processed'`);
      expect(p.n).toBe(2);
    });

    it('a thermal scene without constants anywhere', () => {
      expect(errors.get('other_B10.tif')).toMatch(/other_B10\.tif: thermal scene without band 10 constants: no metadata file \(looked for .*other_MTL\.txt.*\), no radiance_mult/);
    });

    it('a metadata file of the other spacecraft', () => {
      expect(errors.get('bad_craft_B10.tif')).toBe(`${path.join(fx, 'mtl_landsat9.txt')}: is the metadata of LANDSAT_9 but the scene ${bad('bad_craft_B10.tif')} is from LANDSAT_8; one spacecraft's constants are never applied to another's DN`);
    });

    it('an NDVI raster on another grid (refused, not resampled)', () => {
      expect(errors.get('bad_grid_B10.tif')).toMatch(new RegExp(`^${path.join(fx, 'ndvi_shifted.tif').replace(/[.]/g, '\\.')}: NDVI raster .* is not on the grid of the thermal scene .*bad_grid_B10\\.tif`));
    });

    it('an emissivity raster with values outside (0.8, 1]', () => {
      expect(errors.get('bad_eps_B10.tif')).toMatch(new RegExp(`^${path.join(fx, 'emissivity_low.tif').replace(/[.]/g, '\\.')}: emissivity 0\\.75 at row 10, column 10 is outside \\(0\\.8, 1\\]`));
    });

    it('an emissivity outside (0.8, 1] as option, manifest value or district property, before anything runs', async () => {
      await expect(run(dataDir, { inputs: [path.join(fx, 'other_B10.tif')], emissivity: 1.2 })).rejects.toThrow(/--emissivity: emissivity 1\.2 is outside \(0\.8, 1\]/);
      const manifest = path.join(tmp, 'bad-value.csv');
      await writeFile(manifest, `path,emissivity\n${path.join(fx, 'other_B10.tif')},0.7\n`);
      await expect(run(dataDir, { inputs: [path.join(fx, 'other_B10.tif')], manifestPath: manifest })).rejects.toThrow(/bad-value\.csv \(entry 1\): emissivity 0\.7 is outside/);
      const doc = JSON.parse(await readFile(districts, 'utf8'));
      doc.features[1].properties.emissivity = 0.5;
      const badDistricts = path.join(tmp, 'bad-districts.geojson');
      await writeFile(badDistricts, JSON.stringify(doc));
      await expect(run(dataDir, { inputs: [path.join(fx, 'other_B10.tif')], districtsPath: badDistricts })).rejects.toThrow(/bad-districts\.geojson \(district T2, property emissivity\): emissivity 0\.5/);
      expect(await queryStore(dataDir, `SELECT scene_id, district_id, mean_k, emissivity_source FROM zonal_stats ORDER BY scene_id, district_id`)).toEqual(before);
    }, 600_000);
  });
});

describe('thermal scene alone: constants found by its name, constant emissivity, no atmospheric correction', () => {
  let dataDir: string;
  let scene: string;
  let lstDir: string;

  beforeAll(async () => {
    dataDir = path.join(tmp, 'store-b');
    const archive = path.join(tmp, 'b');
    await mkdir(archive);
    for (const f of ['thermal_B10.tif', 'thermal_MTL.txt']) await copyFile(path.join(fx, f), path.join(archive, f));
    scene = path.join(archive, 'thermal_B10.tif');
    lstDir = path.join(tmp, 'lst');
    const summary = await run(dataDir, { inputs: [archive], emissivity: 0.97, writeLstDir: lstDir });
    expect(summary.outcome.status).toBe('succeeded');
  }, 600_000);

  it('gives the district statistics rasterio + NumPy compute with emissivity 0.97 and no atmosphere', async () => {
    expect(compare(await zonalOf(dataDir, scene), expected.cases.plain_097)).toEqual([]);
  });

  it('status says for the pass how its LST was made, and that it has no atmospheric correction', async () => {
    const out = JSON.parse(await cliOk(['status', '--format', 'json', '--data-dir', dataDir], cleanEnv()));
    expect(out.thermal_scenes).toHaveLength(1);
    const t = out.thermal_scenes[0];
    expect(t).toMatchObject({ path: scene, lst_method: 'emissivity_only', atmospheric_correction: false, emissivity_source: 'constant 0.97 (--emissivity)' });
    expect(t.how_lst_was_made).toContain('no atmospheric correction');
    const table = await cliOk(['status', '--data-dir', dataDir], cleanEnv());
    expect(table).toContain('passes converted from thermal DN:');
    expect(table).toMatch(/thermal_B10\.tif \(processed\): .*no atmospheric correction/);
  }, 120_000);

  it.runIf(hasGdal)('--write-lst writes a valid COG (GDAL validator) with the same district statistics', async () => {
    const cog = path.join(lstDir, 'thermal_B10_lst.tif');
    const code = [
      'import json, sys, numpy as np, rasterio, rasterio.features, rasterio.warp',
      'from osgeo_utils.samples.validate_cloud_optimized_geotiff import validate',
      'warnings, errors, _ = validate(sys.argv[1], full_check=True)',
      'out = {"errors": errors, "warnings": warnings, "stats": {}}',
      'with rasterio.open(sys.argv[1]) as src:',
      '    a = src.read(1).astype(np.float64); out["tags"] = src.tags()',
      '    for f in json.load(open(sys.argv[2]))["features"]:',
      '        g = rasterio.warp.transform_geom("EPSG:4326", src.crs, f["geometry"])',
      '        m = rasterio.features.geometry_mask([g], a.shape, src.transform, invert=True)',
      '        v = a[m]; v = v[~np.isnan(v)]',
      '        out["stats"][f["properties"]["id"]] = float(np.mean(v))',
      'print(json.dumps(out))',
    ].join('\n');
    const r = JSON.parse(execFileSync('/usr/bin/python3', ['-c', code, cog, districts], { encoding: 'utf8' }));
    expect(r.errors).toEqual([]);
    expect(r.warnings).toEqual([]);
    expect(r.tags).toMatchObject({ KIND: 'lst', UNITS: 'K', PASS: 'night', THERMAL_CONSTANTS_SOURCE: `metadata file ${path.join(tmp, 'b', 'thermal_MTL.txt')}` });
    expect(r.tags.LST_METHOD).toMatch(/no atmospheric correction/);
    for (const [id, e] of Object.entries(expected.cases.plain_097)) expect(Math.abs(r.stats[id] - e.mean)).toBeLessThan(TOL_K);
  }, 120_000);

  it('a scene with no metadata file and no manifest constants takes its spacecraft\'s built-in constants, with a notice', async () => {
    const dir = path.join(tmp, 'c');
    await mkdir(dir);
    await copyFile(path.join(fx, 'other_B10.tif'), path.join(dir, 'other_B10.tif'));
    const manifest = path.join(tmp, 'c.csv');
    await writeFile(manifest, 'path,kind,sensor\nc/other_B10.tif,thermal,Landsat 8\n');
    const notices: string[] = [];
    const summary = await run(dataDir, { inputs: [dir], manifestPath: manifest, onNotice: (m) => notices.push(m) });
    expect(summary.outcome.status).toBe('succeeded');
    expect(notices).toEqual([`${path.join(dir, 'other_B10.tif')}: no metadata file or manifest constants; used the built-in LANDSAT_8 band 10 constants (the scene's own metadata file is preferred)`]);
    const [s] = await queryStore<{ thermal_constants_source: string; warnings: string[] }>(dataDir, 'SELECT thermal_constants_source, warnings FROM scenes WHERE path = $1', [path.join(dir, 'other_B10.tif')]);
    expect(s.thermal_constants_source).toBe('built-in table (LANDSAT_8 band 10)');
    expect(s.warnings).toEqual(notices);
  }, 600_000);

  it('given per-pixel atmosphere rasters and NDVI for the stored scene, recomputes its statistics (the rte_ndvi case)', async () => {
    const manifest = path.join(tmp, 'b-again.csv'); // paths relative to the manifest's folder
    await writeFile(manifest, 'path,ndvi,transmittance,upwelling,downwelling\nb/thermal_B10.tif,fx/ndvi.tif,fx/atm_transmittance.tif,fx/atm_upwelling.tif,fx/atm_downwelling.tif\n');
    const summary = await run(dataDir, { inputs: [path.join(tmp, 'b')], manifestPath: manifest });
    expect(summary.outcome.status).toBe('succeeded');
    expect(compare(await zonalOf(dataDir, scene), expected.cases.rte_ndvi)).toEqual([]);
    const [s] = await queryStore<{ lst_method: string; atmosphere: unknown; emissivity_source: string }>(dataDir, 'SELECT lst_method, atmosphere, emissivity_source FROM scenes WHERE path = $1', [scene]);
    expect(s).toEqual({
      lst_method: 'rte',
      atmosphere: { transmittance_raster: path.join(fx, 'atm_transmittance.tif'), upwelling_raster: path.join(fx, 'atm_upwelling.tif'), downwelling_raster: path.join(fx, 'atm_downwelling.tif') },
      emissivity_source: `NDVI-threshold method on ${path.join(fx, 'ndvi.tif')}`,
    });
    // the same inputs again: the stored scene is not computed again (content hash and inputs unchanged)
    const processedAt = async () => (await queryStore<{ t: string }>(dataDir, 'SELECT processed_at AS t FROM scenes WHERE path = $1', [scene]))[0].t;
    const first = await processedAt();
    expect((await run(dataDir, { inputs: [path.join(tmp, 'b')], manifestPath: manifest })).outcome.status).toBe('succeeded');
    expect(await processedAt()).toBe(first);
  }, 600_000);
});

describe('district emissivity properties (zonal step of a thermal scene)', () => {
  it('a district with an emissivity property gets it, the others the constant; each source is named', async () => {
    const raster = await openRaster(path.join(FIX, 'thermal_B10.tif'));
    try {
      const doc = JSON.parse(await readFile(path.join(FIX, 'districts.geojson'), 'utf8'));
      const crs = rasterCrs(raster.header);
      const targets = doc.features.map((f: { properties: { id: string }; geometry: { coordinates: number[][][] } }) =>
        ({ id: f.properties.id, geometry: reprojectFlat([f.geometry.coordinates], GEOJSON_CRS, crs) }));
      const r = await zonalThermalScene(raster, targets, { coverage: 'centre' }, {
        constants: TIRS_CONSTANTS.LANDSAT_8.B10, atmosphere: null, sceneEmissivity: null,
        districtEmissivity: { T1: 0.95 }, fallback: { value: 0.97, source: 'constant 0.97 (--emissivity)' },
      });
      for (const row of r.results) {
        // the fixture script's cases plain_095 / plain_097 (rasterio + NumPy)
        const want = (row.id === 'T1' ? expected.cases.plain_095 : expected.cases.plain_097)[row.id];
        expect(row.stats.valid).toBe(want.valid);
        expect(Math.abs(row.stats.mean! - want.mean)).toBeLessThan(TOL_K);
        expect(Math.abs(row.stats.p90! - want.p90)).toBeLessThan(TOL_K);
      }
      expect(r.byTarget).toEqual({ T1: 'district property emissivity 0.95', T2: 'constant 0.97 (--emissivity)', T3: 'constant 0.97 (--emissivity)', T4: 'constant 0.97 (--emissivity)' });
      expect(r.sceneSource).toBe('per district: district property emissivity 0.95; constant 0.97 (--emissivity)');
    } finally {
      await raster.close();
    }
  });
});
