/**
 * Exact coverage fractions: the share of each cell's area inside a polygon,
 * for area-weighted zonal statistics.
 */
import type { FlatMultiPolygon, MultiPolygonCoordinates } from '../crs/transform.js';
import type { Affine } from '../raster/affine.js';
import type { FractionMask } from './types.js';
import { checkRasterSize, ringTwiceArea, toPixelSpace } from './pixelspace.js';

/** Fractions below this are rounding residue of the signed-area sums, not area. */
const ZERO_FRACTION = 1e-9;

let scratchBuffer = new Float64Array(0);

/** A zeroed accumulator of n cells; reused between calls (fresh pages are slow to fault in). */
function scratch(n: number): Float64Array {
  if (scratchBuffer.length < n) scratchBuffer = new Float64Array(Math.max(n, scratchBuffer.length * 2));
  else scratchBuffer.fill(0, 0, n);
  return scratchBuffer.subarray(0, n);
}

/**
 * Adds one edge's signed area to the row accumulators.
 *
 * Method: a closed boundary's winding number integrated over a cell equals
 * the sum over its edges of the signed area of the cell lying to the right of
 * each edge (Green's theorem; the same accumulation is used by
 * area-coverage font rasterizers). For each row the edge crosses, the area
 * right of the edge inside cell c is A(c) = F(c + 1) - F(c) with
 * F(u) = integral over the row's y-range of max(0, u - X(y)); because X(y) is
 * linear, X is uniform on [xl, xr] over that y-range and F is closed-form.
 * acc[c] receives A(c) - A(c - 1), so a running sum along the row returns
 * A(c): exact for straight edges.
 *
 * Coordinates are window-relative with 0 <= x <= width and 0 <= y0 < y1 <= height.
 */
function accumulateEdge(acc: Float64Array, stride: number, x0: number, y0: number, x1: number, y1: number, d: number): void {
  const dxdy = (x1 - x0) / (y1 - y0);
  const rFirst = Math.floor(y0);
  const rEnd = Math.ceil(y1);
  let xa = x0;
  for (let r = rFirst; r < rEnd; r++) {
    const ya = r > y0 ? r : y0;
    const yb = r + 1 < y1 ? r + 1 : y1;
    const dy = yb - ya;
    const xb = yb === y1 ? x1 : x0 + (yb - y0) * dxdy;
    if (dy > 0) {
      const xl = xa < xb ? xa : xb;
      const xr = xa < xb ? xb : xa;
      const base = Math.floor(xl);
      const last = Math.ceil(xr);
      const row = r * stride;
      const lo = xl - base, hi = xr - base, span = hi - lo;
      const mid = 0.5 * (lo + hi);
      let prevF = 0; // F(base) = 0 because base <= xl
      let prevA = 0; // A(base - 1) = 0
      for (let k = 0; base + k <= last; k++) {
        const u = k + 1;
        let F: number;
        if (u <= lo) F = 0;
        else if (u >= hi) F = dy * (u - mid);
        else F = (dy * (u - lo) * (u - lo)) / (2 * span); // span > 0 here since lo < u < hi
        const A = F - prevF;
        acc[row + base + k] += d * (A - prevA);
        prevA = A;
        prevF = F;
      }
    }
    xa = xb;
  }
}

/**
 * Clips an edge to the window rows, splits it where it crosses x = 0 and
 * x = width and clamps the outer pieces onto those lines (which keeps the
 * winding number of every point inside the window), then accumulates it.
 */
function addEdge(acc: Float64Array, stride: number, w: number, h: number, xa: number, ya: number, xb: number, yb: number, sign: number): void {
  if (ya === yb) return; // horizontal edges enclose no area to their right
  let d = sign;
  if (ya > yb) { let t = xa; xa = xb; xb = t; t = ya; ya = yb; yb = t; d = -d; }
  if (yb <= 0 || ya >= h) return;
  const dxdy = (xb - xa) / (yb - ya);
  let x0 = xa, y0 = ya, x1 = xb, y1 = yb;
  if (y0 < 0) { x0 = xa + (0 - ya) * dxdy; y0 = 0; }
  if (y1 > h) { x1 = xa + (h - ya) * dxdy; y1 = h; }
  if (y1 <= y0) return;
  // Split at x = 0 and x = w (in y order along the edge).
  const cuts: number[] = [];
  if (x0 !== x1) {
    for (const xc of [0, w]) {
      if ((x0 < xc && x1 > xc) || (x0 > xc && x1 < xc)) {
        const yc = y0 + ((xc - x0) * (y1 - y0)) / (x1 - x0);
        if (yc > y0 && yc < y1) cuts.push(yc);
      }
    }
    if (cuts.length === 2 && cuts[0] > cuts[1]) cuts.reverse();
  }
  let py = y0, px = x0;
  for (let i = 0; i <= cuts.length; i++) {
    const qy = i < cuts.length ? cuts[i] : y1;
    const qx = i < cuts.length ? x0 + (qy - y0) * ((x1 - x0) / (y1 - y0)) : x1;
    if (qy > py) {
      const cx0 = px < 0 ? 0 : px > w ? w : px;
      const cx1 = qx < 0 ? 0 : qx > w ? w : qx;
      accumulateEdge(acc, stride, cx0, py, cx1, qy, d);
    }
    py = qy; px = qx;
  }
}

/**
 * Exact fraction (0-1) of each cell's area inside a polygon or multipolygon.
 *
 * Works in pixel space (inverse geotransform), where every cell is a unit
 * square whatever the rotation; an affine map scales all areas alike, so the
 * pixel-space fractions are the map-space fractions. Each ring is oriented so
 * that exterior rings add and holes subtract (a valid polygon's holes lie
 * inside its shell); the parts of a MultiPolygon are added, which is their
 * union when they do not overlap (a valid MultiPolygon); fractions are
 * clamped to [0, 1] and values below 1e-9 (rounding residue) set to 0.
 *
 * A polygon smaller than a cell gets its true (small, > 0) fraction in the
 * cell(s) it lies in, so it is never empty while it is on the raster.
 *
 * @param geometry MultiPolygon coordinates in the raster CRS, map units
 * @param transform raster geotransform (may be rotated)
 * @param width raster width in pixels
 * @param height raster height in pixels
 * @param source name used in InputError messages
 * @returns fractions over the polygon's pixel window clipped to the raster,
 *   and their sum (area on the raster in cells); null when no part of the
 *   polygon's area is on the raster
 * @example
 * // a square of 1.5 x 1.5 cells from (0.5, 0.5): corner cells 0.25, edge cells 0.5, centre 1
 * fractionMask([[[[0.5, -0.5], [2, -0.5], [2, -2], [0.5, -2], [0.5, -0.5]]]],
 *   { a: 1, b: 0, c: 0, d: 0, e: -1, f: 0 }, 4, 4)!.sum === 2.25
 */
export function fractionMask(
  geometry: MultiPolygonCoordinates | FlatMultiPolygon,
  transform: Affine,
  width: number,
  height: number,
  source?: string,
): FractionMask | null {
  checkRasterSize(width, height, source);
  const g = toPixelSpace(geometry, transform, source);
  if (g === null) return null;
  const c0 = Math.max(0, Math.floor(g.minX));
  const c1 = Math.min(width, Math.ceil(g.maxX));
  const r0 = Math.max(0, Math.floor(g.minY));
  const r1 = Math.min(height, Math.ceil(g.maxY));
  if (c1 <= c0 || r1 <= r0) return null;
  const w = c1 - c0, h = r1 - r0;
  const stride = w + 1; // column w takes the share of cells right of the window
  const acc = scratch(stride * h);

  for (const poly of g.polygons) {
    const { xs, ys, ringStarts } = poly;
    for (let k = 0; k + 1 < ringStarts.length; k++) {
      const s = ringStarts[k], e = ringStarts[k + 1];
      // Shoelace sign (pixel space, y down). A positive-shoelace ring
      // accumulates -1 inside, so shells use -sign and holes +sign.
      const twiceArea = ringTwiceArea(xs, ys, s, e);
      if (twiceArea === 0) continue;
      const orient = twiceArea > 0 ? 1 : -1;
      const sign = k === 0 ? -orient : orient;
      for (let i = s; i < e; i++) {
        const j = i + 1 < e ? i + 1 : s;
        addEdge(acc, stride, w, h, xs[i] - c0, ys[i] - r0, xs[j] - c0, ys[j] - r0, sign);
      }
    }
  }

  const fractions = new Float32Array(w * h);
  let sum = 0;
  for (let r = 0; r < h; r++) {
    let run = 0;
    const row = r * stride, out = r * w;
    for (let c = 0; c < w; c++) {
      run += acc[row + c];
      fractions[out + c] = run < ZERO_FRACTION ? 0 : run > 1 ? 1 : run;
      sum += fractions[out + c]; // the stored (float32) weight, as zonal statistics will use it
    }
  }
  if (sum === 0) return null;
  return { window: { colOff: c0, rowOff: r0, width: w, height: h }, fractions, sum };
}
