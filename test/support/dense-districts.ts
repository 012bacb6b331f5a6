/**
 * Districts with very dense rings (10^5 vertices), made up for the tests, and
 * the rural-ring area computed independently with shapely (GEOS) on
 * coordinates projected by GDAL's OSR (Debian's /usr/bin/python3).
 */
import { spawnSync } from 'node:child_process';

/** lon/lat of a point `east`, `north` metres from (lon0, lat0); local radii of curvature M, N (Snyder 1987 eqs. 4-18, 4-20). */
export function offsetLonLat(lon0: number, lat0: number, east: number, north: number): [number, number] {
  const a = 6378137, f = 1 / 298.257223563, e2 = f * (2 - f), phi = (lat0 * Math.PI) / 180;
  const w = 1 - e2 * Math.sin(phi) ** 2;
  const M = (a * (1 - e2)) / w ** 1.5, N = a / Math.sqrt(w);
  return [lon0 + (east / (N * Math.cos(phi))) * (180 / Math.PI), lat0 + (north / M) * (180 / Math.PI)];
}

type Ring = number[][];
const close = (r: Ring): Ring => [...r, r[0]];

/** A circle of radius r metres around (cx, cy) metres from the origin, n vertices, counter-clockwise. */
export function denseCircle(lon0: number, lat0: number, cx: number, cy: number, r: number, n: number): Ring {
  return close(Array.from({ length: n }, (_, i) => {
    const t = (2 * Math.PI * i) / n;
    return offsetLonLat(lon0, lat0, cx + r * Math.cos(t), cy + r * Math.sin(t));
  }));
}

/**
 * A 12-pointed star (tips at `outer` m, notches at `inner` m) whose 24 edges are
 * each cut into n/24 nearly collinear points: every point is moved off its edge
 * by up to 0.1 mm.
 */
export function denseStar(lon0: number, lat0: number, cx: number, cy: number, outer: number, inner: number, n: number): Ring {
  const tips = Array.from({ length: 24 }, (_, k) => {
    const t = (2 * Math.PI * k) / 24, r = k % 2 ? inner : outer;
    return [cx + r * Math.cos(t), cy + r * Math.sin(t)];
  });
  const per = Math.floor(n / 24);
  const out: Ring = [];
  for (let k = 0; k < 24; k++) {
    const [x0, y0] = tips[k], [x1, y1] = tips[(k + 1) % 24];
    for (let i = 0; i < per; i++) {
      const f = i / per;
      out.push(offsetLonLat(lon0, lat0, x0 + f * (x1 - x0) + 1e-4 * Math.sin(i), y0 + f * (y1 - y0) + 1e-4 * Math.cos(i)));
    }
  }
  return close(out);
}

/**
 * Two half discs of radius r sharing their diameter, each ring with about n
 * vertices: n/2 on the arc and n/2 points on the shared diameter, each moved
 * off it by up to 0.1 mm (nearly collinear; the same points in both rings, so
 * the districts meet exactly). Counter-clockwise rings.
 */
export function denseHalfDiscs(lon0: number, lat0: number, r: number, n: number): [Ring, Ring] {
  const half = Math.floor(n / 2);
  // south (i = 0) to north (i = half); the end points stay exactly on the axis
  const diameter = Array.from({ length: half + 1 }, (_, i) =>
    offsetLonLat(lon0, lat0, i === 0 || i === half ? 0 : 1e-4 * Math.sin(i), -r + (2 * r * i) / half));
  const arc = (fromRadians: number) => Array.from({ length: half - 1 }, (_, i) => {
    const t = fromRadians + (Math.PI * (i + 1)) / half;
    return offsetLonLat(lon0, lat0, r * Math.cos(t), r * Math.sin(t));
  });
  const south = diameter[0], north = diameter[half];
  const inner = diameter.slice(1, -1);
  const east = [south, ...arc(-Math.PI / 2), north, ...[...inner].reverse(), south];
  const west = [north, ...arc(Math.PI / 2), south, ...inner, north];
  return [east, west];
}

/** A FeatureCollection of polygons with ids. */
export function featureCollection(rings: Record<string, Ring>): string {
  return JSON.stringify({
    type: 'FeatureCollection',
    features: Object.entries(rings).map(([id, ring]) => ({ type: 'Feature', properties: { id, name: id }, geometry: { type: 'Polygon', coordinates: [ring] } })),
  });
}

/**
 * Area, m², of (union ⊕ outer) − (union ⊕ inner) by shapely in an azimuthal
 * equidistant projection (WGS 84) centred on (lon0, lat0), 16 segments per
 * quarter circle; no simplification. With `waterPath`, its polygons are cut out.
 */
export function shapelyRingArea(geojsonPath: string, lon0: number, lat0: number, innerMetres: number, outerMetres: number, waterPath?: string): number {
  const code = `
import json, sys
from osgeo import osr
from shapely.geometry import Polygon
from shapely.ops import unary_union
path, lon0, lat0, inner, outer, water = sys.argv[1], float(sys.argv[2]), float(sys.argv[3]), float(sys.argv[4]), float(sys.argv[5]), sys.argv[6]
src = osr.SpatialReference(); src.ImportFromEPSG(4326); src.SetAxisMappingStrategy(osr.OAMS_TRADITIONAL_GIS_ORDER)
dst = osr.SpatialReference(); dst.ImportFromProj4(f"+proj=aeqd +lat_0={lat0} +lon_0={lon0} +datum=WGS84 +units=m +no_defs")
ct = osr.CoordinateTransformation(src, dst)
def polygons(p):
    out = []
    for f in json.load(open(p))["features"]:
        rings = [[q[:2] for q in ct.TransformPoints([(x, y) for x, y in r])] for r in f["geometry"]["coordinates"]]
        out.append(Polygon(rings[0], rings[1:]))
    return out
city = unary_union(polygons(path))
ring = city.buffer(outer, 16).difference(city.buffer(inner, 16) if inner > 0 else city)
if water:
    ring = ring.difference(unary_union(polygons(water)))
print(ring.area)
`;
  const r = spawnSync('/usr/bin/python3', ['-c', code, geojsonPath, String(lon0), String(lat0), String(innerMetres), String(outerMetres), waterPath ?? ''], { encoding: 'utf8', maxBuffer: 1 << 20 });
  if (r.status !== 0) throw new Error(`shapely reference failed: ${r.stderr}`);
  return Number(r.stdout.trim());
}
