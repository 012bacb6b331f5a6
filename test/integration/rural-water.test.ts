/**
 * The rural ring with the generator's water cut out, checked against rasterio +
 * NumPy (GDAL 3.6 decoder, GDAL's pixel-centre burn rule, all_touched=False):
 *
 * - the water GeoJSON the generator writes beside its scenes covers exactly the
 *   water pixels outside the districts (open sea, estuary, river), told apart
 *   by their albedo: water 0.06-0.08 against farmland 0.16-0.24 (the generator's
 *   invented values; broadband albedo of water below 0.1 and of crops near 0.2
 *   is common practice, no source);
 * - a store first filled without `--water` and then ingested again with it
 *   holds the rural means of the land-only ring on every pass, not those of the
 *   first ring, and night SUHI = district minus that rural mean.
 *
 * Needs /usr/bin/python3 with rasterio and NumPy (skipped without them, a
 * failure under HEATLEDGER_REQUIRE_SERVICES=1).
 */
import { execFileSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { ArchiveResult } from '../../demo-data/generate.js';
import { runtimeConfig } from '../../workers/run/config.js';
import { openConfiguredStore } from '../../workers/store/configured.js';
import { listDistricts } from '../../workers/store/index.js';
import { districtTable } from '../../workers/store/district-table.js';
import { cleanEnv, cliOk, ensurePipelineBuild, killAllChildren, makeArchive, rasterioDistrictMeans, SMALL_ARCHIVE, type ReferencePass } from '../support/pipeline-harness.js';
import { pythonModulesAvailable } from '../support/services.js';

await ensurePipelineBuild();
const hasRasterio = await pythonModulesAvailable(['rasterio', 'numpy'], 'rural-water against rasterio');

const tmp = mkdtempSync(path.join(tmpdir(), 'heatledger-rural-water-'));
const dataDir = path.join(tmp, 'store');
let archive: ArchiveResult;

/** The stored rural reference as a one-feature GeoJSON file (id 'rural'). */
async function storedRural(file: string): Promise<string> {
  const store = await openConfiguredStore(runtimeConfig({ dataDir }));
  try {
    const rural = (await listDistricts(store)).find((d) => d.id === 'rural');
    expect(rural).toBeDefined();
    writeFileSync(file, JSON.stringify({ type: 'FeatureCollection', features: [{ type: 'Feature', properties: { id: 'rural' }, geometry: rural!.geometry }] }));
    return file;
  } finally {
    await store.close();
  }
}

interface DateRow { district: string; date: string; lst_day_k: number | null; lst_night_k: number | null; suhi_night_k: number | null }

async function storedDateRows(): Promise<DateRow[]> {
  const store = await openConfiguredStore(runtimeConfig({ dataDir }));
  try {
    return (await districtTable(store, 'date')) as unknown as DateRow[];
  } finally {
    await store.close();
  }
}

let ringWithWater: ReferencePass[] = [];

beforeAll(async () => {
  archive = await makeArchive(path.join(tmp, 'archive'), SMALL_ARCHIVE);
  const base = ['ingest', path.join(tmp, 'archive'), '--districts', archive.districtsPath, '--data-dir', dataDir, '--no-progress', '--threads', '1'];
  await cliOk(base, cleanEnv(), 300_000);
  const lst = archive.files.filter((f) => /_lst_(day|night)\.tif$/.test(f));
  ringWithWater = rasterioDistrictMeans(lst, await storedRural(path.join(tmp, 'ring-with-water.geojson')));
  await cliOk([...base, '--water', archive.waterPath], cleanEnv(), 300_000);
}, 600_000);

afterAll(async () => {
  await killAllChildren();
  rmSync(tmp, { recursive: true, force: true });
});

describe.skipIf(!hasRasterio)('the demo water and a rural ring changed in a filled store', () => {
  it('water GeoJSON = the water pixels outside the districts (rasterio burn of both files, albedo below 0.12)', () => {
    const albedo = archive.files.find((f) => f.endsWith('_albedo.tif'))!;
    const code = `
import json, sys
import numpy as np
import rasterio
from rasterio.features import rasterize
from rasterio.warp import transform_geom
with rasterio.open(sys.argv[1]) as ds:
    a = ds.read(1).astype(np.float64) * ds.scales[0] + ds.offsets[0]
    def burn(path):
        fc = json.load(open(path))
        geoms = [(transform_geom('EPSG:4326', ds.crs, f['geometry']), 1) for f in fc['features']]
        return rasterize(geoms, out_shape=a.shape, transform=ds.transform, fill=0, all_touched=False, dtype='uint8').astype(bool)
    water = burn(sys.argv[2])
    outside = ~burn(sys.argv[3])
    wet = a < 0.12
    print(json.dumps({'wet': int((wet & outside).sum()), 'burnt': int((water & outside).sum()),
                      'burntDry': int((water & outside & ~wet).sum()), 'wetUnburnt': int((wet & outside & ~water).sum())}))
`;
    const r = JSON.parse(execFileSync('/usr/bin/python3', ['-c', code, albedo, archive.waterPath, archive.districtsPath], { encoding: 'utf8' }));
    expect(r.wet).toBeGreaterThan(1000);
    expect(r.burntDry).toBe(0);
    expect(r.wetUnburnt).toBe(0);
    expect(r.burnt).toBe(r.wet);
  });

  it('rural means on every pass = rasterio over the land-only ring, not over the first ring', async () => {
    const lst = archive.files.filter((f) => /_lst_(day|night)\.tif$/.test(f)).sort();
    const landOnly = rasterioDistrictMeans(lst, await storedRural(path.join(tmp, 'ring-land.geojson')));
    const districtRef = rasterioDistrictMeans(lst, archive.districtsPath);
    const refOf = (ref: ReferencePass[], file: string, id: string) => ref.find((p) => path.basename(p.scene) === path.basename(file) && p.district === id)!;
    // the stored values at full precision (the CLI's JSON rounds to 0.0001 K)
    const rows = await storedDateRows();
    let compared = 0;
    let suhiCompared = 0;
    // Table date = UTC date of the day pass; its night pass is the next LST file (12 h later).
    for (const day of lst.filter((f) => f.endsWith('_lst_day.tif'))) {
      const night = lst[lst.indexOf(day) + 1];
      const stamp = path.basename(day).split('_')[1];
      const date = `${stamp.slice(0, 4)}-${stamp.slice(4, 6)}-${stamp.slice(6, 8)}`;
      const rural = rows.find((r) => r.district === 'rural' && r.date === date);
      expect(rural, date).toBeDefined();
      for (const [file, value] of [[day, rural!.lst_day_k], [night, rural!.lst_night_k]] as const) {
        const land = refOf(landOnly, file, 'rural');
        const first = refOf(ringWithWater, file, 'rural');
        // The sea fills part of the first ring: fewer pixels in the land-only one.
        expect(land.pixels).toBeLessThan(first.pixels);
        if (land.valid / land.pixels < 0.5) continue;
        expect(Math.abs((value as number) - land.meanKelvin!), path.basename(file)).toBeLessThan(1e-9);
        // The two rings differ by far more than the tolerance, so stale statistics would fail above.
        expect(Math.abs(land.meanKelvin! - first.meanKelvin!)).toBeGreaterThan(0.1);
        compared++;
      }
      const core = rows.find((r) => r.district === 'D01' && r.date === date);
      const d01 = refOf(districtRef, night, 'D01');
      const land = refOf(landOnly, night, 'rural');
      if (core?.suhi_night_k != null && d01.meanKelvin !== null && land.meanKelvin !== null) {
        // SUHI = district LST minus rural reference LST of the same pass (common practice, no source).
        expect(Math.abs(core.suhi_night_k - (d01.meanKelvin - land.meanKelvin))).toBeLessThan(1e-9);
        suhiCompared++;
      }
    }
    expect(compared).toBeGreaterThan(4);
    expect(suhiCompared).toBeGreaterThan(1);
  });
});
