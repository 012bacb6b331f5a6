/**
 * `heatledger ingest` with district rings of 100,000 vertices (a circle and a
 * 12-pointed star whose edges are runs of nearly collinear points) and a
 * 100,000-vertex lake given with --water: the command succeeds, the stored
 * rural ring has the area shapely (GEOS) gives for the unsimplified polygons
 * (Debian's /usr/bin/python3 with GDAL's OSR for the projection), and the
 * districts' statistics come from their original polygons: pixel counts and
 * means equal those of rasterio + NumPy with GDAL's pixel-centre rasterize rule.
 * Skipped without /usr/bin/python3 and its shapely, GDAL and rasterio.
 * Tolerance on the ring area: 0.1 % (1 m simplification × ring perimeters /
 * ring area < 0.05 %, see test/unit/districts-dense.test.ts). No timing asserted.
 */
import { mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { ArchiveResult } from '../../demo-data/generate.js';
import { openStore } from '../../workers/store/index.js';
import { cleanEnv, cliOk, ensurePipelineBuild, makeArchive, rasterioDistrictMeans } from '../support/pipeline-harness.js';
import { denseCircle, denseStar, featureCollection, shapelyRingArea } from '../support/dense-districts.js';
import { pythonModulesAvailable } from '../support/services.js';

await ensurePipelineBuild();
const N = 100_000;
const hasReference = await pythonModulesAvailable(['shapely', 'osgeo.osr', 'rasterio', 'numpy'], 'dense-districts ingest');

/** Every [x, y] of GeoJSON coordinates of any nesting. */
const points = (c: unknown): number[][] => (typeof (c as number[])[0] === 'number' ? [c as number[]] : (c as unknown[]).flatMap(points));

function bboxCentre(pts: number[][]): [number, number] {
  let x0 = Infinity, x1 = -Infinity, y0 = Infinity, y1 = -Infinity;
  for (const [x, y] of pts) { x0 = Math.min(x0, x); x1 = Math.max(x1, x); y0 = Math.min(y0, y); y1 = Math.max(y1, y); }
  return [(x0 + x1) / 2, (y0 + y1) / 2];
}

let tmp: string;
let archive: ArchiveResult;
beforeAll(async () => {
  tmp = await mkdtemp(path.join(os.tmpdir(), 'heatledger-dense-it-'));
  archive = await makeArchive(path.join(tmp, 'archive'), { years: 1, pairsPerYear: 1, pixelSizeMetres: 250 });
}, 120_000);
afterAll(async () => { await rm(tmp, { recursive: true, force: true }); });

describe.skipIf(!hasReference)('ingest with 100,000-vertex district rings', () => {
  it('succeeds; the rural ring matches shapely and district statistics match rasterio on the original polygons', async () => {
    // centre of the invented city's districts
    const city = JSON.parse(await readFile(archive.districtsPath, 'utf8')) as { features: { geometry: { coordinates: unknown } }[] };
    const [lon0, lat0] = bboxCentre(city.features.flatMap((f) => points(f.geometry.coordinates)));
    const districtsPath = path.join(tmp, 'dense.geojson');
    await writeFile(districtsPath, featureCollection({
      circle: denseCircle(lon0, lat0, -2500, 0, 2000, N),
      star: denseStar(lon0, lat0, 2500, 0, 1500, 900, N),
    }));
    // a lake 3.2-4.8 km east of the star's tips: inside the 2-10 km ring
    const waterPath = path.join(tmp, 'lake.geojson');
    await writeFile(waterPath, featureCollection({ lake: denseCircle(lon0, lat0, 8000, 0, 800, N) }));

    const dataDir = path.join(tmp, 'data');
    const env = cleanEnv();
    const summary = JSON.parse(await cliOk(['ingest', path.dirname(archive.files[0]), '--districts', districtsPath, '--water', waterPath, '--json', '--threads', '1', '--data-dir', dataDir], env, 300_000));
    expect(summary.failures).toEqual([]);
    expect(summary.unreadable).toEqual([]);

    const store = await openStore({ dataDir });
    try {
      const districts = await store.query<{ id: string; geometry: { coordinates: number[][][][] }; area_m2: number }>(`SELECT id, geometry, area_m2 FROM districts ORDER BY id`);
      expect(districts.map((d) => d.id)).toEqual(['circle', 'rural', 'star']);
      // the districts are stored as given, not simplified
      for (const id of ['circle', 'star']) {
        const ring = districts.find((d) => d.id === id)!.geometry.coordinates[0][0];
        expect(ring.length).toBeGreaterThan(N - 100);
      }
      // the ring's frame is centred on the districts' bounding box; so is the reference's
      const [c0, c1] = bboxCentre(JSON.parse(await readFile(districtsPath, 'utf8')).features.flatMap((f: { geometry: { coordinates: unknown } }) => points(f.geometry.coordinates)));
      const reference = shapelyRingArea(districtsPath, c0, c1, 2000, 10000, waterPath);
      const rural = districts.find((d) => d.id === 'rural')!;
      console.log(`dense districts: stored rural ring / shapely = ${(rural.area_m2 / reference).toFixed(6)}`);
      expect(Math.abs(rural.area_m2 / reference - 1)).toBeLessThan(1e-3);

      // statistics from the original polygons: the same pixels and means as rasterio + NumPy
      const rows = await store.query<{ path: string; district_id: string; pixels: number; mean_k: number | null }>(
        `SELECT s.path, z.district_id, z.pixels, z.mean_k FROM zonal_stats z JOIN scenes s ON s.id = z.scene_id
         WHERE s.kind = 'lst' AND z.district_id IN ('circle', 'star')`,
      );
      const lst = archive.files.filter((f) => /_lst_(day|night)\.tif$/.test(f));
      expect(rows).toHaveLength(lst.length * 2);
      const ref = rasterioDistrictMeans(lst, districtsPath);
      for (const r of rows) {
        const p = ref.find((q) => q.scene === r.path && q.district === r.district_id)!;
        expect(p, `${r.path} ${r.district_id}`).toBeDefined();
        expect(r.pixels).toBe(p.pixels);
        if (p.meanKelvin === null) expect(r.mean_k).toBeNull();
        else expect(Math.abs(r.mean_k! - p.meanKelvin)).toBeLessThan(1e-9);
      }
    } finally {
      await store.close();
    }
  }, 600_000);
});
