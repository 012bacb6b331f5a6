import { planarSignedArea } from './area.js';

/**
 * RFC 7946 winding (section 3.1.6): exterior ring counter-clockwise, holes
 * clockwise, judged by the planar signed area in lon/lat.
 * @param rings closed rings, exterior first
 * @returns new ring arrays where a ring had to be reversed; others are reused
 */
export function orientPolygon(rings: number[][][]): number[][][] {
  return rings.map((r, i) => ((i === 0) === planarSignedArea(r) > 0 ? r : r.slice().reverse()));
}

/** {@link orientPolygon} for each polygon of MultiPolygon coordinates. */
export function orientMultiPolygon(polygons: number[][][][]): number[][][][] {
  return polygons.map(orientPolygon);
}
