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
 * True when a proj4 definition is geographic (degrees of longitude/latitude),
 * false for a projected CRS.
 * @example isGeographic('+proj=longlat +datum=WGS84 +no_defs') // true
 */
export function isGeographic(def: string): boolean {
  return /\+proj=(longlat|latlong|lonlat|latlon)(\s|$)/.test(def);
}

const transformers = new Map<string, PointTransformer>();

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
  const key = `${fromDef}\u0000${toDef}`;
  const cached = transformers.get(key);
  if (cached) return cached;
  const utm = fromDef.trim() === WGS84_LONLAT ? utmZoneOf(toDef) : null;
  if (utm) {
    // WGS 84 lon/lat into a WGS 84 UTM zone without loading proj4 (utm.ts); points
    // the series does not take (far from the zone, non-finite) go the general way
    const forward = utmForward(utm.zone, utm.south);
    let general: PointTransformer | null = null;
    const transform: PointTransformer = (x, y) => {
      const out: [number, number] = [0, 0];
      if (forward(x, y, out)) return out;
      general ??= generalTransformer(fromDef, toDef);
      return general(x, y);
    };
    transformers.set(key, transform);
    return transform;
  }
  const transform = generalTransformer(fromDef, toDef);
  transformers.set(key, transform);
  return transform;
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
 * stay straight in the target CRS, fine for district-sized polygons).
 *
 * @param geometry polygons -> rings -> [x, y] in `fromDef` units
 * @param source optional file name for error messages
 * @returns a new array in `toDef` units; input is not modified.
 */
export function reprojectGeometry(
  geometry: MultiPolygonCoordinates,
  fromDef: string,
  toDef: string,
  source?: string,
): MultiPolygonCoordinates {
  const t = makeTransformer(fromDef, toDef);
  try {
    return geometry.map((polygon) => polygon.map((ring) => ring.map(([x, y]) => t(x, y))));
  } catch (e) {
    if (source && e instanceof InputError && e.source === undefined) throw new InputError(e.message, source);
    throw e;
  }
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
