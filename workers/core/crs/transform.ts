/**
 * Reprojection of points, MultiPolygon coordinates and bounding boxes with proj4.
 * Coordinates are always easting/longitude first.
 */
import { loadProj4, type Converter } from './proj4.js';
import { utmForward, utmZoneOf } from './utm.js';
import { InputError } from '../errors.js';
import type { BBox } from '../bbox.js';

/** A point transformer: (x, y) in the source CRS -> [x, y] in the target CRS. */
export type PointTransformer = (x: number, y: number) => [number, number];

/** MultiPolygon coordinates: polygons -> rings -> positions [x, y]. */
export type MultiPolygonCoordinates = number[][][][];

/**
 * One polygon's rings as typed arrays: every ring's positions back to back,
 * ring k at indices ringStarts[k] to ringStarts[k + 1] (exclusive), as given.
 */
export interface FlatPolygon {
  readonly xs: Float64Array;
  readonly ys: Float64Array;
  /** Length rings + 1. */
  readonly ringStarts: Uint32Array;
}

/** MultiPolygon coordinates as reprojectFlat writes them, with their bounding box [minX, minY, maxX, maxY]. */
export interface FlatMultiPolygon {
  readonly polygons: readonly FlatPolygon[];
  readonly bbox: BBox;
}

/** True for a FlatMultiPolygon (not nested coordinate arrays). */
export function isFlatMultiPolygon(g: unknown): g is FlatMultiPolygon {
  return typeof g === 'object' && g !== null && !Array.isArray(g) && Array.isArray((g as FlatMultiPolygon).polygons);
}

/** A point transformer that writes [x, y] into `out` instead of making an array (rules as makeTransformer's). */
type PointWriter = (x: number, y: number, out: Float64Array) => void;

/**
 * True when a proj4 definition is geographic (degrees of longitude/latitude),
 * false for a projected CRS.
 * @example isGeographic('+proj=longlat +datum=WGS84 +no_defs') // true
 */
export function isGeographic(def: string): boolean {
  return /\+proj=(longlat|latlong|lonlat|latlon)(\s|$)/.test(def);
}

const transformers = new Map<string, { point: PointTransformer; write: PointWriter }>();

/** Points a direct projection is checked on against proj4's full transformation before it is trusted. */
const DIRECT_PROBES = 3;
const DEG = Math.PI / 180;

/**
 * For WGS 84 lon/lat into a projection on WGS 84 (the usual case: GeoJSON
 * districts into a UTM scene), proj4's projection forward alone, without the
 * general pipeline around it (datum checks, unit and axis steps, point objects):
 * ~4x faster per point. Null when it does not apply; `makeTransformer` also
 * checks it against the full path on the first points before using it.
 */
function directProjection(fromDef: string, toDef: string): ((x: number, y: number) => number[]) | null {
  const wgs84LonLat = (d: string) => isGeographic(d) && /\+datum=WGS84(\s|$)/.test(d) && !/\+(towgs84|nadgrids|pm|axis)=/.test(d);
  if (!wgs84LonLat(fromDef) || isGeographic(toDef) || !/\+datum=WGS84(\s|$)/.test(toDef) || /\+(towgs84|nadgrids|axis|to_meter|geoidgrids)=/.test(toDef)) return null;
  let projection: { forward(p: { x: number; y: number }): { x: number; y: number } };
  try {
    projection = new (loadProj4() as unknown as { Proj: new (def: string) => typeof projection }).Proj(toDef);
  } catch {
    return null;
  }
  if (typeof projection?.forward !== 'function') return null;
  return (x, y) => {
    const p = projection.forward({ x: x * DEG, y: y * DEG });
    return [p.x, p.y];
  };
}

/**
 * A cached point transformer between two proj4 definitions.
 *
 * @param fromDef proj4 string of the source CRS (units of its own: degrees or metres)
 * @param toDef proj4 string of the target CRS
 * @returns (x, y) => [x, y]; throws InputError for a point outside the
 *   projection's domain (non-finite result) instead of returning NaN.
 * @throws InputError when a definition cannot be parsed.
 * @example makeTransformer(crsDefinitionForEpsg(4326), crsDefinitionForEpsg(32633))(15, 0) // [500000, 0]
 */
export function makeTransformer(fromDef: string, toDef: string): PointTransformer {
  return transformersFor(fromDef, toDef).point;
}

/** makeTransformer's transformer and its writing twin, cached together. */
function transformersFor(fromDef: string, toDef: string): { point: PointTransformer; write: PointWriter } {
  const key = `${fromDef}\u0000${toDef}`;
  const cached = transformers.get(key);
  if (cached) return cached;
  let made: { point: PointTransformer; write: PointWriter };
  const utm = fromDef.trim() === WGS84_LONLAT ? utmZoneOf(toDef) : null;
  if (utm) {
    // WGS 84 lon/lat into a WGS 84 UTM zone without loading proj4 (utm.ts); points
    // the series does not take (far from the zone, non-finite) go the general way
    const forward = utmForward(utm.zone, utm.south);
    let general: PointTransformer | null = null;
    const slow = (x: number, y: number) => (general ??= generalTransformer(fromDef, toDef))(x, y);
    made = {
      point: (x, y) => {
        const out: [number, number] = [0, 0];
        return forward(x, y, out) ? out : slow(x, y);
      },
      write: (x, y, out) => {
        if (forward(x, y, out)) return;
        const p = slow(x, y);
        out[0] = p[0]; out[1] = p[1];
      },
    };
  } else {
    const point = generalTransformer(fromDef, toDef);
    made = { point, write: (x, y, out) => { const p = point(x, y); out[0] = p[0]; out[1] = p[1]; } };
  }
  transformers.set(key, made);
  return made;
}

/** proj4's definition of WGS 84 lon/lat as crsDefinitionForEpsg(4326) writes it. */
const WGS84_LONLAT = '+proj=longlat +datum=WGS84 +no_defs';

/** The transformer through proj4 (with the direct projection where it applies). */
function generalTransformer(fromDef: string, toDef: string): PointTransformer {
  let converter: Converter;
  try {
    converter = loadProj4()(fromDef, toDef);
  } catch (e) {
    throw new InputError(`cannot build a transformation from "${fromDef}" to "${toDef}": ${(e as Error).message}`);
  }
  const identity = fromDef === toDef;
  const direct = directProjection(fromDef, toDef);
  let probes = direct ? DIRECT_PROBES : 0;
  let useDirect = direct !== null;
  const transform: PointTransformer = (x, y) => {
    if (identity) return [x, y];
    let out: number[] | undefined;
    if (Number.isFinite(x) && Number.isFinite(y)) {
      try {
        if (useDirect && probes === 0) {
          out = direct!(x, y);
        } else {
          out = converter.forward([x, y]);
          if (useDirect) {
            // the first points go both ways: any datum shift, unit or axis step the
            // direct path would miss shows up here, and then it is never used
            const d = direct!(x, y);
            if (!(Math.abs(d[0] - out[0]) <= 1e-9 * Math.max(1, Math.abs(out[0])) && Math.abs(d[1] - out[1]) <= 1e-9 * Math.max(1, Math.abs(out[1])))) useDirect = false;
            probes--;
          }
        }
      } catch {
        out = undefined;
      }
    }
    if (!out || !Number.isFinite(out[0]) || !Number.isFinite(out[1])) {
      throw new InputError(`point (${x}, ${y}) cannot be reprojected to "${toDef}": outside the projection's domain`);
    }
    return [out[0], out[1]];
  };
  return transform;
}

/**
 * Reproject MultiPolygon coordinates vertex by vertex (no densification: edges
 * stay straight in the target CRS, fine for district-sized polygons) into
 * typed arrays, with their bounding box. The points are makeTransformer's, bit
 * for bit. Typed arrays rather than an array per position: the coordinates are
 * only read afterwards (zonal targets: their masks are built from them), and
 * on the bench's 60 districts of 600 positions one `zonal` run allocated
 * ~2.3 MB less on the JavaScript heap, which its garbage collector had copied
 * twice (with the districts file read in one call and indexed bounding-box
 * loops, 0.93x the run's wall and 0.91x its CPU time; 15 paired runs on the
 * bench's 1200 x 1200 clip).
 *
 * @param geometry polygons -> rings -> [x, y] in `fromDef` units (not modified)
 * @param source optional file name for error messages
 * @throws InputError for a point outside the target projection's domain, naming `source`
 * @example reprojectFlat([[[[15, 0], [15.1, 0], [15, 0.1], [15, 0]]]], wgs84, utm33).bbox // [500000, 0, 511127.50.., 11053.00..]
 */
export function reprojectFlat(
  geometry: MultiPolygonCoordinates,
  fromDef: string,
  toDef: string,
  source?: string,
): FlatMultiPolygon {
  const write = transformersFor(fromDef, toDef).write;
  const out = new Float64Array(2);
  let minX = Infinity, minY = Infinity, maxX = -Infinity, maxY = -Infinity;
  let polygons: FlatPolygon[];
  try {
    polygons = geometry.map((polygon): FlatPolygon => {
      let total = 0;
      for (let r = 0; r < polygon.length; r++) total += polygon[r].length;
      const xs = new Float64Array(total), ys = new Float64Array(total);
      const ringStarts = new Uint32Array(polygon.length + 1);
      let n = 0;
      for (let r = 0; r < polygon.length; r++) {
        const ring = polygon[r];
        ringStarts[r] = n;
        for (let i = 0; i < ring.length; i++, n++) {
          write(ring[i][0], ring[i][1], out);
          const x = out[0], y = out[1];
          xs[n] = x; ys[n] = y;
          if (x < minX) minX = x;
          if (x > maxX) maxX = x;
          if (y < minY) minY = y;
          if (y > maxY) maxY = y;
        }
      }
      ringStarts[polygon.length] = n;
      return { xs, ys, ringStarts };
    });
  } catch (e) {
    if (source && e instanceof InputError && e.source === undefined) throw new InputError(e.message, source);
    throw e;
  }
  return { polygons, bbox: [minX, minY, maxX, maxY] };
}

/**
 * Bounding box of a box after reprojection: each edge is sampled at
 * `pointsPerEdge` points, since straight edges curve under most projections.
 *
 * @param bbox [minX, minY, maxX, maxY] in `fromDef` units
 * @returns [minX, minY, maxX, maxY] in `toDef` units (no antimeridian handling:
 *   a box crossing +-180 degrees in the target comes back as the wide box).
 * @example reprojectBBox([14, 50, 16, 52], wgs84Def, utm33Def)
 */
export function reprojectBBox(bbox: BBox, fromDef: string, toDef: string, pointsPerEdge = 21): BBox {
  const [x0, y0, x1, y1] = bbox;
  if (![x0, y0, x1, y1].every(Number.isFinite) || x1 < x0 || y1 < y0) {
    throw new InputError(`bounding box [${bbox.join(', ')}] is not [minX, minY, maxX, maxY] of finite numbers`);
  }
  const t = makeTransformer(fromDef, toDef);
  const n = Math.max(2, Math.floor(pointsPerEdge));
  let minX = Infinity, minY = Infinity, maxX = -Infinity, maxY = -Infinity;
  const add = (x: number, y: number): void => {
    const [px, py] = t(x, y);
    minX = Math.min(minX, px); maxX = Math.max(maxX, px);
    minY = Math.min(minY, py); maxY = Math.max(maxY, py);
  };
  for (let i = 0; i < n; i++) {
    const f = i / (n - 1);
    add(x0 + f * (x1 - x0), y0);
    add(x0 + f * (x1 - x0), y1);
    add(x0, y0 + f * (y1 - y0));
    add(x1, y0 + f * (y1 - y0));
  }
  return [minX, minY, maxX, maxY];
}
