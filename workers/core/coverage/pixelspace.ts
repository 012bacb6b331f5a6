/**
 * Polygon geometry moved into pixel space: the space in which cell (col, row)
 * is the unit square [col, col + 1) x [row, row + 1) and its centre is
 * (col + 0.5, row + 0.5). Both coverage rules work there, so a rotated
 * geotransform needs no special case.
 */
import { invert, type Affine } from '../raster/affine.js';
import { InputError } from '../errors.js';
import { isFlatMultiPolygon, type FlatPolygon } from '../crs/transform.js';

/** One polygon in pixel space: all rings' vertices back to back (closing vertex dropped). */
export interface PixelPolygon {
  /** Column coordinate of each vertex (pixel units, fractional). */
  readonly xs: Float64Array;
  /** Row coordinate of each vertex (pixel units, fractional). */
  readonly ys: Float64Array;
  /** Start index of ring k in xs/ys; ring k ends where ring k + 1 starts. Length rings + 1. */
  readonly ringStarts: Uint32Array;
}

/** A geometry in pixel space with its bounding box (pixel units). */
export interface PixelGeometry {
  readonly polygons: PixelPolygon[];
  readonly minX: number;
  readonly minY: number;
  readonly maxX: number;
  readonly maxY: number;
}

/**
 * @deprecated The one inverse geotransform is `invert` in raster/affine.ts;
 * this name stays only until its last importer moves to it.
 */
export const inverseGeoTransform: (t: Affine, source?: string) => Affine = invert;

function describe(p: number, r: number): string {
  return `ring ${r + 1} of polygon ${p + 1}`;
}

/**
 * Validates nested polygon/multipolygon coordinates and copies them into typed
 * arrays, polygon by polygon (map units unchanged). Throws InputError naming `source` for anything
 * that is not a list of polygons of rings of finite [x, y] positions.
 */
function flattenChecked(geometry: unknown, source?: string): FlatPolygon[] {
  if (!Array.isArray(geometry)) {
    throw new InputError('geometry coordinates are not a list of polygons', source);
  }
  const polygons: FlatPolygon[] = [];
  for (let p = 0; p < geometry.length; p++) {
    const rings: unknown = geometry[p];
    if (!Array.isArray(rings)) throw new InputError(`polygon ${p + 1} is not a list of rings`, source);
    let total = 0;
    for (let r = 0; r < rings.length; r++) {
      const ring: unknown = rings[r];
      if (!Array.isArray(ring)) throw new InputError(`${describe(p, r)} is not a list of positions`, source);
      total += ring.length;
    }
    const xs = new Float64Array(total);
    const ys = new Float64Array(total);
    const ringStarts = new Uint32Array(rings.length + 1);
    let n = 0;
    for (let r = 0; r < rings.length; r++) {
      const ring = rings[r] as unknown[];
      ringStarts[r] = n;
      for (let i = 0; i < ring.length; i++, n++) {
        const pos: unknown = ring[i];
        if (!Array.isArray(pos) || pos.length < 2) {
          throw new InputError(`position ${i + 1} of ${describe(p, r)} is not an [x, y] pair`, source);
        }
        const x = pos[0], y = pos[1];
        if (typeof x !== 'number' || typeof y !== 'number') {
          throw new InputError(`position ${i + 1} of ${describe(p, r)} has a coordinate that is not a finite number`, source);
        }
        xs[n] = x;
        ys[n] = y;
      }
    }
    ringStarts[rings.length] = n;
    polygons.push({ xs, ys, ringStarts });
  }
  return polygons;
}

/**
 * Validates polygon/multipolygon coordinates (map units of the raster CRS)
 * and maps every vertex to pixel space with the inverse geotransform.
 *
 * Rings may be open or closed (a closing vertex equal to the first is
 * dropped); each needs at least 3 distinct positions. Throws InputError
 * naming `source` for anything that is not a list of polygons of rings of
 * finite [x, y] positions.
 *
 * @param geometry MultiPolygon coordinates: polygons -> rings -> positions -> [x, y],
 *   or the same as typed arrays (reprojectFlat), read without an array per position
 * @param transform raster geotransform (may be rotated)
 * @returns vertices in pixel units and their bounding box; null for an empty geometry
 */
export function toPixelSpace(geometry: unknown, transform: Affine, source?: string): PixelGeometry | null {
  const given = isFlatMultiPolygon(geometry) ? geometry.polygons : flattenChecked(geometry, source);
  const inv = invert(transform, source);
  const polygons: PixelPolygon[] = [];
  let minX = Infinity, minY = Infinity, maxX = -Infinity, maxY = -Infinity;
  for (let p = 0; p < given.length; p++) {
    const { xs: mx, ys: my, ringStarts: from } = given[p];
    const rings = from.length - 1;
    if (rings <= 0) continue;
    const xs = new Float64Array(mx.length);
    const ys = new Float64Array(mx.length);
    const ringStarts = new Uint32Array(rings + 1);
    let n = 0;
    for (let r = 0; r < rings; r++) {
      ringStarts[r] = n;
      const start = n;
      for (let i = from[r]; i < from[r + 1]; i++) {
        const x = mx[i], y = my[i];
        if (!Number.isFinite(x) || !Number.isFinite(y)) {
          throw new InputError(`position ${i - from[r] + 1} of ${describe(p, r)} has a coordinate that is not a finite number`, source);
        }
        // Pixel space; same operation order as GDAL's GDALApplyGeoTransform.
        const px = inv.c + x * inv.a + y * inv.b;
        const py = inv.f + x * inv.d + y * inv.e;
        // Drop repeated consecutive vertices: they add zero-length edges only.
        if (n > start && xs[n - 1] === px && ys[n - 1] === py) continue;
        xs[n] = px;
        ys[n] = py;
        n++;
      }
      if (n - start > 1 && xs[n - 1] === xs[start] && ys[n - 1] === ys[start]) n--; // closing vertex
      if (n - start < 3) {
        throw new InputError(`${describe(p, r)} has fewer than 3 distinct positions`, source);
      }
      for (let i = start; i < n; i++) {
        if (xs[i] < minX) minX = xs[i];
        if (xs[i] > maxX) maxX = xs[i];
        if (ys[i] < minY) minY = ys[i];
        if (ys[i] > maxY) maxY = ys[i];
      }
    }
    ringStarts[rings] = n;
    polygons.push({ xs: xs.subarray(0, n), ys: ys.subarray(0, n), ringStarts });
  }
  if (polygons.length === 0) return null;
  return { polygons, minX, minY, maxX, maxY };
}

/** Raster size check shared by both mask builders. */
export function checkRasterSize(width: number, height: number, source?: string): void {
  if (!Number.isInteger(width) || !Number.isInteger(height) || width <= 0 || height <= 0) {
    throw new InputError(`raster size ${width} x ${height} is not a positive whole number of pixels`, source);
  }
}

/**
 * Twice the signed (shoelace) area of ring [s, e) of a pixel-space polygon,
 * relative to its first vertex for precision; positive for counter-clockwise
 * in pixel space (y down).
 */
export function ringTwiceArea(xs: ArrayLike<number>, ys: ArrayLike<number>, s: number, e: number): number {
  let twiceArea = 0;
  for (let i = s; i < e; i++) {
    const j = i + 1 < e ? i + 1 : s;
    twiceArea += (xs[i] - xs[s]) * (ys[j] - ys[s]) - (xs[j] - xs[s]) * (ys[i] - ys[s]);
  }
  return twiceArea;
}
