/**
 * Self-intersections of a MultiPolygon's rings, found with a uniform grid of
 * segment buckets instead of testing every pair of segments.
 *
 * What counts (the rule district validation has always applied): every ring
 * of every polygon is compared with itself and with every other ring; two
 * segments intersect when they are not parallel and the parameters of the
 * crossing point on both lie in [0, 1], so proper crossings and touching
 * (a vertex on another segment, a ring passing twice through one vertex)
 * count, while collinear overlaps and a segment's neighbours in its own ring
 * (including the closing pair, last and first) do not. The crossing test is
 * the classic parametric line-line formula (Cramer's rule on the two
 * parametric equations; e.g. Paul Bourke, "Intersection point of two lines",
 * 1989), computed term for term as @turf/kinks computes it, so that the
 * verdict and the reported point agree with that library to the last bit.
 *
 * Reported: the number of intersections counted and the first one, in the
 * order of a nested loop over (ring a, ring b, segment i of a, segment k >= i
 * of b) - the order @turf/kinks lists them in (for two different rings a pair
 * is met once from each side, twice when i = k, and counted each time).
 *
 * Cost: each segment goes into the grid cells its bounding box covers (about
 * n cells over the geometry's extent) and only segments sharing a cell are
 * compared, each pair once (in the cell holding the low corner of the overlap
 * of their boxes): about O(n) for district outlines, instead of the n^2 / 2
 * pairs of a full comparison. Segments crossing many cells (long spikes) cost
 * more; the worst case stays n^2 / 2 pair tests.
 */

/** First self-intersection found and how many there are. */
export interface SelfIntersections {
  /** Crossing point [x, y] (lon, lat for district files) of the first intersection. */
  first: [number, number];
  /** Intersections counted (see the module comment for how pairs are counted). */
  count: number;
}

/**
 * Crossing parameter test of segment 1 (line1) against segment 2 (line2),
 * written as @turf/kinks writes it so floating-point results agree. Returns
 * the parameter on segment 1, or NaN when they do not meet.
 */
function crossingOnFirst(
  ax0: number, ay0: number, ax1: number, ay1: number,
  bx0: number, by0: number, bx1: number, by1: number,
): number {
  const denominator = (by1 - by0) * (ax1 - ax0) - (bx1 - bx0) * (ay1 - ay0);
  if (denominator === 0) return NaN; // parallel or collinear: not counted
  const a = ay0 - by0;
  const b = ax0 - bx0;
  const numerator1 = (bx1 - bx0) * a - (by1 - by0) * b;
  const numerator2 = (ax1 - ax0) * a - (ay1 - ay0) * b;
  const ta = numerator1 / denominator;
  const tb = numerator2 / denominator;
  return ta >= 0 && ta <= 1 && tb >= 0 && tb <= 1 ? ta : NaN;
}

// Scratch tables reused from call to call (a district file is checked district
// by district; fresh typed arrays for each would only feed the collector).
let f64 = new Float64Array(0);
let i32 = new Int32Array(0);

function grow(n: number, cells: number): void {
  if (f64.length < 8 * n) f64 = new Float64Array(Math.max(8 * n, 2 * f64.length));
  const need = 6 * n + 2 * (cells + 1) + 4 * n;
  if (i32.length < need) i32 = new Int32Array(Math.max(need, 2 * i32.length));
}

/**
 * Find where the rings of a polygon or multipolygon intersect themselves or
 * each other.
 *
 * @param rings every ring of the geometry in order (polygon by polygon,
 *   exterior then holes), each an array of [x, y] positions; rings are
 *   normally closed (first = last) and free of consecutive repeats
 * @returns null when no two segments meet (other than neighbours in a ring),
 *   else the first intersection and the count
 * @example
 * // a bow-tie crosses at its centre
 * findSelfIntersections([[[0, 0], [2, 2], [2, 0], [0, 2], [0, 0]]]) // { first: [1, 1], count: 1 }
 */
export function findSelfIntersections(rings: readonly (readonly (readonly number[])[])[]): SelfIntersections | null {
  let n = 0, xmin = Infinity, xmax = -Infinity, ymin = Infinity, ymax = -Infinity;
  for (const ring of rings) {
    if (ring.length > 1) n += ring.length - 1;
    for (let i = 0; i < ring.length; i++) {
      const x = ring[i][0], y = ring[i][1];
      if (x < xmin) xmin = x;
      if (x > xmax) xmax = x;
      if (y < ymin) ymin = y;
      if (y > ymax) ymax = y;
    }
  }
  if (n < 2) return null;
  if (!Number.isFinite(xmin + xmax + ymin + ymax)) throw new Error('self-intersection test needs finite coordinates');
  // Boxes padded far beyond rounding error, so every pair the crossing test
  // could accept is a candidate; the test itself decides.
  const maxAbs = Math.max(-xmin, xmax, -ymin, ymax);
  const pad = 1e-9 * Math.max(maxAbs, xmax - xmin, ymax - ymin, 1e-300);
  // About n square cells over the padded extent (at least one, at most n per axis).
  const gx0 = xmin - 2 * pad, gy0 = ymin - 2 * pad;
  const w = xmax - xmin + 4 * pad, h = ymax - ymin + 4 * pad;
  const size = Math.max(Math.sqrt((w * h) / n), Math.max(w, h) / n);
  const nx = Math.max(1, Math.min(n, Math.ceil(w / size))), ny = Math.max(1, Math.min(n, Math.ceil(h / size)));
  const cells = nx * ny;
  grow(n, cells);
  // xy: per segment x0 y0 x1 y1 and its padded box left right bottom top; tab: see the offsets below
  const xy = f64, tab = i32;
  const RING = 0, INDEX = n, CX = 2 * n, CY = 3 * n, CX1 = 4 * n, CY1 = 5 * n, START = 6 * n, FILL = START + cells + 1, MEMBERS = FILL + cells + 1;
  const sx = nx / w, sy = ny / h;

  // Pass 1: segments, their first cells, and the count per cell.
  tab.fill(0, START, START + cells + 1);
  let k = 0;
  for (let r = 0; r < rings.length; r++) {
    const ring = rings[r];
    for (let i = 0; i + 1 < ring.length; i++, k++) {
      const ax = ring[i][0], ay = ring[i][1], bx = ring[i + 1][0], by = ring[i + 1][1];
      const L = (ax < bx ? ax : bx) - pad, R = (ax < bx ? bx : ax) + pad, B = (ay < by ? ay : by) - pad, T = (ay < by ? by : ay) + pad;
      const o = 8 * k;
      xy[o] = ax; xy[o + 1] = ay; xy[o + 2] = bx; xy[o + 3] = by;
      xy[o + 4] = L; xy[o + 5] = R; xy[o + 6] = B; xy[o + 7] = T;
      tab[RING + k] = r; tab[INDEX + k] = i;
      const u0 = cellOf((L - gx0) * sx, nx), u1 = cellOf((R - gx0) * sx, nx);
      const v0 = cellOf((B - gy0) * sy, ny), v1 = cellOf((T - gy0) * sy, ny);
      tab[CX + k] = u0; tab[CY + k] = v0; tab[CX1 + k] = u1; tab[CY1 + k] = v1;
      for (let v = v0; v <= v1; v++) for (let u = u0; u <= u1; u++) tab[START + v * nx + u + 1]++;
    }
  }
  for (let c = 0; c < cells; c++) tab[START + c + 1] += tab[START + c];
  if (MEMBERS + tab[START + cells] > tab.length) {
    // Long segments covering many cells: make room and reload the view.
    const t = new Int32Array(MEMBERS + tab[START + cells]);
    t.set(tab.subarray(0, MEMBERS));
    i32 = t;
    return scanCells(rings, xy, t, n, nx, ny);
  }
  return scanCells(rings, xy, tab, n, nx, ny);
}

function cellOf(t: number, cells: number): number {
  const c = Math.floor(t);
  return c < 0 ? 0 : c >= cells ? cells - 1 : c;
}

/** Pass 2 (bucket fill) and pass 3 (pairs sharing a cell, each once). */
function scanCells(
  rings: readonly (readonly (readonly number[])[])[],
  xy: Float64Array, tab: Int32Array, n: number, nx: number, ny: number,
): SelfIntersections | null {
  const cells = nx * ny;
  const RING = 0, INDEX = n, CX = 2 * n, CY = 3 * n, CX1 = 4 * n, CY1 = 5 * n, START = 6 * n, FILL = START + cells + 1, MEMBERS = FILL + cells + 1;
  tab.copyWithin(FILL, START, START + cells);
  for (let k = 0; k < n; k++) {
    const u1 = tab[CX1 + k], v1 = tab[CY1 + k];
    for (let v = tab[CY + k]; v <= v1; v++) for (let u = tab[CX + k]; u <= u1; u++) tab[MEMBERS + tab[FILL + v * nx + u]++] = k;
  }

  let count = 0;
  // Smallest (ring a, ring b, i, k) key seen, and its point.
  let bestA = -1, bestB = 0, bestI = 0, bestK = 0, bestX = 0, bestY = 0;
  const offer = (ra: number, rb: number, i: number, k: number, line1: number, t: number): void => {
    count++;
    if (bestA >= 0 && (ra > bestA || (ra === bestA && (rb > bestB || (rb === bestB && (i > bestI || (i === bestI && k >= bestK))))))) return;
    bestA = ra; bestB = rb; bestI = i; bestK = k;
    bestX = xy[8 * line1] + t * (xy[8 * line1 + 2] - xy[8 * line1]);
    bestY = xy[8 * line1 + 1] + t * (xy[8 * line1 + 3] - xy[8 * line1 + 1]);
  };
  const test = (p: number, q: number): number =>
    crossingOnFirst(xy[8 * p], xy[8 * p + 1], xy[8 * p + 2], xy[8 * p + 3], xy[8 * q], xy[8 * q + 1], xy[8 * q + 2], xy[8 * q + 3]);

  for (let cell = 0; cell < cells; cell++) {
    const e = MEMBERS + tab[START + cell + 1], u = cell % nx, v = (cell - u) / nx;
    for (let p = MEMBERS + tab[START + cell]; p < e; p++) {
      const a = tab[p], oa = 8 * a;
      const aL = xy[oa + 4], aR = xy[oa + 5], aB = xy[oa + 6], aT = xy[oa + 7];
      for (let q = p + 1; q < e; q++) {
        const b = tab[q], ob = 8 * b;
        if (xy[ob + 4] > aR || xy[ob + 5] < aL || xy[ob + 6] > aT || xy[ob + 7] < aB) continue;
        // Each pair once: in the cell holding the low corner of the overlap of the boxes.
        if ((tab[CX + a] > tab[CX + b] ? tab[CX + a] : tab[CX + b]) !== u || (tab[CY + a] > tab[CY + b] ? tab[CY + a] : tab[CY + b]) !== v) continue;
        const ra = tab[RING + a], rb = tab[RING + b], ia = tab[INDEX + a], ib = tab[INDEX + b];
        if (ra === rb) {
          // Same ring: segment i against k > i, skipping neighbours and the closing pair of a closed ring.
          const first = ia < ib ? a : b, second = first === a ? b : a;
          const i = ia < ib ? ia : ib, k = ia < ib ? ib : ia;
          if (k - i === 1) continue;
          const ring = rings[ra];
          if (i === 0 && k === ring.length - 2 && ring[0][0] === ring[ring.length - 1][0] && ring[0][1] === ring[ring.length - 1][1]) continue;
          const t = test(first, second);
          if (t === t) offer(ra, ra, i, k, first, t);
        } else {
          // Different rings: met from a's side when k >= i and from b's side when i >= k,
          // each with its own line1, as the nested loop meets them.
          if (ib >= ia) {
            const t = test(a, b);
            if (t === t) offer(ra, rb, ia, ib, a, t);
          }
          if (ia >= ib) {
            const t = test(b, a);
            if (t === t) offer(rb, ra, ib, ia, b, t);
          }
        }
      }
    }
  }
  return count === 0 ? null : { first: [bestX, bestY], count };
}
