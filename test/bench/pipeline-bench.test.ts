/**
 * Pieces of the pipeline bench that its figures rest on: the interval union
 * behind the storage share, the flag splitting, the districts file and one
 * generated scene. The scene is read back with GDAL (through rasterio, Debian
 * python3-rasterio) rather than with our own reader.
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import * as turf from '@turf/turf';
import { afterAll, describe, expect, it } from 'vitest';
import { DISTRICT_CELL_METRES, districtCollection, sceneFields, writePipelineScene } from './pipeline-data.js';
import { pipelineFlags, unionLength } from './pipeline.js';
import { pythonModulesAvailable } from '../support/services.js';

const dir = mkdtempSync(join(tmpdir(), 'bench-pipeline-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const HAVE_RASTERIO = await pythonModulesAvailable(['rasterio', 'numpy'], 'pipeline bench scene read with GDAL');
if (!HAVE_RASTERIO) console.log('pipeline bench: GDAL read-back not run: /usr/bin/python3 with rasterio (python3-rasterio) is missing');

describe('unionLength', () => {
  it('counts overlapping time once', () => {
    // derived from interval arithmetic: [0,2] u [1,3] u [5,6] = [0,3] u [5,6], length 3 + 1
    expect(unionLength([[5, 6], [0, 2], [1, 3]])).toBe(4);
    // a contained interval adds nothing: [0,10] u [2,3] = [0,10]
    expect(unionLength([[0, 10], [2, 3]])).toBe(10);
    expect(unionLength([])).toBe(0);
  });
});

describe('pipelineFlags', () => {
  it('takes the section flags off and leaves the rest', () => {
    const r = pipelineFlags(['--json', '--all', '--pipeline-reps', '3', '--rounds', '2', '--pipeline-configs', 'embedded_1,distributed_2']);
    expect(r.pipeline).toBe(true);
    expect(r.argv).toEqual(['--json', '--rounds', '2']);
    expect(r.options).toEqual({ repetitions: 3, configs: ['embedded_1', 'distributed_2'] });
    expect(pipelineFlags(['--json']).pipeline).toBe(false);
    expect(() => pipelineFlags(['--pipeline-reps', '0'])).toThrow(/1 to 9/);
    expect(() => pipelineFlags(['--pipeline-configs', 'embedded_3'])).toThrow(/embedded_1/);
  });
});

describe('pipeline bench districts', () => {
  const fc = districtCollection() as GeoJSON.FeatureCollection<GeoJSON.Polygon>;
  it('are 20 counter-clockwise squares of 2.4 km', () => {
    expect(fc.features).toHaveLength(20);
    for (const f of fc.features) {
      const ring = f.geometry.coordinates[0];
      // RFC 7946 section 3.1.6: exterior rings counter-clockwise; checked with turf
      expect(turf.booleanClockwise(ring)).toBe(false);
      // 2.4 km x 2.4 km in UTM grid metres; the grid scale factor near the central meridian is
      // 0.9996 (UTM definition, from memory), so the true area is 5.76 km2 / 0.9996^2 ~ 5.765 km2;
      // turf's spherical area differs from the ellipsoidal one by well under 1 % (common practice, no source)
      expect(turf.area(f) / (DISTRICT_CELL_METRES ** 2 / 0.9996 ** 2)).toBeCloseTo(1, 1);
    }
  });
});

describe.runIf(HAVE_RASTERIO)('a generated scene, read with GDAL', () => {
  it('has the layout, scaling, nodata and metadata the bench promises', async () => {
    const path = await writePipelineScene(dir, 0, sceneFields());
    const code = `
import json, sys, rasterio
with rasterio.open(sys.argv[1]) as ds:
    a = ds.read(1)
    print(json.dumps({'size': [ds.width, ds.height], 'dtype': ds.dtypes[0], 'block': ds.block_shapes[0],
      'compress': ds.compression.name if ds.compression else None, 'predictor': ds.tags(ns='IMAGE_STRUCTURE').get('PREDICTOR'),
      'nodata': ds.nodata, 'scale': ds.scales[0], 'offset': ds.offsets[0], 'tags': ds.tags(), 'epsg': ds.crs.to_epsg(),
      'res': list(ds.res), 'meanK': float(a[a != 0].mean() * ds.scales[0] + ds.offsets[0])}))
`;
    const r = spawnSync('/usr/bin/python3', ['-c', code, path], { encoding: 'utf8' });
    expect(r.status, r.stderr).toBe(0);
    const g = JSON.parse(r.stdout);
    expect(g.size).toEqual([1000, 1000]);
    expect(g.dtype).toBe('uint16');
    expect(g.block).toEqual([256, 256]);
    expect(g.compress).toBe('deflate');
    expect(g.predictor).toBe('2');
    expect(g.nodata).toBe(0);
    // Landsat Collection 2 ST scaling (USGS LSDS-1328, "Landsat 8-9 OLI/TIRS Collection 2 Level 2 Data Format Control Book")
    expect(g.scale).toBeCloseTo(0.00341802, 8);
    expect(g.offset).toBe(149);
    expect(g.tags.ACQUISITION_TIME).toBe('2023-03-01T12:42:00Z');
    expect(g.tags.KIND).toBe('lst');
    expect(g.epsg).toBe(32625);
    expect(g.res).toEqual([30, 30]);
    // first day pass: level 296 + 10 sin(season) K (about 286 K in early March) plus a 2-8 K heat island
    // over part of the scene (derived from the generator's formula)
    expect(g.meanK).toBeGreaterThan(280);
    expect(g.meanK).toBeLessThan(295);
  });
});
