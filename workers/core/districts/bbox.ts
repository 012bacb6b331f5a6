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
