/**
 * Affine geotransform and read windows as values.
 *
 * Convention (the one GDAL and rasterio use): pixel (col, row) = (0, 0) is the
 * upper-left CORNER of the upper-left pixel; the CENTRE of pixel (i, j) is at
 * (i + 0.5, j + 0.5). Map coordinates:
 *
 *     x = c + a * col + b * row
 *     y = f + d * col + e * row
 *
 * GDAL's geotransform [GT0..GT5] is [c, a, b, f, d, e].
 */
import { InputError } from '../errors.js';
import type { BBox } from '../bbox.js';

export type { BBox } from '../bbox.js';
export interface Affine {
  readonly a: number;
  readonly b: number;
  readonly c: number;
  readonly d: number;
  readonly e: number;
  readonly f: number;
}

/** A rectangle of whole pixels, absolute to the raster. */
export interface Window {
  readonly colOff: number;
  readonly rowOff: number;
  readonly width: number;
  readonly height: number;
}

/**
 * Affine from a GDAL geotransform array [c, a, b, f, d, e].
 * @throws InputError naming `source` when the array does not hold 6 numbers
 * @example fromGdal([500000, 30, 0, 4200000, 0, -30]).a === 30
 */
export function fromGdal(gt: readonly number[], source?: string): Affine {
  if (gt.length !== 6) throw new InputError(`a geotransform needs 6 numbers, got ${gt.length}`, source);
  const [c, a, b, f, d, e] = gt;
  return { a, b, c, d, e, f };
}

/** GDAL geotransform array [c, a, b, f, d, e] of an affine. */
export function toGdal(t: Affine): [number, number, number, number, number, number] {
  return [t.c, t.a, t.b, t.f, t.d, t.e];
}

/**
 * Map coordinates of a pixel-space point (fractional col/row; the centre of
 * pixel (i, j) is (i + 0.5, j + 0.5)).
 * @example pixelToMap({a:30,b:0,c:0,d:0,e:-30,f:0}, 0.5, 0.5) // [15, -15]
 */
export function pixelToMap(t: Affine, col: number, row: number): [number, number] {
  return [t.c + t.a * col + t.b * row, t.f + t.d * col + t.e * row];
}

/**
 * Inverse of {@link pixelToMap}: the transform from map coordinates to
 * fractional pixel coordinates.
 *
 * A north-up transform (b = d = 0) is inverted axis by axis (1 / a, 1 / e), as
 * GDAL's GDALInvGeoTransform does, so a map coordinate that lies exactly on a
 * pixel centre lands exactly on x.5 in pixel space, as in GDAL's rasterizer;
 * a rotated one through the determinant. A transform that is not
 * finite, or whose determinant vanishes next to its pixel size (zero or
 * collinear pixel axes), is refused.
 * @param source file the transform comes from, named in the InputError
 * @throws InputError for a singular or non-finite transform
 * @example invert({ a: 30, b: 0, c: 500000, d: 0, e: -30, f: 4200000 }) // { a: 1/30, c: -500000/30, e: -1/30, f: 140000, b: 0, d: 0 }
 */
export function invert(t: Affine, source?: string): Affine {
  const finite = [t.a, t.b, t.c, t.d, t.e, t.f].every(Number.isFinite);
  if (finite && t.b === 0 && t.d === 0 && t.a !== 0 && t.e !== 0) {
    return { a: 1 / t.a, b: 0, c: -t.c / t.a, d: 0, e: 1 / t.e, f: -t.f / t.e };
  }
  const det = t.a * t.e - t.b * t.d;
  const magnitude = Math.max(Math.abs(t.a), Math.abs(t.b), Math.abs(t.d), Math.abs(t.e));
  if (!finite || !Number.isFinite(det) || Math.abs(det) <= 1e-10 * magnitude * magnitude) {
    throw new InputError(
      'the raster geotransform is singular or not finite (zero or parallel pixel axes), so map coordinates cannot be placed on its pixels',
      source,
    );
  }
  const inv = 1 / det;
  return {
    a: t.e * inv,
    b: -t.b * inv,
    c: (t.b * t.f - t.c * t.e) * inv,
    d: -t.d * inv,
    e: t.a * inv,
    f: (-t.a * t.f + t.c * t.d) * inv,
  };
}

/**
 * Fractional pixel coordinates [col, row] of a map point.
 * @throws InputError naming `source` for a singular transform
 */
export function mapToPixel(t: Affine, x: number, y: number, source?: string): [number, number] {
  const inv = invert(t, source);
  return [inv.c + inv.a * x + inv.b * y, inv.f + inv.d * x + inv.e * y];
}

/** Pixel width and height in map units (positive). */
export function pixelSize(t: Affine): { x: number; y: number } {
  return { x: Math.hypot(t.a, t.d), y: Math.hypot(t.b, t.e) };
}

/** Map bounding box of a window. */
export function windowBounds(t: Affine, w: Window): BBox {
  const xs: number[] = [];
  const ys: number[] = [];
  for (const [col, row] of [
    [w.colOff, w.rowOff],
    [w.colOff + w.width, w.rowOff],
    [w.colOff, w.rowOff + w.height],
    [w.colOff + w.width, w.rowOff + w.height],
  ]) {
    const [x, y] = pixelToMap(t, col, row);
    xs.push(x);
    ys.push(y);
  }
  return [Math.min(...xs), Math.min(...ys), Math.max(...xs), Math.max(...ys)];
}

/**
 * The smallest window of whole pixels that covers a map bounding box, clamped
 * to a raster of `width` x `height`. Null when they do not overlap (a box
 * that only touches the raster's edge does not overlap it).
 * @throws InputError naming `source` for a singular transform
 */
export function windowOfBounds(t: Affine, bbox: BBox, width: number, height: number, source?: string): Window | null {
  const inv = invert(t, source);
  let minC = Infinity, minR = Infinity, maxC = -Infinity, maxR = -Infinity;
  for (const [x, y] of [
    [bbox[0], bbox[1]],
    [bbox[2], bbox[1]],
    [bbox[0], bbox[3]],
    [bbox[2], bbox[3]],
  ]) {
    const col = inv.c + inv.a * x + inv.b * y;
    const row = inv.f + inv.d * x + inv.e * y;
    minC = Math.min(minC, col); maxC = Math.max(maxC, col);
    minR = Math.min(minR, row); maxR = Math.max(maxR, row);
  }
  const c0 = Math.max(0, Math.floor(minC));
  const r0 = Math.max(0, Math.floor(minR));
  const c1 = Math.min(width, Math.ceil(maxC));
  const r1 = Math.min(height, Math.ceil(maxR));
  if (c1 <= c0 || r1 <= r0) return null;
  return { colOff: c0, rowOff: r0, width: c1 - c0, height: r1 - r0 };
}

/** Intersection of two windows, or null. */
export function intersectWindows(p: Window, q: Window): Window | null {
  const c0 = Math.max(p.colOff, q.colOff);
  const r0 = Math.max(p.rowOff, q.rowOff);
  const c1 = Math.min(p.colOff + p.width, q.colOff + q.width);
  const r1 = Math.min(p.rowOff + p.height, q.rowOff + q.height);
  if (c1 <= c0 || r1 <= r0) return null;
  return { colOff: c0, rowOff: r0, width: c1 - c0, height: r1 - r0 };
}

/** Union (bounding window) of windows, or null for none. */
export function unionWindows(ws: readonly Window[]): Window | null {
  if (ws.length === 0) return null;
  let c0 = Infinity, r0 = Infinity, c1 = -Infinity, r1 = -Infinity;
  for (const w of ws) {
    c0 = Math.min(c0, w.colOff); r0 = Math.min(r0, w.rowOff);
    c1 = Math.max(c1, w.colOff + w.width); r1 = Math.max(r1, w.rowOff + w.height);
  }
  return { colOff: c0, rowOff: r0, width: c1 - c0, height: r1 - r0 };
}

/**
 * Whether two geotransforms describe the same grid: every coefficient equal
 * within 1e-9 of its size or of the pixel size (rounding in the written tags).
 */
export function sameGrid(p: Affine, q: Affine): boolean {
  const scale = Math.max(Math.abs(p.a), Math.abs(p.b), Math.abs(p.d), Math.abs(p.e));
  for (const k of ['a', 'b', 'c', 'd', 'e', 'f'] as const) {
    const tol = 1e-9 * Math.max(Math.abs(p[k]), Math.abs(q[k]), scale);
    if (!(Math.abs(p[k] - q[k]) <= tol)) return false;
  }
  return true;
}
