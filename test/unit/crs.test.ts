import { describe, expect, it } from 'vitest';
import {
  crsDefinitionForEpsg,
  isGeographic,
  makeTransformer,
  reprojectBBox,
  reprojectFlat,
} from '../../workers/core/crs/index.js';
import { InputError } from '../../workers/core/errors.js';

/**
 * Expected values from GDAL 3.6.2 / PROJ 9.1 (Debian python3-gdal), produced once with
 *   /usr/bin/python3 -c "from osgeo import osr; a=osr.SpatialReference(); a.ImportFromEPSG(S);
 *     a.SetAxisMappingStrategy(osr.OAMS_TRADITIONAL_GIS_ORDER); b=...ImportFromEPSG(T) (same);
 *     print(osr.CoordinateTransformation(a, b).TransformPoint(x, y))"
 * (x, y easting/longitude first). For 27700 and 2056 PROJ picked the Helmert
 * transformations EPSG:1314 and EPSG:1676 (checked with `projinfo -s EPSG:27700 -t EPSG:4326`).
 * Rows: [source EPSG, target EPSG, x, y, expected X, expected Y].
 */
const GDAL_POINTS: ReadonlyArray<readonly [number, number, number, number, number, number]> = [
  [4326, 32633, 15.0, 52.0, 500000.0, 5761038.2126],
  [4326, 32633, 12.3456, 48.7654, 304949.3621, 5404775.8166],
  [4326, 32633, 18.9, 60.1, 716791.8572, 6668947.9576],
  [4326, 32719, -69.0, -33.5, 500000.0, 6293280.7795],
  [4326, 32719, -71.25, -40.1, 308212.6399, 5558717.382],
  [4326, 3857, 13.4, 52.5, 1491681.1766, 6891041.7239],
  [4326, 3857, -122.4, 37.8, -13625505.6731, 4551210.9197],
  [4326, 3857, 151.2, -33.9, 16831507.0079, -4015382.3601],
  [4326, 3035, 10.0, 52.0, 4321000.0, 3210000.0],
  [4326, 3035, 2.35, 48.85, 3760536.8229, 2888771.021],
  [4326, 3035, 24.9, 60.2, 5142477.8489, 4208976.2257],
  [4326, 27700, -1.5, 52.5, 434039.4573, 289239.2811],
  [4326, 27700, -3.2, 55.95, 325160.2969, 673646.563],
  [4326, 27700, 0.1, 51.5, 545860.3511, 179986.2154],
  [4326, 2056, 7.44, 46.95, 2600104.1095, 1199879.6282],
  [4326, 2056, 8.55, 47.37, 2683941.5303, 1247167.393],
  [4326, 25832, 9.99, 53.55, 565590.9407, 5933912.1654],
  [4326, 26910, -123.1, 49.25, 492722.4254, 5455252.5108],
  [4326, 2154, 2.35, 48.85, 652301.5648, 6861302.7259],
  [4326, 2154, 5.37, 43.3, 892394.7774, 6247424.6458],
  [4326, 7855, 144.96, -37.81, 320422.8203, 5813305.2226],
  [4326, 2193, 174.76, -36.85, 1756911.9449, 5920321.8182],
  // DHDN geographic -> DHDN / GK zone 3: projection only (GDAL would use the
  // BETA2007 grid for WGS 84 -> 31467, which proj4 cannot read offline).
  [4314, 31467, 9.18, 48.78, 3513227.2212, 5404625.4496],
  // Amersfoort / RD New: PROJ picked EPSG:4833 (coordinate-frame Helmert).
  [4326, 28992, 4.9, 52.37, 121819.3652, 487013.7615],
];

/** Same source; projected -> WGS 84 degrees. */
const GDAL_INVERSE: ReadonlyArray<readonly [number, number, number, number, number, number]> = [
  [27700, 4326, 530000.0, 180000.0, -0.1283539405, 51.5039908276],
  [2056, 4326, 2600000.0, 1200000.0, 7.4386324209, 46.9510827719],
];

describe('crsDefinitionForEpsg + makeTransformer against GDAL/PROJ', () => {
  it.each(GDAL_POINTS)('EPSG:%i -> EPSG:%i at (%f, %f) within 1 cm', (s, t, x, y, ex, ey) => {
    const [px, py] = makeTransformer(crsDefinitionForEpsg(s), crsDefinitionForEpsg(t))(x, y);
    expect(Math.abs(px - ex)).toBeLessThan(1e-2);
    expect(Math.abs(py - ey)).toBeLessThan(1e-2);
  });

  it.each(GDAL_INVERSE)('EPSG:%i -> EPSG:%i at (%f, %f) within ~1 cm', (s, t, x, y, ex, ey) => {
    const [lon, lat] = makeTransformer(crsDefinitionForEpsg(s), crsDefinitionForEpsg(t))(x, y);
    // 1e-7 degrees is ~1.1 cm of latitude (111 km per degree; common practice, no source)
    expect(Math.abs(lon - ex)).toBeLessThan(1e-7);
    expect(Math.abs(lat - ey)).toBeLessThan(1e-7);
  });

  it('round-trips UTM 19S to lon/lat and back to the millimetre', () => {
    const wgs = crsDefinitionForEpsg(4326);
    const utm = crsDefinitionForEpsg(32719);
    const [lon, lat] = makeTransformer(utm, wgs)(308212.6399, 5558717.382);
    const [x, y] = makeTransformer(wgs, utm)(lon, lat);
    expect(Math.abs(x - 308212.6399)).toBeLessThan(1e-3);
    expect(Math.abs(y - 5558717.382)).toBeLessThan(1e-3);
    // GDAL forward value above: (-71.25, -40.1)
    expect(Math.abs(lon + 71.25)).toBeLessThan(1e-7);
    expect(Math.abs(lat + 40.1)).toBeLessThan(1e-7);
  });
});

describe('crsDefinitionForEpsg coverage and refusals', () => {
  it('knows every WGS 84 UTM zone, ETRS89 UTM 28-38, NAD83 UTM 1-23, GDA2020 MGA 46-59 and the listed national grids', () => {
    const codes: number[] = [4326, 3857, 4258, 3035, 4269, 27700, 2154, 2056, 2193, 4490, 4547, 6668, 31466, 31467, 31468, 31469];
    for (let z = 1; z <= 60; z++) codes.push(32600 + z, 32700 + z);
    for (let c = 25828; c <= 25838; c++) codes.push(c);
    for (let c = 26901; c <= 26923; c++) codes.push(c);
    for (let c = 7846; c <= 7859; c++) codes.push(c);
    for (let c = 31978; c <= 31985; c++) codes.push(c); // SIRGAS 2000 / UTM 18S-25S (names checked with osr GetName)
    for (let c = 6669; c <= 6687; c++) codes.push(c); // JGD2011 / Japan Plane Rectangular CS I-XIX (osr GetName)
    for (const code of codes) {
      const def = crsDefinitionForEpsg(code);
      expect(def, `EPSG:${code}`).toMatch(/^\+proj=/);
      // every definition states its datum relation to WGS 84 (no silent "no datum")
      expect(def, `EPSG:${code}`).toMatch(/\+datum=WGS84|\+towgs84=|\+nadgrids=@null/);
      // easting-first: no northing-first axis left in
      expect(def, `EPSG:${code}`).not.toMatch(/\+axis=ne/);
    }
  });

  it('UTM zone numbers: EPSG 32601 is zone 1 north, 32760 is zone 60 south', () => {
    expect(crsDefinitionForEpsg(32601)).toContain('+zone=1 ');
    expect(crsDefinitionForEpsg(32760)).toContain('+zone=60 +south');
    // central meridian of zone 60 is 177 E (UTM definition: -183 + 6 * zone; common practice, no source)
    const [x] = makeTransformer(crsDefinitionForEpsg(4326), crsDefinitionForEpsg(32760))(177, -40);
    expect(x).toBeCloseTo(500000, 6);
  });

  it('throws InputError naming an unknown code', () => {
    expect(() => crsDefinitionForEpsg(99999)).toThrow(InputError);
    expect(() => crsDefinitionForEpsg(99999)).toThrow(
      'unknown EPSG code 99999: no projection definition is available offline',
    );
    expect(() => crsDefinitionForEpsg(0)).toThrow('unknown EPSG code 0');
    expect(() => crsDefinitionForEpsg(32767)).toThrow('unknown EPSG code 32767');
    expect(() => crsDefinitionForEpsg(4326.5)).toThrow('unknown EPSG code 4326.5');
    expect(() => crsDefinitionForEpsg(-4326)).toThrow('unknown EPSG code -4326');
  });

  it('refuses non-map CRSs and datums without an offline shift instead of mis-placing them', () => {
    expect(() => crsDefinitionForEpsg(4978)).toThrow(/EPSG code 4978 is not a geographic or projected 2-D CRS/);
    // NTF (Paris) / Lambert zone II: Clarke 1880 (IGN) ellipsoid, no shift in the offline data
    expect(() => crsDefinitionForEpsg(27572)).toThrow(/EPSG code 27572 is on a datum .* no shift to WGS 84/);
    expect(() => crsDefinitionForEpsg(27572)).toThrow(InputError);
  });

  it('isGeographic', () => {
    expect(isGeographic(crsDefinitionForEpsg(4326))).toBe(true);
    expect(isGeographic(crsDefinitionForEpsg(4258))).toBe(true);
    expect(isGeographic(crsDefinitionForEpsg(32633))).toBe(false);
    expect(isGeographic(crsDefinitionForEpsg(3857))).toBe(false);
  });
});

describe('reprojectFlat and reprojectBBox', () => {
  const wgs = crsDefinitionForEpsg(4326);
  const utm = crsDefinitionForEpsg(32633);

  it('maps every vertex of a MultiPolygon into typed arrays, with their bounding box, and leaves the input alone', () => {
    const geometry = [[[[15, 52], [12.3456, 48.7654], [18.9, 60.1], [15, 52]]], [[[15, 52], [16, 52], [15, 53], [15, 52]]]];
    const out = reprojectFlat(geometry, wgs, utm);
    expect(geometry[0][0][0]).toEqual([15, 52]);
    expect(out.polygons).toHaveLength(2);
    const [p] = out.polygons;
    expect(Array.from(p.ringStarts)).toEqual([0, 4]);
    // GDAL values from the table above
    expect(Math.abs(p.xs[1] - 304949.3621)).toBeLessThan(1e-2);
    expect(Math.abs(p.ys[2] - 6668947.9576)).toBeLessThan(1e-2);
    expect([p.xs[3], p.ys[3]]).toEqual([p.xs[0], p.ys[0]]);
    const all = out.polygons.flatMap((q) => [...q.xs].map((x, i) => [x, q.ys[i]]));
    expect(out.bbox).toEqual([Math.min(...all.map((v) => v[0])), Math.min(...all.map((v) => v[1])), Math.max(...all.map((v) => v[0])), Math.max(...all.map((v) => v[1]))]);
  });

  it('gives makeTransformer\'s points bit for bit: UTM series, a point far from the zone (the general path) and a projection through proj4', () => {
    const rings = [[[15, 52], [14.2, 51.3], [-100, 10], [15.5, 52.4], [15, 52]], [[15.1, 52.1], [15.2, 52.1], [15.1, 52.2], [15.1, 52.1]]];
    for (const target of [utm, crsDefinitionForEpsg(3035), crsDefinitionForEpsg(3857)]) {
      const t = makeTransformer(wgs, target);
      const flat = reprojectFlat([rings], wgs, target).polygons[0];
      const expected = rings.flat().map(([x, y]) => t(x, y));
      expect([...flat.xs].map((x, i) => [x, flat.ys[i]])).toEqual(expected);
      expect(Array.from(flat.ringStarts)).toEqual([0, 5, 9]);
    }
  });

  it('reports a point outside the projection domain as InputError naming the file', () => {
    const merc = crsDefinitionForEpsg(3857);
    expect(() => reprojectFlat([[[[0, 90], [1, 90], [1, 89], [0, 90]]]], wgs, merc, 'city.geojson')).toThrow(
      /^city\.geojson: point \(0, 90\) cannot be reprojected/,
    );
  });

  it('bbox of a lon/lat box in UTM covers all densified edge points', () => {
    const [x0, y0, x1, y1] = reprojectBBox([14, 50, 16, 52], wgs, utm);
    const t = makeTransformer(wgs, utm);
    // the widest extent of a lon/lat box in UTM is along its southern edge (nearer the
    // equator, meridians spread): corner (14, 50) and (16, 50)
    expect(x0).toBeCloseTo(t(14, 50)[0], 6);
    expect(x1).toBeCloseTo(t(16, 50)[0], 6);
    // parallels curve poleward away from the central meridian in transverse Mercator, so
    // the box bottom is the mid-point of the southern edge, (15, 50), lower than both
    // corners: only densified edges find it (corners alone would miss it).
    // GDAL for (15, 50) in 32633 (same osr command as above): (500000, 5538630.7033)
    expect(Math.abs(y0 - 5538630.7033)).toBeLessThan(1e-2);
    expect(y0).toBeLessThan(t(14, 50)[1] - 100);
    expect(y1).toBeCloseTo(Math.max(t(14, 52)[1], t(16, 52)[1]), 6);
  });

  it('rejects a malformed bbox', () => {
    expect(() => reprojectBBox([1, 2, 0, 3], wgs, utm)).toThrow(InputError);
    expect(() => reprojectBBox([Number.NaN, 2, 3, 4], wgs, utm)).toThrow(/bounding box/);
  });
});

describe('direct projection path (WGS 84 lon/lat into a WGS 84 projection)', () => {
  it('gives what proj4\'s full transformation gives, point for point (proj4 as the reference library)', async () => {
    const proj4 = (await import('../../workers/core/crs/proj4.js')).loadProj4();
    const { mulberry32 } = await import('../../workers/core/prng.js');
    const rnd = mulberry32(11);
    for (const code of [32633, 32719, 3857, 32601]) {
      const from = crsDefinitionForEpsg(4326);
      const to = crsDefinitionForEpsg(code);
      const full = proj4(from, to);
      const t = makeTransformer(from, to);
      const lon0 = code === 3857 ? 0 : ((code % 100) - 1) * 6 - 180 + 3;
      for (let i = 0; i < 500; i++) {
        const lon = lon0 - 3 + 6 * rnd();
        const lat = code === 32719 ? -60 * rnd() : 60 * rnd();
        const [x, y] = t(lon, lat);
        const [ex, ey] = full.forward([lon, lat]);
        expect(Math.abs(x - ex)).toBeLessThanOrEqual(1e-9 * Math.max(1, Math.abs(ex)));
        expect(Math.abs(y - ey)).toBeLessThanOrEqual(1e-9 * Math.max(1, Math.abs(ey)));
      }
    }
  });
});
