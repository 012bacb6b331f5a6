import { InputError } from '../errors.js';
import type { District, LonLatBBox } from './types.js';

/**
 * Bounding box of all districts, [minLon, minLat, maxLon, maxLat] in degrees.
 * @throws InputError for an empty list
 * @example districtsBBox(districts) // [10.01, 50.02, 10.2, 50.15]
 */
export function districtsBBox(districts: readonly District[]): LonLatBBox {
  if (districts.length === 0) throw new InputError('no districts to take a bounding box of');
  let minLon = Infinity, minLat = Infinity, maxLon = -Infinity, maxLat = -Infinity;
  for (const d of districts) {
    for (const polygon of d.geometry) {
      for (const [lon, lat] of polygon[0]) {
        // holes lie inside the exterior ring: the exterior alone bounds the polygon
        if (lon < minLon) minLon = lon;
        if (lon > maxLon) maxLon = lon;
        if (lat < minLat) minLat = lat;
        if (lat > maxLat) maxLat = lat;
      }
    }
  }
  return [minLon, minLat, maxLon, maxLat];
}

/**
 * Bounding box [x0, y0, x1, y1] of MultiPolygon coordinates in any CRS (every
 * ring, so it also holds for coordinates reprojected into a raster's CRS).
 */
export function geometryBBox(geometry: number[][][][]): [number, number, number, number] {
  let x0 = Infinity, y0 = Infinity, x1 = -Infinity, y1 = -Infinity;
  // indexed loops: destructuring each position through the array iterator cost ~5 ms
  // of a one-scene `zonal` run (60 districts x 600 positions, code not yet optimised)
  for (const poly of geometry) for (const ring of poly) {
    for (let i = 0; i < ring.length; i++) {
      const x = ring[i][0], y = ring[i][1];
      if (x < x0) x0 = x;
      if (x > x1) x1 = x;
      if (y < y0) y0 = y;
      if (y > y1) y1 = y;
    }
  }
  return [x0, y0, x1, y1];
}
