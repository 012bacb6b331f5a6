import { describe, expect, it } from 'vitest';
import { kinks, multiPolygon } from '@turf/turf';
import { findSelfIntersections } from '../../workers/core/districts/selfintersect.js';
import { orientPolygon, parseDistricts } from '../../workers/core/districts/index.js';
import { mulberry32 as rng } from '../../workers/core/prng.js';

/**
 * The sweep-based self-intersection test against @turf/kinks (general-purpose
 * reference library, the all-pairs test district validation used before):
 * same verdict, same number of intersections and the same first point, bit
 * for bit, on seeded random polygons that do and do not intersect themselves.
 */


type Ring = number[][];

function close(r: Ring): Ring {
  const out = r.filter((p, i) => i === 0 || p[0] !== r[i - 1][0] || p[1] !== r[i - 1][1]);
  while (out.length > 1 && out[out.length - 1][0] === out[0][0] && out[out.length - 1][1] === out[0][1]) out.pop();
  out.push([out[0][0], out[0][1]]);
  return out;
}

/** Star-shaped ring around (cx, cy): simple unless `jitter` lets radii or angles fold over. */
function starRing(r: () => number, cx: number, cy: number, radius: number, n: number, jitter: number, snap: number | null): Ring {
  const pts: Ring = [];
  for (let i = 0; i < n; i++) {
    const ang = (2 * Math.PI * (i + (r() - 0.5) * jitter)) / n;
    const rad = radius * (0.5 + 0.5 * r());
    let x = cx + rad * Math.cos(ang), y = cy + rad * Math.sin(ang);
    if (snap !== null) { x = Math.round(x / snap) * snap; y = Math.round(y / snap) * snap; }
    pts.push([x, y]);
  }
  return close(pts);
}

/** Random walk on an integer grid: many shared vertices, touchings and collinear overlaps. */
function gridRing(r: () => number, n: number, size: number): Ring {
  const pts: Ring = [];
  for (let i = 0; i < n; i++) pts.push([Math.floor(r() * size), Math.floor(r() * size)]);
  return close(pts);
}

function compare(polys: Ring[][], label: string): 'crossing' | 'simple' {
  const rings = polys.flat();
  if (rings.some((ring) => ring.length < 4)) return 'simple';
  const ours = findSelfIntersections(rings);
  const ref = kinks(multiPolygon(polys)).features; // reference: @turf/kinks 7.4
  if (ref.length === 0) {
    expect(ours, label).toBeNull();
    return 'simple';
  }
  expect(ours, label).not.toBeNull();
  expect(ours!.count, label).toBe(ref.length);
  // Object.is: the same double, not just close
  expect(Object.is(ours!.first[0], ref[0].geometry.coordinates[0]) && Object.is(ours!.first[1], ref[0].geometry.coordinates[1]), `${label}: ${ours!.first} vs ${ref[0].geometry.coordinates}`).toBe(true);
  return 'crossing';
}

describe('findSelfIntersections agrees with @turf/kinks', () => {
  it('hand-made cases: bow-tie, touching vertex, hole crossing, hole touching, separate polygons', () => {
    // bow-tie: diagonals cross at (1, 1), derived from the coordinates
    expect(findSelfIntersections([[[0, 0], [2, 2], [2, 0], [0, 2], [0, 0]]])).toEqual({ first: [1, 1], count: 1 });
    const cases: Array<[string, Ring[][], boolean]> = [
      ['square', [[[[0, 0], [1, 0], [1, 1], [0, 1], [0, 0]]]], false],
      ['vertex touches an edge', [[[[0, 0], [4, 0], [4, 4], [2, 0.0], [0, 4], [0, 0]]]], true],
      ['ring through one vertex twice', [[[[0, 0], [2, 0], [1, 1], [2, 2], [0, 2], [1, 1], [0, 0]]]], true],
      ['hole crosses exterior', [[[[0, 0], [4, 0], [4, 4], [0, 4], [0, 0]], [[3, 1], [5, 1], [5, 2], [3, 2], [3, 1]]]], true],
      ['hole touches exterior', [[[[0, 0], [4, 0], [4, 4], [0, 4], [0, 0]], [[4, 1], [3, 2], [3, 1], [4, 1]]]], true],
      ['hole inside', [[[[0, 0], [4, 0], [4, 4], [0, 4], [0, 0]], [[1, 1], [1, 2], [2, 2], [2, 1], [1, 1]]]], false],
      ['two polygons overlapping', [[[[0, 0], [2, 0], [2, 2], [0, 2], [0, 0]]], [[[1, 1], [3, 1], [3, 3], [1, 3], [1, 1]]]], true],
      ['two polygons sharing an edge (collinear: not counted)', [[[[0, 0], [1, 0], [1, 1], [0, 1], [0, 0]]], [[[1, 0.2], [2, 0.2], [2, 0.8], [1, 0.8], [1, 0.2]]]], true],
      ['two polygons apart', [[[[0, 0], [1, 0], [1, 1], [0, 1], [0, 0]]], [[[2, 0], [3, 0], [3, 1], [2, 1], [2, 0]]]], false],
    ];
    for (const [label, polys, crosses] of cases) expect(compare(polys, label), label).toBe(crosses ? 'crossing' : 'simple');
  });

  it('2000 seeded random polygons (simple and self-intersecting): same verdict, count and first point', () => {
    const r = rng(7001);
    const seen = { crossing: 0, simple: 0 };
    for (let c = 0; c < 2000; c++) {
      const kind = c % 5;
      let polys: Ring[][];
      if (kind === 0) {
        // lon/lat-sized stars, some folding over
        polys = [[starRing(r, 12.4 + r() * 0.1, 47.1 + r() * 0.1, 0.01, 5 + Math.floor(r() * 60), r() < 0.5 ? 0 : 3, null)]];
      } else if (kind === 1) {
        // snapped to a 0.001 degree grid: exact touchings with decimal coordinates
        polys = [[starRing(r, 12.45, 47.15, 0.01, 4 + Math.floor(r() * 30), r() * 4, 0.001)]];
      } else if (kind === 2) {
        polys = [[gridRing(r, 4 + Math.floor(r() * 10), 3 + Math.floor(r() * 6))]];
      } else if (kind === 3) {
        // exterior with a hole that may poke out or touch
        const outer = starRing(r, 0, 0, 10, 6 + Math.floor(r() * 20), 0, 1);
        const hole = starRing(r, (r() - 0.5) * 8, (r() - 0.5) * 8, 1 + r() * 6, 3 + Math.floor(r() * 8), r() * 2, r() < 0.5 ? 1 : null);
        polys = [[outer, hole.reverse()]];
      } else {
        // a multipolygon whose parts may overlap
        polys = [0, 1, 2].slice(0, 2 + Math.floor(r() * 2)).map(() => [starRing(r, r() * 20, r() * 20, 2 + r() * 8, 4 + Math.floor(r() * 15), r() < 0.7 ? 0 : 2, r() < 0.5 ? 0.5 : null)]);
      }
      seen[compare(polys, `case ${c}`)]++;
    }
    // both outcomes must be well represented for the comparison to mean anything
    expect(seen.crossing).toBeGreaterThan(300);
    expect(seen.simple).toBeGreaterThan(300);
  });

  it('a 600-vertex simple ring and the same ring with one fold', () => {
    const r = rng(42);
    const ring = starRing(r, 12.45, 47.15, 0.02, 600, 0, null);
    expect(compare([[ring]], 'simple 600')).toBe('simple');
    const folded = ring.map((p) => p.slice());
    folded[100] = [12.45 - 0.03, 47.15]; // beyond the far side (radius <= 0.02): a spike across the ring
    expect(compare([[folded]], 'folded 600')).toBe('crossing');
  });

  it('parseDistricts names the same point and count as a message built from @turf/kinks', () => {
    const r = rng(99);
    for (let c = 0; c < 50; c++) {
      const ring = starRing(r, 12.45, 47.15, 0.01, 5 + Math.floor(r() * 20), 3, null);
      const hole = starRing(r, 12.45, 47.15, 0.006, 4 + Math.floor(r() * 6), 0, null);
      const text = JSON.stringify({ type: 'Polygon', coordinates: [ring, hole] });
      // reference: @turf/kinks on the rings as parseDistricts keeps them (RFC 7946 winding)
      const ref = kinks(multiPolygon([orientPolygon([ring, hole])])).features;
      let message = 'parsed';
      try { parseDistricts(text, 'b.geojson'); } catch (e) { message = (e as Error).message; }
      if (ref.length === 0) { expect(message.includes('intersects itself'), message).toBe(false); continue; }
      const [lon, lat] = ref[0].geometry.coordinates;
      expect(message).toBe(`b.geojson: the geometry (id "1") intersects itself at lon ${lon.toFixed(6)}, lat ${lat.toFixed(6)}${ref.length > 1 ? ` (and ${ref.length - 1} more)` : ''}`);
    }
  });
});
