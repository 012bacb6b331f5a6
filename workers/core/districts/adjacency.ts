/**
 * Neighbour lists of districts, for spatial statistics (e.g. Getis-Ord Gi*).
 *
 * - rook: two districts are neighbours when their boundaries share a segment of
 *   positive length (collinear overlap, not only a common vertex);
 * - queen: also when the boundaries merely touch or cross at a point.
 * (Contiguity definitions: common practice, no source.)
 * Boundaries need not share vertices: a T-junction counts. Comparisons use a
 * tolerance of `toleranceDegrees` (default 1e-9 degrees, ~0.1 mm).
 */
import type { District } from './types.js';

export interface AdjacencyOptions {
  /** 'rook' (default) or 'queen'. */
  contiguity?: 'rook' | 'queen';
  /** Distance below which points count as coincident, degrees. Default 1e-9. */
  toleranceDegrees?: number;
}

interface Segment { x0: number; y0: number; x1: number; y1: number; minX: number; minY: number; maxX: number; maxY: number }

function segmentsOf(d: District): Segment[] {
  const out: Segment[] = [];
  for (const polygon of d.geometry) {
    for (const ring of polygon) {
      for (let i = 0; i + 1 < ring.length; i++) {
        const [x0, y0] = ring[i];
        const [x1, y1] = ring[i + 1];
        out.push({ x0, y0, x1, y1, minX: Math.min(x0, x1), minY: Math.min(y0, y1), maxX: Math.max(x0, x1), maxY: Math.max(y0, y1) });
      }
    }
  }
  return out;
}

/** Distance from point (px, py) to the infinite line through s, in degrees. */
function lineDistance(s: Segment, px: number, py: number): number {
  const dx = s.x1 - s.x0, dy = s.y1 - s.y0;
  const len = Math.hypot(dx, dy);
  return Math.abs(dx * (py - s.y0) - dy * (px - s.x0)) / len;
}

/** Length of the collinear overlap of two segments (0 when not collinear). */
function overlapLength(a: Segment, b: Segment, tol: number): number {
  if (lineDistance(a, b.x0, b.y0) > tol || lineDistance(a, b.x1, b.y1) > tol) return 0;
  const dx = a.x1 - a.x0, dy = a.y1 - a.y0;
  const len = Math.hypot(dx, dy);
  const t0 = ((b.x0 - a.x0) * dx + (b.y0 - a.y0) * dy) / len;
  const t1 = ((b.x1 - a.x0) * dx + (b.y1 - a.y0) * dy) / len;
  return Math.min(len, Math.max(t0, t1)) - Math.max(0, Math.min(t0, t1));
}

function pointSegmentDistance(s: Segment, px: number, py: number): number {
  const dx = s.x1 - s.x0, dy = s.y1 - s.y0;
  const l2 = dx * dx + dy * dy;
  const t = Math.max(0, Math.min(1, ((px - s.x0) * dx + (py - s.y0) * dy) / l2));
  return Math.hypot(px - (s.x0 + t * dx), py - (s.y0 + t * dy));
}

/** True when two segments meet anywhere (touching within tol included). */
function touches(a: Segment, b: Segment, tol: number): boolean {
  const o = (s: Segment, px: number, py: number): number => (s.x1 - s.x0) * (py - s.y0) - (s.y1 - s.y0) * (px - s.x0);
  const d1 = o(a, b.x0, b.y0), d2 = o(a, b.x1, b.y1), d3 = o(b, a.x0, a.y0), d4 = o(b, a.x1, a.y1);
  if (((d1 > 0 && d2 < 0) || (d1 < 0 && d2 > 0)) && ((d3 > 0 && d4 < 0) || (d3 < 0 && d4 > 0))) return true;
  return (
    pointSegmentDistance(a, b.x0, b.y0) <= tol || pointSegmentDistance(a, b.x1, b.y1) <= tol ||
    pointSegmentDistance(b, a.x0, a.y0) <= tol || pointSegmentDistance(b, a.x1, a.y1) <= tol
  );
}

function boxesMeet(a: { minX: number; minY: number; maxX: number; maxY: number }, b: typeof a, tol: number): boolean {
  return a.minX <= b.maxX + tol && b.minX <= a.maxX + tol && a.minY <= b.maxY + tol && b.minY <= a.maxY + tol;
}

/**
 * Neighbour index lists: result[i] holds the indices (ascending) of the
 * districts adjacent to districts[i].
 *
 * @param districts districts in lon/lat
 * @param options contiguity 'rook' (shared edge, default) or 'queen' (any touch)
 * @example adjacency([a, b, c]) // [[1], [0, 2], [1]] for three squares in a row
 */
export function adjacency(districts: readonly District[], options: AdjacencyOptions = {}): number[][] {
  const queen = options.contiguity === 'queen';
  const tol = options.toleranceDegrees ?? 1e-9;
  const segs = districts.map(segmentsOf);
  const boxes = segs.map((ss) => {
    let minX = Infinity, minY = Infinity, maxX = -Infinity, maxY = -Infinity;
    for (const s of ss) {
      minX = Math.min(minX, s.minX); minY = Math.min(minY, s.minY);
      maxX = Math.max(maxX, s.maxX); maxY = Math.max(maxY, s.maxY);
    }
    return { minX, minY, maxX, maxY };
  });
  const out: number[][] = districts.map(() => []);
  for (let i = 0; i < districts.length; i++) {
    for (let j = i + 1; j < districts.length; j++) {
      if (!boxesMeet(boxes[i], boxes[j], tol)) continue;
      let found = false;
      for (const a of segs[i]) {
        if (!boxesMeet(a, boxes[j], tol)) continue;
        for (const b of segs[j]) {
          if (!boxesMeet(a, b, tol)) continue;
          if (queen ? touches(a, b, tol) : overlapLength(a, b, tol) > tol) { found = true; break; }
        }
        if (found) break;
      }
      if (found) { out[i].push(j); out[j].push(i); }
    }
  }
  return out;
}
