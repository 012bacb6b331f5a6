/**
 * Centre rule: a cell belongs to a polygon when its centre is inside
 * (GDAL rasterize with ALL_TOUCHED=FALSE), computed by scanline fill.
 */
import type { FlatMultiPolygon, MultiPolygonCoordinates } from '../crs/transform.js';
import type { Affine, Window } from '../raster/affine.js';
import type { CentreMask } from './types.js';
import { checkRasterSize, ringTwiceArea, toPixelSpace, type PixelGeometry, type PixelPolygon } from './pixelspace.js';

/**
 * Crossings of one polygon's edges with the centre lines y = r + 0.5 of rows
 * [r0, r1), grouped by row. Edge rule: an edge from y_lo to y_hi crosses the
 * line of row r when y_lo <= r + 0.5 < y_hi (half-open, so a vertex on a
 * centre line is counted once and horizontal edges never), as GDAL's
 * GDALdllImageFilledPolygon does.
 */
function rowCrossings(poly: PixelPolygon, r0: number, r1: number): { offsets: Uint32Array; xs: Float64Array } {
  const { xs, ys, ringStarts } = poly;
  const rows = r1 - r0;
  const offsets = new Uint32Array(rows + 1);
  const rings = ringStarts.length - 1;
  // Pass 1: count crossings per row; pass 2: fill. No per-crossing allocation.
  for (let pass = 0; pass < 2; pass++) {
    const fill = pass === 1 ? new Float64Array(offsets[rows]) : null;
    const cursor = pass === 1 ? offsets.slice(0, rows) : null;
    for (let k = 0; k < rings; k++) {
      const s = ringStarts[k], e = ringStarts[k + 1];
      for (let i = s; i < e; i++) {
        const j = i + 1 < e ? i + 1 : s;
        let xa = xs[i], ya = ys[i], xb = xs[j], yb = ys[j];
        if (ya === yb) continue;
        if (ya > yb) { const tx = xa; xa = xb; xb = tx; const ty = ya; ya = yb; yb = ty; }
        // Rows whose centre line satisfies ya <= r + 0.5 < yb.
        const rs = Math.max(r0, Math.ceil(ya - 0.5));
        const re = Math.min(r1, Math.ceil(yb - 0.5));
        if (rs >= re) continue;
        if (fill === null) {
          for (let r = rs; r < re; r++) offsets[r - r0 + 1]++;
        } else {
          for (let r = rs; r < re; r++) {
            // Same form as GDAL: (dy - dy1) * (dx2 - dx1) / (dy2 - dy1) + dx1.
            fill[cursor![r - r0]++] = (r + 0.5 - ya) * (xb - xa) / (yb - ya) + xa;
          }
        }
      }
    }
    if (fill === null) {
      for (let r = 0; r < rows; r++) offsets[r + 1] += offsets[r];
    } else {
      for (let r = 0; r < rows; r++) {
        const a = offsets[r], b = offsets[r + 1];
        if (b - a > 2) fill.subarray(a, b).sort();
        else if (b - a === 2 && fill[a] > fill[a + 1]) { const t = fill[a]; fill[a] = fill[a + 1]; fill[a + 1] = t; }
      }
      return { offsets, xs: fill };
    }
  }
  throw new Error('unreachable');
}

/**
 * GDAL's extra rule for horizontal edges that lie exactly on a row's centre
 * line: with every ring taken clockwise in map coordinates, an edge running
 * towards -x in pixel space fills its columns [floor(x_lo + 0.5),
 * floor(x_hi + 0.5)) on that row (observed with GDAL 3.6 through rasterio in
 * the ties-* fixtures: a boundary along a centre line keeps the cells on the
 * polygon's map-south side). Appends (row, colStart, colEnd) triples.
 */
function horizontalFills(poly: PixelPolygon, detSign: number, r0: number, r1: number, out: number[]): void {
  const { xs, ys, ringStarts } = poly;
  for (let k = 0; k + 1 < ringStarts.length; k++) {
    const s = ringStarts[k], e = ringStarts[k + 1];
    const twiceArea = ringTwiceArea(xs, ys, s, e);
    // Map-space orientation = pixel-space orientation times the sign of det(transform).
    const reversed = twiceArea * detSign > 0; // counter-clockwise in map space
    for (let i = s; i < e; i++) {
      const j = i + 1 < e ? i + 1 : s;
      const y = ys[i];
      if (y !== ys[j]) continue;
      const r = y - 0.5;
      if (!Number.isInteger(r) || r < r0 || r >= r1) continue;
      const towardsMinusX = reversed ? xs[j] > xs[i] : xs[i] > xs[j];
      if (!towardsMinusX) continue;
      const lo = Math.min(xs[i], xs[j]), hi = Math.max(xs[i], xs[j]);
      out.push(r, Math.floor(lo + 0.5), Math.floor(hi + 0.5));
    }
  }
}

/**
 * Cells whose centre lies inside a polygon or multipolygon.
 *
 * Vertices go to pixel space with the inverse geotransform; each row's
 * centre line is intersected with the edges, crossings are sorted and
 * alternate crossings bound the inside (even-odd within a polygon, so holes
 * are excluded); parts of a MultiPolygon are united.
 *
 * Ties follow GDAL's rasterizer (GDALdllImageFilledPolygon, GDAL 3.6,
 * checked against rasterio.features.geometry_mask in the test fixtures):
 * - a row's centre line y = r + 0.5 meets an edge when y_lo <= r + 0.5 < y_hi;
 * - between crossings x_in < x_out, column c is inside when
 *   x_in < c + 0.5 <= x_out, i.e. c in [floor(x_in + 0.5), floor(x_out + 0.5));
 * - a horizontal edge on a centre line may add its cells (see horizontalFills).
 *
 * @param geometry MultiPolygon coordinates (polygons -> rings -> [x, y]) in the raster CRS, map units
 * @param transform raster geotransform (may be rotated)
 * @param width raster width in pixels
 * @param height raster height in pixels
 * @param source name used in InputError messages (e.g. the district id)
 * @returns the mask, or null when the polygon's extent does not reach the
 *   raster; a mask with count 0 (window = the polygon's extent on the raster)
 *   when it reaches the raster but covers no cell centre
 * @example
 * // a 2 x 2 map-unit square on a 1-unit grid covers 4 centres
 * centreMask([[[[1, -1], [3, -1], [3, -3], [1, -3], [1, -1]]]],
 *   { a: 1, b: 0, c: 0, d: 0, e: -1, f: 0 }, 10, 10)!.count === 4
 */
export function centreMask(
  geometry: MultiPolygonCoordinates | FlatMultiPolygon,
  transform: Affine,
  width: number,
  height: number,
  source?: string,
): CentreMask | null {
  checkRasterSize(width, height, source);
  const g = toPixelSpace(geometry, transform, source);
  if (g === null) return null;
  if (g.maxX <= 0 || g.minX >= width || g.maxY <= 0 || g.minY >= height) return null;
  // Rows whose centre line can meet an edge.
  const r0 = Math.max(0, Math.ceil(g.minY - 0.5));
  // r + 0.5 <= maxY: the last row can hold only a horizontal edge's fill.
  const r1 = Math.min(height, Math.floor(g.maxY + 0.5));
  if (r1 <= r0) return emptyMask(extentWindow(g, width, height));

  const parts = g.polygons.map((p) => rowCrossings(p, r0, r1));
  const detSign = Math.sign(transform.a * transform.e - transform.b * transform.d);
  const fills = horizontalFillsByRow(g.polygons, detSign, r0, r1);
  const rows = rowSpans(parts, fills, r0, r1 - r0, width);
  if (rows.ints === 0) return emptyMask(extentWindow(g, width, height));
  return tightMask(rows, r0);
}

/** The polygon's pixel extent on the raster (at least 1 x 1): the window of a mask that holds no cell. */
function extentWindow(g: PixelGeometry, width: number, height: number): Window {
  const c0 = Math.max(0, Math.floor(g.minX)), c1 = Math.min(width, Math.ceil(g.maxX));
  const q0 = Math.max(0, Math.floor(g.minY)), q1 = Math.min(height, Math.ceil(g.maxY));
  return { colOff: c0, rowOff: q0, width: Math.max(1, c1 - c0), height: Math.max(1, q1 - q0) };
}

/** Horizontal-edge fills of all parts as (row, colStart, colEnd) triples, and their order by row. */
interface RowFills {
  readonly triples: number[];
  /** Triple indices sorted by row. */
  readonly order: number[];
}

function horizontalFillsByRow(polygons: readonly PixelPolygon[], detSign: number, r0: number, r1: number): RowFills {
  const triples: number[] = [];
  for (const p of polygons) horizontalFills(p, detSign, r0, r1, triples);
  const order = Array.from({ length: triples.length / 3 }, (_, i) => i).sort((p, q) => triples[3 * p] - triples[3 * q]);
  return { triples, order };
}

/** Merged spans of rows r0 .. r0 + rows - 1, before tightening. */
interface RowSpans {
  /** Flat [colStart, colEnd) pairs; the first `ints` entries are used. */
  readonly spans: Int32Array;
  readonly ints: number;
  /** Pair index where each row starts; length rows + 1. */
  readonly rowStart: Uint32Array;
  readonly rows: number;
}

/**
 * Each row's spans: the column ranges between alternate crossings of every
 * part plus the horizontal-edge fills, clipped to the raster, sorted and
 * merged (union across parts; [a, b) [b, c) joined).
 *
 * This is the per-row inner loop of every district on every scene, kept as
 * one function on purpose: typed arrays reused across rows, no allocation per
 * row or per span, no closures.
 */
function rowSpans(parts: readonly { offsets: Uint32Array; xs: Float64Array }[], fills: RowFills, r0: number, rows: number, width: number): RowSpans {
  const { triples, order } = fills;
  let nextFill = 0;
  // Spans per row, in a growable Int32Array; worst case is one span per crossing pair.
  let capacity = 0;
  for (const p of parts) capacity += p.xs.length;
  let spans = new Int32Array(Math.max(2, capacity));
  const rowStart = new Uint32Array(rows + 1);
  let n = 0; // ints written
  let tmp = new Int32Array(16);
  for (let r = 0; r < rows; r++) {
    rowStart[r] = n >> 1;
    let m = 0; // ints in tmp for this row
    for (let q = 0; q < parts.length; q++) {
      const { offsets, xs } = parts[q];
      const a = offsets[r], b = offsets[r + 1];
      for (let i = a; i + 1 < b; i += 2) {
        let cs = Math.floor(xs[i] + 0.5);
        let ce = Math.floor(xs[i + 1] + 0.5);
        if (cs < 0) cs = 0;
        if (ce > width) ce = width;
        if (ce <= cs) continue;
        if (m + 2 > tmp.length) tmp = doubled(tmp);
        tmp[m++] = cs;
        tmp[m++] = ce;
      }
    }
    let filled = false;
    while (nextFill < order.length && triples[3 * order[nextFill]] === r0 + r) {
      const f = 3 * order[nextFill++];
      const cs = Math.max(0, triples[f + 1]), ce = Math.min(width, triples[f + 2]);
      if (ce <= cs) continue;
      if (m + 2 > tmp.length) tmp = doubled(tmp);
      tmp[m++] = cs;
      tmp[m++] = ce;
      filled = true;
    }
    if (m === 0) continue;
    if (parts.length > 1 || filled) sortPairs(tmp, m);
    // Merge overlapping or touching spans (union across parts; also joins
    // [a, b) [b, c) from a polygon whose crossings coincide).
    let curS = tmp[0], curE = tmp[1];
    for (let i = 2; i < m; i += 2) {
      const s = tmp[i], e = tmp[i + 1];
      if (s <= curE) { if (e > curE) curE = e; continue; }
      if (n + 2 > spans.length) spans = doubled(spans);
      spans[n++] = curS; spans[n++] = curE;
      curS = s; curE = e;
    }
    if (n + 2 > spans.length) spans = doubled(spans);
    spans[n++] = curS; spans[n++] = curE;
  }
  rowStart[rows] = n >> 1;
  return { spans, ints: n, rowStart, rows };
}

/** The mask tightened to the rows and columns that hold cells (needs at least one span). */
function tightMask({ spans, ints: n, rowStart, rows }: RowSpans, r0: number): CentreMask {
  let first = 0, last = rows - 1;
  while (rowStart[first + 1] === rowStart[first]) first++;
  while (rowStart[last + 1] === rowStart[last]) last--;
  let cMin = Infinity, cMax = -Infinity, count = 0;
  for (let i = 0; i < n; i += 2) {
    if (spans[i] < cMin) cMin = spans[i];
    if (spans[i + 1] > cMax) cMax = spans[i + 1];
    count += spans[i + 1] - spans[i];
  }
  const h = last - first + 1;
  const rowOffsets = new Uint32Array(h + 1);
  const base = rowStart[first];
  for (let i = 0; i <= h; i++) rowOffsets[i] = rowStart[first + i] - base;
  return {
    window: { colOff: cMin, rowOff: r0 + first, width: cMax - cMin, height: h },
    rowOffsets,
    spans: spans.slice(2 * base, 2 * rowStart[last + 1]),
    count,
  };
}

/** A copy of `a` with twice the room. */
function doubled(a: Int32Array): Int32Array<ArrayBuffer> {
  const t = new Int32Array(a.length * 2);
  t.set(a);
  return t;
}

function emptyMask(window: Window): CentreMask {
  return { window, rowOffsets: new Uint32Array(window.height + 1), spans: new Int32Array(0), count: 0 };
}

/** Sorts (start, end) pairs by start: insertion sort for the usual few spans per row. */
function sortPairs(a: Int32Array, m: number): void {
  if (m > 64) {
    const pairs: [number, number][] = [];
    for (let i = 0; i < m; i += 2) pairs.push([a[i], a[i + 1]]);
    pairs.sort((p, q) => p[0] - q[0]);
    for (let i = 0; i < pairs.length; i++) { a[2 * i] = pairs[i][0]; a[2 * i + 1] = pairs[i][1]; }
    return;
  }
  for (let i = 2; i < m; i += 2) {
    const s = a[i], e = a[i + 1];
    let j = i - 2;
    while (j >= 0 && a[j] > s) { a[j + 2] = a[j]; a[j + 3] = a[j + 1]; j -= 2; }
    a[j + 2] = s; a[j + 3] = e;
  }
}
