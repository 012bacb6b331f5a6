import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { area as turfArea, kinks, multiPolygon } from '@turf/turf';
import {
  adjacency,
  districtsBBox,
  ellipsoidalAreaSquareMetres,
  parseDistricts,
  readDistricts,
  ruralRing,
  signedRingAreaSquareMetres,
  type District,
} from '../../workers/core/districts/index.js';
import { InputError } from '../../workers/core/errors.js';

const dir = fileURLToPath(new URL('../fixtures/districts/', import.meta.url));
const fixture = (name: string): string => `${dir}${name}`;

/**
 * Reference areas from GDAL 3.6.2 (python3-gdal), computed once:
 *   g = ogr.CreateGeometryFromJson(feature geometry); g.Segmentize(0.0005)   # edges straight in lon/lat (RFC 7946)
 *   g.Transform(EPSG:4326 -> "+proj=laea +lat_0=47.13 +lon_0=12.44 +ellps=WGS84"); g.GetArea()
 * (test/fixtures/districts/make_fixtures.py prints them; the equal-area projection is ellipsoidal).
 */
const GDAL_AREA: Record<string, number> = {
  SW: 10124664.4,
  SE: 10124664.4,
  NW: 9275773.986, // with its hole
  NE: 10422596.965, // two parts
  'D-01': 5062802.006,
  'D-02': 5062802.006,
};

/** Every ring of a district with its expected winding (RFC 7946 3.1.6). */
function windings(d: District): Array<{ hole: boolean; signed: number }> {
  return d.geometry.flatMap((p) => p.map((r, i) => ({ hole: i > 0, signed: signedRingAreaSquareMetres(r) })));
}

describe('parseDistricts on good files', () => {
  it('reads the fictional city: ids, names, areas against GDAL within 0.01 %', async () => {
    const ds = await readDistricts(fixture('city.geojson'));
    expect(ds.map((d) => d.id)).toEqual(['SW', 'SE', 'NW', 'NE']);
    expect(ds[0].name).toBe('South-West Quarter');
    for (const d of ds) {
      expect(Math.abs(d.areaSquareMetres / GDAL_AREA[d.id] - 1), d.id).toBeLessThan(1e-4);
      expect(d.role).toBe('district');
      expect(d.properties.id).toBe(d.id);
    }
    expect(ds[3].geometry).toHaveLength(2); // MultiPolygon kept as two parts
    expect(ds[2].geometry[0]).toHaveLength(2); // exterior + hole
  });

  it('area of a lon/lat rectangle matches the analytic ellipsoidal zone area', () => {
    // derived from the authalic-latitude zone formula (Snyder 1987, eq. 3-12):
    //   A = (a²/2) Δλ [q(φ2) - q(φ1)],  WGS 84 a = 6378137, f = 1/298.257223563
    const a = 6378137, f = 1 / 298.257223563, e2 = f * (2 - f), e = Math.sqrt(e2);
    const q = (deg: number): number => {
      const s = Math.sin((deg * Math.PI) / 180);
      return (1 - e2) * (s / (1 - e2 * s * s) - (1 / (2 * e)) * Math.log((1 - e * s) / (1 + e * s)));
    };
    const expected = ((a * a) / 2) * ((0.04 * Math.PI) / 180) * (q(47.13) - q(47.1));
    const [sw] = parseDistricts(readFileSync(fixture('city.geojson'), 'utf8'), 'city.geojson');
    expect(Math.abs(sw.areaSquareMetres / expected - 1)).toBeLessThan(1e-9);
    // the spherical @turf/area (R = 6378137) is within 0.5 % of the ellipsoid here
    // (sphere vs ellipsoid at 47° N: common practice, no source)
    expect(Math.abs(turfArea(multiPolygon(sw.geometry)) / expected - 1)).toBeLessThan(5e-3);
    // 1°x1° cells at the equator and at 60° N, GDAL with the same recipe as GDAL_AREA
    // (Segmentize(0.001), LAEA centred on the cell): 12308463893.8 and 6123140878.4 m²
    expect(Math.abs(ellipsoidalAreaSquareMetres([[[[0, 0], [1, 0], [1, 1], [0, 1], [0, 0]]]]) / 12308463893.8 - 1)).toBeLessThan(1e-6);
    expect(Math.abs(ellipsoidalAreaSquareMetres([[[[0, 60], [1, 60], [1, 61], [0, 61], [0, 60]]]]) / 6123140878.4 - 1)).toBeLessThan(1e-6);
  });

  it('rewinds rings to RFC 7946 order: exteriors counter-clockwise, holes clockwise', async () => {
    const raw = JSON.parse(readFileSync(fixture('city.geojson'), 'utf8'));
    // the fixture really has a clockwise exterior (SE) and a counter-clockwise hole (NW)
    expect(signedRingAreaSquareMetres(raw.features[1].geometry.coordinates[0])).toBeLessThan(0);
    expect(signedRingAreaSquareMetres(raw.features[2].geometry.coordinates[1])).toBeGreaterThan(0);
    for (const d of await readDistricts(fixture('city.geojson'))) {
      for (const w of windings(d)) expect(w.hole ? w.signed < 0 : w.signed > 0, d.id).toBe(true);
    }
  });

  it('honours idField / nameField, numeric feature ids, a CRS84 crs member, altitudes', async () => {
    const byCode = await readDistricts(fixture('custom-fields.geojson'), { idField: 'code', nameField: 'label' });
    expect(byCode.map((d) => [d.id, d.name])).toEqual([['D-01', 'Riverside'], ['D-02', 'D-02']]);
    expect(byCode[0].geometry[0][0][0]).toEqual([12.4, 47.1]); // altitude dropped
    expect(Math.abs(byCode[0].areaSquareMetres / GDAL_AREA['D-01'] - 1)).toBeLessThan(1e-4);
    // no "id" property: the numeric feature ids are used
    const byFeatureId = await readDistricts(fixture('custom-fields.geojson'));
    expect(byFeatureId.map((d) => d.id)).toEqual(['7', '8']);
  });

  it('accepts a single Feature, a bare geometry (id "1") and a legacy EPSG:4326 crs', async () => {
    expect((await readDistricts(fixture('single-feature.geojson'))).map((d) => d.name)).toEqual(['Old Town']);
    const bare = await readDistricts(fixture('bare-geometry.geojson'));
    expect(bare.map((d) => d.id)).toEqual(['1']);
    expect(Math.abs(bare[0].areaSquareMetres / GDAL_AREA.SW - 1)).toBeLessThan(1e-4);
    expect(await readDistricts(fixture('legacy-crs-4326.geojson'))).toHaveLength(1);
  });

  it('districtsBBox spans all districts', async () => {
    expect(districtsBBox(await readDistricts(fixture('city.geojson')))).toEqual([12.4, 47.1, 12.48, 47.16]);
    expect(() => districtsBBox([])).toThrow(InputError);
  });
});

describe('parseDistricts rejects bad files with InputError naming file, district and problem', () => {
  // [fixture, fragment expected in the message]
  const cases: Array<[string, string | RegExp]> = [
    ['not-json', 'not JSON'],
    ['not-geojson', 'not GeoJSON: the file holds an array'],
    ['no-type', 'no "type" member'],
    ['topojson', 'GeoJSON type "Topology" found'],
    ['empty-collection', 'has no features'],
    ['features-not-array', 'no "features" array (found an object)'],
    ['linestring', 'features[1] (id "road") has geometry type LineString; only Polygon and MultiPolygon are accepted'],
    ['geometry-collection', 'geometry type GeometryCollection'],
    ['null-geometry', 'features[0] (id "nothing") has no geometry'],
    ['missing-id', 'features[1] has no id (no "id" property and no feature id)'],
    ['duplicate-id', 'features[2] (id "a") repeats the id of features[0]'],
    ['empty-ring', 'features[0] (id "e") polygon ring 0 is empty'],
    ['no-rings', 'polygon has no rings'],
    ['short-ring', 'ring 0 has 3 positions; a closed ring needs at least 4'],
    ['unclosed-ring', /ring 0 is not closed: first position \[12.4,47.1\] differs from last \[12.4,47.2\]/],
    ['non-finite', 'position 1: coordinate [Infinity, 47.1] is not finite'],
    ['string-coordinate', 'coordinate ["12.5",47.1] is not a pair of numbers'],
    ['self-intersection', 'features[1] (id "bowtie") intersects itself at lon 12.420000, lat 47.120000'],
    ['hole-crosses-exterior', 'features[0] (id "h") intersects itself at lon 12.44'],
    ['swapped', 'coordinate [-33.9, 151.2] looks swapped (lat, lon)'],
    ['projected', 'coordinate [500000, 5200000] looks projected (metres?), GeoJSON must be lon/lat WGS 84 (RFC 7946)'],
    ['legacy-crs-utm', 'the legacy "crs" member names "urn:ogc:def:crs:EPSG::32633"'],
    ['zero-area', 'ring 0 has zero area'],
    ['properties-array', '"properties" is an array'],
    ['position-too-short', 'position 1: a position must be an array of at least 2 numbers, found [12.5]'],
  ];

  it.each(cases)('%s', async (name, fragment) => {
    const path = fixture(`bad/${name}.geojson`);
    const err = await readDistricts(path).then(
      () => null,
      (e: unknown) => e,
    );
    expect(err).toBeInstanceOf(InputError);
    const message = (err as InputError).message;
    expect(message.startsWith(`${path}: `)).toBe(true);
    if (typeof fragment === 'string') expect(message).toContain(fragment);
    else expect(message).toMatch(fragment);
  });

  it('non-finite coordinates name the district and the position', async () => {
    // 1e999 parses to Infinity in JSON.parse (ECMA-262 Number semantics)
    await expect(readDistricts(fixture('bad/non-finite.geojson'))).rejects.toThrow(
      /features\[0\] \(id "inf"\) polygon ring 0, position 1: coordinate .* is not finite/,
    );
  });

  it('a missing file is an InputError naming it', async () => {
    await expect(readDistricts(fixture('no-such-file.geojson'))).rejects.toThrow(/no-such-file\.geojson: cannot read the district file \(ENOENT\)/);
  });

  it('the bow-tie really self-intersects at (12.42, 47.12) per @turf/kinks', () => {
    const raw = JSON.parse(readFileSync(fixture('bad/self-intersection.geojson'), 'utf8'));
    const k = kinks(raw.features[1].geometry);
    // centre of the bow-tie's diagonals: derived from the fixture's coordinates
    expect(k.features[0].geometry.coordinates[0]).toBeCloseTo(12.42, 9);
    expect(k.features[0].geometry.coordinates[1]).toBeCloseTo(47.12, 9);
  });
});

describe('adjacency', () => {
  it('rook and queen contiguity of the 2x2 city (and a T-junction)', async () => {
    const ds = await readDistricts(fixture('city.geojson'));
    // SW=0, SE=1, NW=2, NE=3: edges shared SW-SE, SW-NW, SE-NE, NW-NE; corners SW-NE, SE-NW
    expect(adjacency(ds)).toEqual([[1, 2], [0, 3], [0, 3], [1, 2]]);
    expect(adjacency(ds, { contiguity: 'queen' })).toEqual([[1, 2, 3], [0, 2, 3], [0, 1, 3], [0, 1, 2]]);
    // a long northern neighbour over SW and SE with no vertex at 12.44: shares edges by T-junction
    const north = parseDistricts(
      JSON.stringify({ type: 'Polygon', coordinates: [[[12.4, 47.13], [12.48, 47.13], [12.48, 47.2], [12.4, 47.2], [12.4, 47.13]]] }),
      'north.geojson',
    )[0];
    expect(adjacency([ds[0], ds[1], north])).toEqual([[1, 2], [0, 2], [0, 1]]);
  });
});

describe('ruralRing', () => {
  /** A 128-gon "circular" city of radius r metres around (12.44, 47.13), as two districts. */
  function circularCity(rMetres: number): District[] {
    // positions on the ellipsoid from local radii of curvature (M, N; Snyder 1987 eqs. 4-18, 4-20)
    const a = 6378137, f = 1 / 298.257223563, e2 = f * (2 - f);
    const lat0 = 47.13, lon0 = 12.44, phi = (lat0 * Math.PI) / 180;
    const w = 1 - e2 * Math.sin(phi) ** 2;
    const M = (a * (1 - e2)) / w ** 1.5, N = a / Math.sqrt(w);
    const pt = (k: number, n: number): number[] => {
      const t = (2 * Math.PI * k) / n;
      return [lon0 + ((rMetres * Math.cos(t)) / (N * Math.cos(phi))) * (180 / Math.PI), lat0 + ((rMetres * Math.sin(t)) / M) * (180 / Math.PI)];
    };
    const n = 128;
    const east = [...Array.from({ length: n / 2 + 1 }, (_, k) => pt(k - n / 4, n)), [lon0, lat0 + (rMetres / M) * (180 / Math.PI)]];
    const eastRing = [[lon0, lat0 - (rMetres / M) * (180 / Math.PI)], ...east.slice(1, -1), [lon0, lat0 + (rMetres / M) * (180 / Math.PI)]];
    const westRing = [eastRing[eastRing.length - 1], ...Array.from({ length: n / 2 - 1 }, (_, k) => pt(k + n / 4 + 1, n)), eastRing[0]];
    eastRing.push(eastRing[0]);
    westRing.push(westRing[0]);
    const fc = {
      type: 'FeatureCollection',
      features: [
        { type: 'Feature', properties: { id: 'E' }, geometry: { type: 'Polygon', coordinates: [eastRing] } },
        { type: 'Feature', properties: { id: 'W' }, geometry: { type: 'Polygon', coordinates: [westRing] } },
      ],
    };
    return parseDistricts(JSON.stringify(fc), 'circle.geojson');
  }

  it('the city disc itself has area π r² within 0.1 %', () => {
    const ds = circularCity(3000);
    const total = ds[0].areaSquareMetres + ds[1].areaSquareMetres;
    // 128-gon / circle area ratio = n sin(2π/n) / 2π = 0.999599 (derived from the polygon area formula)
    expect(Math.abs(total / (Math.PI * 3000 ** 2) - 1)).toBeLessThan(1e-3);
  });

  it('ring area is close to the annulus π((r+10 km)² − (r+2 km)²) and its holes are clockwise', () => {
    const ds = circularCity(3000);
    const rural = ruralRing(ds); // defaults 2000 m / 10000 m
    expect(rural.id).toBe('rural');
    expect(rural.role).toBe('rural');
    // derived from the annulus area formula; buffer uses a sphere (R = 6371008.8 m) and
    // polygonised arcs, so allow 0.5 % (measured here: ratio 1.00197)
    const expected = Math.PI * (13000 ** 2 - 5000 ** 2);
    expect(Math.abs(rural.areaSquareMetres / expected - 1)).toBeLessThan(5e-3);
    console.log(`rural ring / annulus area = ${(rural.areaSquareMetres / expected).toFixed(5)}`);
    expect(rural.geometry).toHaveLength(1);
    expect(rural.geometry[0]).toHaveLength(2); // outer edge + the hole around the city
    for (const w of windings(rural)) expect(w.hole ? w.signed < 0 : w.signed > 0).toBe(true);
    expect(kinks(multiPolygon(rural.geometry)).features).toHaveLength(0);
  });

  it('custom widths and argument checks', () => {
    const ds = circularCity(3000);
    const narrow = ruralRing(ds, 0, 1000);
    // derived from the annulus formula: π(4000² − 3000²)
    expect(Math.abs(narrow.areaSquareMetres / (Math.PI * (4000 ** 2 - 3000 ** 2)) - 1)).toBeLessThan(1e-2);
    expect(() => ruralRing(ds, 5000, 2000)).toThrow(/0 <= inner < outer/);
    expect(() => ruralRing(ds, -1, 2000)).toThrow(InputError);
    expect(() => ruralRing([], 2000, 10000)).toThrow(InputError);
  });
});
