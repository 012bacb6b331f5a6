/**
 * WGS 84 lon/lat -> UTM without proj4 (workers/core/crs/utm.ts), against proj4
 * (the registry library the general path uses; its +proj=utm is the same
 * Krüger/Poder-Engsager series) and against PROJ through GDAL (Debian's
 * rasterio, rasterio.warp.transform) where /usr/bin/python3 has it.
 */
import { spawnSync } from 'node:child_process';
import { describe, expect, it } from 'vitest';
import { crsDefinitionForEpsg, makeTransformer } from '../../workers/core/crs/index.js';
import { loadProj4 } from '../../workers/core/crs/proj4.js';
import { utmForward, utmZoneOf } from '../../workers/core/crs/utm.js';
import { mulberry32 } from '../../workers/core/prng.js';
import { pythonModulesAvailable } from '../support/services.js';

const haveRasterio = await pythonModulesAvailable(['rasterio.warp'], 'UTM against PROJ');

const WGS84 = crsDefinitionForEpsg(4326);

/** Points across zones and hemispheres, up to 25 degrees from the central meridian. */
function points(): { code: number; lon: number; lat: number }[] {
  const rnd = mulberry32(7);
  const out = [];
  for (const code of [32601, 32625, 32633, 32660, 32701, 32719, 32760]) {
    const lon0 = ((code % 100) - 1) * 6 - 177;
    for (let i = 0; i < 60; i++) {
      const south = code > 32700;
      const lat = (south ? -1 : 1) * 84 * rnd();
      const spread = i < 40 ? 3.5 : 25;
      out.push({ code, lon: lon0 - spread + 2 * spread * rnd(), lat });
    }
  }
  return out;
}

describe('UTM without proj4', () => {
  it('reads the zone of the definitions crsDefinitionForEpsg writes, and nothing else', () => {
    expect(utmZoneOf(crsDefinitionForEpsg(32633))).toEqual({ zone: 33, south: false });
    expect(utmZoneOf(crsDefinitionForEpsg(32719))).toEqual({ zone: 19, south: true });
    expect(utmZoneOf('+proj=utm +zone=33 +ellps=intl +units=m +no_defs')).toBeNull();
    expect(utmZoneOf('+proj=utm +zone=61 +datum=WGS84 +units=m +no_defs')).toBeNull();
  });

  it('puts the central meridian on the equator at (500000, 0), or 10000000 north in the south (UTM definition; common practice, no source)', () => {
    const out = [0, 0];
    expect(utmForward(33, false)(15, 0, out)).toBe(true);
    expect(out[0]).toBeCloseTo(500_000, 9);
    expect(out[1]).toBeCloseTo(0, 9);
    utmForward(33, true)(15, 0, out);
    expect(out[1]).toBeCloseTo(10_000_000, 9);
  });

  it('agrees with proj4 within a micrometre', () => {
    const proj4 = loadProj4();
    let worst = 0;
    for (const p of points()) {
      const [ex, ey] = proj4(WGS84, crsDefinitionForEpsg(p.code)).forward([p.lon, p.lat]);
      const [x, y] = makeTransformer(WGS84, crsDefinitionForEpsg(p.code))(p.lon, p.lat);
      worst = Math.max(worst, Math.abs(x - ex), Math.abs(y - ey));
    }
    expect(worst).toBeLessThan(1e-6);
  });

  it('leaves points more than 30 degrees from the zone to proj4, which gives the same answer as before', () => {
    const t = makeTransformer(WGS84, crsDefinitionForEpsg(32633));
    const [ex, ey] = loadProj4()(WGS84, crsDefinitionForEpsg(32633)).forward([60, 10]);
    expect(t(60, 10)).toEqual([ex, ey]);
    expect(utmForward(33, false)(60, 10, [0, 0])).toBe(false);
  });

  it.skipIf(!haveRasterio)('agrees with PROJ (through GDAL, rasterio.warp.transform) within a micrometre', () => {
    const ps = points();
    const script = `
import json, sys
from rasterio.warp import transform
ps = json.load(sys.stdin)
out = []
for p in ps:
    xs, ys = transform('EPSG:4326', 'EPSG:%d' % p['code'], [p['lon']], [p['lat']])
    out.append([xs[0], ys[0]])
print(json.dumps(out))`;
    const r = spawnSync('/usr/bin/python3', ['-c', script], { input: JSON.stringify(ps), encoding: 'utf8' });
    expect(r.status, r.stderr).toBe(0);
    const ref = JSON.parse(r.stdout) as [number, number][];
    let worst = 0;
    ps.forEach((p, i) => {
      const [x, y] = makeTransformer(WGS84, crsDefinitionForEpsg(p.code))(p.lon, p.lat);
      worst = Math.max(worst, Math.abs(x - ref[i][0]), Math.abs(y - ref[i][1]));
    });
    expect(worst).toBeLessThan(1e-6);
  });
});
