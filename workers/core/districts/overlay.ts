/**
 * Polygon union, difference and buffer for reference regions (the rural ring,
 * water cut out of it), done in metres in a local azimuthal equidistant
 * projection with the JTS overlay and buffer algorithms (the jsts port).
 *
 * Inputs are first simplified with Douglas-Peucker at SIMPLIFY_TOLERANCE_METRES:
 * dense boundaries (10^5 vertices per ring, runs of nearly collinear points) then
 * cost seconds, not minutes, and cannot stall the noding. A reference region may
 * move by that much; district statistics always use the original polygons.
 */
import { createRequire } from 'node:module';
import { InputError } from '../errors.js';
import { makeTransformer } from '../crs/index.js';
import type { Metres } from '../units.js';
import { orientMultiPolygon } from './orient.js';

/**
 * Douglas-Peucker tolerance for reference-region geometry, metres: far below
 * a thermal pixel (60-1000 m for the usual LST products, 30-100 m for sharpened
 * ones; common practice, no source), so no pixel centre changes side but for
 * those within 1 m of a boundary.
 */
export const SIMPLIFY_TOLERANCE_METRES: Metres = 1;

/** Segments per quarter circle of buffer arcs: a circle's area within ~0.3 % (n·sin(2π/n)/2π, n = 64). */
const QUADRANT_SEGMENTS = 16;

// jsts is ESM; Node >= 20.19 loads it synchronously with require(). It costs ~0.3-0.5 s
// to load, and only the rural ring and the water cut need it, so it loads on first use.
const requireEsm = createRequire(import.meta.url);
interface Jsts {
  GeometryFactory: new () => JGeometryFactory;
  Coordinate: new (x: number, y: number) => JCoordinate;
  UnaryUnionOp: { union(g: JGeometry): JGeometry };
  BufferOp: { bufferOp(g: JGeometry, distance: number, quadrantSegments: number): JGeometry };
  SnapIfNeededOverlayOp: { overlayOp(a: JGeometry, b: JGeometry, op: number): JGeometry };
  OverlayOp: { DIFFERENCE: number };
  DouglasPeuckerSimplifier: { simplify(g: JGeometry, tolerance: number): JGeometry };
}
interface JCoordinate { x: number; y: number }
interface JGeometry {
  getNumGeometries(): number;
  getGeometryN(i: number): JGeometry;
  getGeometryType(): string;
  isEmpty(): boolean;
  getExteriorRing(): JGeometry;
  getNumInteriorRing(): number;
  getInteriorRingN(i: number): JGeometry;
  getCoordinates(): JCoordinate[];
}
interface JGeometryFactory {
  createLinearRing(c: JCoordinate[]): JGeometry;
  createPolygon(shell: JGeometry, holes?: JGeometry[]): JGeometry;
  createGeometryCollection(g: JGeometry[]): JGeometry;
}
let jstsCache: Jsts | null = null;
function jsts(): Jsts {
  if (jstsCache) return jstsCache;
  const load = (p: string) => (requireEsm(`jsts/org/locationtech/jts/${p}.js`) as { default: unknown }).default;
  jstsCache = {
    GeometryFactory: load('geom/GeometryFactory') as Jsts['GeometryFactory'],
    Coordinate: load('geom/Coordinate') as Jsts['Coordinate'],
    UnaryUnionOp: load('operation/union/UnaryUnionOp') as Jsts['UnaryUnionOp'],
    BufferOp: load('operation/buffer/BufferOp') as Jsts['BufferOp'],
    SnapIfNeededOverlayOp: load('operation/overlay/snap/SnapIfNeededOverlayOp') as Jsts['SnapIfNeededOverlayOp'],
    OverlayOp: load('operation/overlay/OverlayOp') as Jsts['OverlayOp'],
    DouglasPeuckerSimplifier: load('simplify/DouglasPeuckerSimplifier') as Jsts['DouglasPeuckerSimplifier'],
  };
  return jstsCache;
}

/** An opaque region in a {@link MetricFrame} (metres). */
export interface Region { readonly geometry: unknown }

/**
 * A local azimuthal equidistant projection (WGS 84 ellipsoid, Snyder 1987 §25)
 * centred on a point: distances from the centre are true, and within ~50 km of
 * it scale errors stay below 0.01 %, so buffers and overlays work in metres.
 */
export interface MetricFrame {
  /**
   * MultiPolygon lon/lat coordinates → a region, simplified at SIMPLIFY_TOLERANCE_METRES
   * unless `simplify` is false (geometry this module derived already).
   */
  region(lonLat: number[][][][], simplify?: boolean): Region;
  union(regions: readonly Region[]): Region;
  buffer(region: Region, metres: Metres): Region;
  difference(a: Region, b: Region): Region;
  isEmpty(region: Region): boolean;
  /** Back to MultiPolygon lon/lat coordinates with RFC 7946 winding. */
  lonLat(region: Region): number[][][][];
}

/** The centre of the lon/lat bounding box of MultiPolygon coordinates. */
export function bboxCentre(geometries: readonly number[][][][][]): [number, number] {
  let x0 = Infinity, y0 = Infinity, x1 = -Infinity, y1 = -Infinity;
  for (const g of geometries) for (const poly of g) for (const ring of poly) for (const [x, y] of ring) {
    if (x < x0) x0 = x;
    if (x > x1) x1 = x;
    if (y < y0) y0 = y;
    if (y > y1) y1 = y;
  }
  return [(x0 + x1) / 2, (y0 + y1) / 2];
}

/**
 * A metric frame centred at (lon, lat).
 * @param source the file the geometry comes from, named in errors
 */
export function metricFrame(centreLon: number, centreLat: number, source?: string): MetricFrame {
  const j = jsts();
  const gf = new j.GeometryFactory();
  const aeqd = `+proj=aeqd +lat_0=${centreLat} +lon_0=${centreLon} +x_0=0 +y_0=0 +datum=WGS84 +units=m +no_defs`;
  const toMetres = makeTransformer('+proj=longlat +datum=WGS84 +no_defs', aeqd);
  const toLonLat = makeTransformer(aeqd, '+proj=longlat +datum=WGS84 +no_defs');
  const geom = (r: Region) => r.geometry as JGeometry;
  const guard = <T>(what: string, f: () => T): T => {
    try {
      return f();
    } catch (e) {
      if (e instanceof InputError && (e.source || !source)) throw e;
      throw new InputError(`the polygon ${what} failed (${(e as Error)?.message ?? String(e)}); check the polygons for overlaps and slivers`, source);
    }
  };
  const ringOf = (ring: number[][]): JGeometry => {
    const cs: JCoordinate[] = [];
    for (const [lon, lat] of ring) {
      const [x, y] = toMetres(lon, lat);
      cs.push(new j.Coordinate(x, y));
    }
    return gf.createLinearRing(cs);
  };
  const polygons = (g: JGeometry, out: JGeometry[]): JGeometry[] => {
    const type = g.getGeometryType();
    if (type === 'Polygon') {
      if (!g.isEmpty()) out.push(g);
    } else if (type === 'MultiPolygon' || type === 'GeometryCollection') {
      for (let i = 0; i < g.getNumGeometries(); i++) polygons(g.getGeometryN(i), out);
    }
    return out;
  };
  return {
    region(lonLat, simplify = true) {
      return guard('simplification', () => {
        const parts: JGeometry[] = [];
        for (const poly of lonLat) {
          const shell = ringOf(poly[0]);
          const holes = poly.slice(1).map(ringOf);
          // Douglas & Peucker (1973); JTS repairs any self-intersection the simplification makes
          const polygon = gf.createPolygon(shell, holes);
          polygons(simplify ? j.DouglasPeuckerSimplifier.simplify(polygon, SIMPLIFY_TOLERANCE_METRES) : polygon, parts);
        }
        return { geometry: gf.createGeometryCollection(parts) };
      });
    },
    union(regions) {
      return guard('union', () => {
        const parts: JGeometry[] = [];
        for (const r of regions) polygons(geom(r), parts);
        return { geometry: j.UnaryUnionOp.union(gf.createGeometryCollection(parts)) };
      });
    },
    buffer(region, metres) {
      if (metres === 0) return region;
      return guard(`buffer by ${metres} m`, () => ({ geometry: j.BufferOp.bufferOp(geom(region), metres, QUADRANT_SEGMENTS) }));
    },
    difference(a, b) {
      return guard('difference', () => ({ geometry: j.SnapIfNeededOverlayOp.overlayOp(geom(a), geom(b), j.OverlayOp.DIFFERENCE) }));
    },
    isEmpty(region) {
      return polygons(geom(region), []).length === 0;
    },
    lonLat(region) {
      const ringBack = (ring: JGeometry): number[][] => ring.getCoordinates().map((c) => toLonLat(c.x, c.y));
      const out = polygons(geom(region), []).map((p) => {
        const rings = [ringBack(p.getExteriorRing())];
        for (let i = 0; i < p.getNumInteriorRing(); i++) rings.push(ringBack(p.getInteriorRingN(i)));
        return rings;
      });
      return orientMultiPolygon(out);
    },
  };
}
