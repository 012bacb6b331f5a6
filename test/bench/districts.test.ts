/**
 * The bench wards must tile the city: no gaps, no overlaps, RFC 7946 winding,
 * 600 vertices each. The tiling is checked with GDAL's rasterizer (through
 * rasterio, Debian python3-rasterio) rather than with our own coverage code.
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { CITY_COLS, CITY_ROWS, SEGMENTS_PER_SIDE, wardCollection, wardRingsUtm } from './districts.js';
import { pythonModulesAvailable } from '../support/services.js';

const dir = mkdtempSync(join(tmpdir(), 'bench-wards-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** Shoelace signed area (Gauss); positive for a counter-clockwise ring in x-east, y-north axes. */
function signedArea(ring: number[][]): number {
  let s = 0;
  for (let i = 0; i + 1 < ring.length; i++) s += ring[i][0] * ring[i + 1][1] - ring[i + 1][0] * ring[i][1];
  return s / 2;
}

const HAVE_RASTERIO = await pythonModulesAvailable(['rasterio', 'numpy'], 'bench districts against rasterio');
if (!HAVE_RASTERIO) console.log('bench wards: GDAL rasterization check not run: /usr/bin/python3 with rasterio (python3-rasterio) is missing');

describe('bench wards', () => {
  const fc = wardCollection();

  it('has 60 closed counter-clockwise rings of 4 x 150 vertices', () => {
    expect(fc.features).toHaveLength(CITY_COLS * CITY_ROWS);
    for (const f of fc.features) {
      const ring = f.geometry.coordinates[0];
      expect(ring).toHaveLength(4 * SEGMENTS_PER_SIDE + 1); // derived from 4 sides x 150 segments + closing position
      expect(ring[0]).toEqual(ring[ring.length - 1]);
      // RFC 7946 section 3.1.6: exterior rings counter-clockwise.
      expect(signedArea(ring)).toBeGreaterThan(0);
    }
  });

  it('shares every interior side exactly, vertex for vertex, with its neighbour', () => {
    const rings = wardRingsUtm();
    const edges = new Map<string, number>();
    for (const ring of rings) {
      for (let i = 0; i + 1 < ring.length; i++) {
        const key = `${ring[i]}|${ring[i + 1]}`;
        edges.set(key, (edges.get(key) ?? 0) + 1);
      }
    }
    let shared = 0;
    for (const key of edges.keys()) {
      const [a, b] = key.split('|');
      if (edges.has(`${b}|${a}`)) shared++;
    }
    // Interior sides: (cols-1)*rows vertical + cols*(rows-1) horizontal, each 150 segments seen from both sides.
    expect(shared).toBe(2 * SEGMENTS_PER_SIDE * ((CITY_COLS - 1) * CITY_ROWS + CITY_COLS * (CITY_ROWS - 1)));
  });

  it.skipIf(!HAVE_RASTERIO)('covers every 30 m cell centre of the city once under GDAL rasterization (rasterio geometry_mask)', () => {
    const path = join(dir, 'wards.geojson');
    writeFileSync(path, JSON.stringify(fc));
    const script = `
import json, sys, numpy as np, rasterio.features, rasterio.warp
from affine import Affine
fc = json.load(open(sys.argv[1]))
# The bench scene's grid (UTM 25N, 30 m, origin 395000 E) around the city, 300 m beyond it.
t = Affine(30, 0, 484700, 0, -30, 3915300)
shape = (1020, 1020)
count = np.zeros(shape, np.int32)
for f in fc['features']:
    g = rasterio.warp.transform_geom('EPSG:4326', 'EPSG:32625', f['geometry'])
    count += rasterio.features.geometry_mask([g], out_shape=shape, transform=t, invert=True)
# Cell centres more than 160 m inside the 30 km square (wiggles reach 150 m).
inner = count[16:-16, 16:-16]
print(json.dumps({'max': int(count.max()), 'inner_min': int(inner.min()), 'inner_cells': int(inner.size)}))
`;
    const r = spawnSync('/usr/bin/python3', ['-c', script, path], { encoding: 'utf8', timeout: 600_000 });
    expect(r.stderr).toBe('');
    const out = JSON.parse(r.stdout) as { max: number; inner_min: number; inner_cells: number };
    expect(out.max).toBe(1); // no cell centre in two wards
    expect(out.inner_min).toBe(1); // no gap inside the city
    expect(out.inner_cells).toBe(988 * 988);
  });
});
