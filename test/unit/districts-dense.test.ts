/**
 * The rural ring from districts with 10^5-vertex rings and nearly collinear
 * points: it completes, and its area matches
 * - the annulus formula π((r + outer)² − (r + inner)²) for a disc city
 *   (derived from the circle area formula), and
 * - shapely (GEOS) on the unsimplified polygons, projected by GDAL's OSR to the
 *   same azimuthal equidistant frame (Debian's /usr/bin/python3; skipped without it).
 * Tolerances: buffer arcs are inscribed polygons with 16 segments per quarter
 * circle, area ratio 64·sin(2π/64)/2π = 0.99839 (derived from the polygon area
 * formula), hence 0.5 % against the exact annulus; against shapely (same arc
 * segmentation) the 1 m simplification moves each ring edge by at most 1 m, a
 * share of at most 1 m × (perimeters) / area < 0.05 % here, hence 0.1 %.
 * No timing is asserted: the machine may be loaded.
 */
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { kinks, multiPolygon } from '@turf/turf';
import { parseDistricts, ruralRing, SIMPLIFY_TOLERANCE_METRES, type District } from '../../workers/core/districts/index.js';
import { subtractWater } from '../../workers/run/pipeline.js';
import { InputError } from '../../workers/core/errors.js';
import { pythonModulesAvailable } from '../support/services.js';
import { denseCircle, denseHalfDiscs, denseStar, featureCollection, shapelyRingArea } from '../support/dense-districts.js';

const LON0 = 20.3, LAT0 = 10.2; // an invented place
const N = 100_000;
const hasShapely = await pythonModulesAvailable(['shapely', 'osgeo.osr'], 'dense districts against shapely');

let dir: string;
beforeAll(async () => { dir = await mkdtemp(join(tmpdir(), 'heatledger-dense-')); });
afterAll(async () => { await rm(dir, { recursive: true, force: true }); });

async function write(name: string, text: string): Promise<string> {
  const p = join(dir, name);
  await writeFile(p, text);
  return p;
}

function holesAndShells(d: District): { polygons: number; rings: number } {
  return { polygons: d.geometry.length, rings: d.geometry.reduce((s, p) => s + p.length, 0) };
}

describe('rural ring from 100,000-vertex districts', () => {
  it('a dense disc: the ring is the annulus and the districts keep every vertex', () => {
    const text = featureCollection({ disc: denseCircle(LON0, LAT0, 0, 0, 3000, N) });
    const ds = parseDistricts(text, 'disc.geojson');
    const ring = ruralRing(ds, 2000, 10000, { source: 'disc.geojson' });
    const expected = Math.PI * (13000 ** 2 - 5000 ** 2); // annulus formula
    expect(Math.abs(ring.areaSquareMetres / expected - 1)).toBeLessThan(5e-3);
    expect(holesAndShells(ring)).toEqual({ polygons: 1, rings: 2 });
    expect(ds[0].geometry[0][0]).toHaveLength(N + 1); // the district itself is not simplified
    expect(kinks(multiPolygon(ring.geometry)).features).toHaveLength(0); // @turf/kinks: no self-intersection
  });

  it('two dense half discs meeting on a nearly collinear diameter: one ring, no slivers', () => {
    const [east, west] = denseHalfDiscs(LON0, LAT0, 3000, N);
    const ds = parseDistricts(featureCollection({ east, west }), 'halves.geojson');
    for (const inner of [0, 2000]) {
      const ring = ruralRing(ds, inner, 10000);
      // the ring has one outer edge and one hole, the city: the shared diameter left no sliver behind
      expect(holesAndShells(ring)).toEqual({ polygons: 1, rings: 2 });
      const expected = Math.PI * (13000 ** 2 - (3000 + inner) ** 2); // annulus formula
      expect(Math.abs(ring.areaSquareMetres / expected - 1)).toBeLessThan(5e-3);
    }
  });

  it.skipIf(!hasShapely)('a dense star beside a dense circle: the area shapely gives for the unsimplified polygons', async () => {
    const text = featureCollection({ circle: denseCircle(LON0, LAT0, 0, 0, 2000, N), star: denseStar(LON0, LAT0, 4500, 0, 1500, 900, N) });
    const path = await write('star.geojson', text);
    const ds = parseDistricts(text, path);
    for (const [inner, outer] of [[2000, 10000], [0, 1000]]) {
      const ring = ruralRing(ds, inner, outer, { source: path });
      // the ring is centred on the districts' bounding box, as the reference is
      let x0 = Infinity, x1 = -Infinity, y0 = Infinity, y1 = -Infinity;
      for (const d of ds) for (const [x, y] of d.geometry[0][0]) { x0 = Math.min(x0, x); x1 = Math.max(x1, x); y0 = Math.min(y0, y); y1 = Math.max(y1, y); }
      const lon0 = (x0 + x1) / 2, lat0 = (y0 + y1) / 2;
      const reference = shapelyRingArea(path, lon0, lat0, inner, outer);
      console.log(`dense star + circle, ring ${inner}-${outer} m: ours / shapely = ${(ring.areaSquareMetres / reference).toFixed(6)}`);
      expect(Math.abs(ring.areaSquareMetres / reference - 1)).toBeLessThan(1e-3);
    }
  }, 120_000);

  it('the water cut handles a 100,000-vertex lake', async () => {
    const ds = parseDistricts(featureCollection({ disc: denseCircle(LON0, LAT0, 0, 0, 3000, 1000) }), 'disc.geojson');
    const ring = ruralRing(ds, 2000, 10000);
    // a lake of radius 1 km centred 9 km east: wholly inside the 5-13 km annulus
    const lakePath = await write('lake.geojson', featureCollection({ lake: denseCircle(LON0, LAT0, 9000, 0, 1000, N) }));
    const cut = await subtractWater(ring, lakePath);
    // circle area formula; the simplified lake boundary lies within 1 m of the original
    const lake = Math.PI * 1000 ** 2;
    expect(Math.abs(ring.areaSquareMetres - cut.areaSquareMetres - lake)).toBeLessThan(2 * Math.PI * 1000 * SIMPLIFY_TOLERANCE_METRES + lake * 1e-4);
    expect(holesAndShells(cut)).toEqual({ polygons: 1, rings: 3 });
  });

  it('a polygon the overlay cannot take is an InputError naming the file', () => {
    const ok = parseDistricts(featureCollection({ disc: denseCircle(LON0, LAT0, 0, 0, 3000, 64) }), 'disc.geojson');
    // a coordinate no projection can take (parseDistricts refuses it; built here by hand)
    const broken: District = { ...ok[0], id: 'broken', geometry: [[[[LON0, LAT0], [LON0 + 0.01, Number.NaN], [LON0, LAT0 + 0.01], [LON0, LAT0]]]] };
    let err: unknown;
    try {
      ruralRing([ok[0], broken], 2000, 10000, { source: 'city.geojson' });
    } catch (e) {
      err = e;
    }
    expect(err).toBeInstanceOf(InputError);
    expect((err as Error).message).toMatch(/^city\.geojson: /);
  });
});
