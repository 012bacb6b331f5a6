/**
 * Neighbour lists for spatial statistics over districts.
 *
 * - queen: districts whose boundaries share at least one point (an edge or a
 *   corner) are neighbours; points closer than `toleranceMetres` count as shared,
 *   so slivers and tiny gaps between digitised outlines do not break contiguity.
 * - knn: each district's k nearest districts by centroid distance (great
 *   circle); never leaves a district without neighbours, but is not symmetric.
 * (Contiguity and k-nearest-neighbour definitions: common practice, no source.)
 *
 * Weights built on these lists are documented where they are used: binary
 * with self for Gi*, row-standardised for Moran's I.
 */
import { adjacency } from '../districts/adjacency.js';
import type { District } from '../districts/types.js';
import { InputError } from '../errors.js';

export type WeightsKind = 'queen' | 'knn';

export interface WeightsOptions {
  kind: WeightsKind;
  /** For knn: neighbours per district. Default 4. */
  k?: number;
  /** For queen: distance below which boundary points count as shared, metres. Default 1. */
  toleranceMetres?: number;
}

/** Mean radius of the Earth, metres (IUGG mean radius R1; common practice). */
const EARTH_RADIUS_METRES = 6_371_008.8;
/** Metres per degree of latitude, near enough for a tolerance (common practice, no source). */
const METRES_PER_DEGREE = 111_320;

/**
 * Area-weighted centroid of a district's polygons [lon, lat] (degrees), on a
 * local plane with longitudes scaled by cos(latitude); holes subtract.
 */
export function centroidLonLat(d: District): [number, number] {
  let a = 0, cx = 0, cy = 0;
  let lat0 = 0, count = 0;
  for (const poly of d.geometry) for (const p of poly[0]) { lat0 += p[1]; count++; }
  lat0 = count ? lat0 / count : 0;
  const k = Math.cos((lat0 * Math.PI) / 180);
  for (const poly of d.geometry) {
    for (const ring of poly) {
      for (let i = 0; i + 1 < ring.length; i++) {
        const x0 = ring[i][0] * k, y0 = ring[i][1], x1 = ring[i + 1][0] * k, y1 = ring[i + 1][1];
        const c = x0 * y1 - x1 * y0; // shoelace term (signed: holes run the other way)
        a += c;
        cx += (x0 + x1) * c;
        cy += (y0 + y1) * c;
      }
    }
  }
  if (a === 0) {
    const p = d.geometry[0][0][0];
    return [p[0], p[1]];
  }
  return [cx / (3 * a) / k, cy / (3 * a)];
}

/** Great-circle distance between two lon/lat points, metres (haversine). */
export function greatCircleMetres(a: readonly number[], b: readonly number[]): number {
  const rad = Math.PI / 180;
  const dLat = (b[1] - a[1]) * rad, dLon = (b[0] - a[0]) * rad;
  const h = Math.sin(dLat / 2) ** 2 + Math.cos(a[1] * rad) * Math.cos(b[1] * rad) * Math.sin(dLon / 2) ** 2;
  return 2 * EARTH_RADIUS_METRES * Math.asin(Math.min(1, Math.sqrt(h)));
}

/** k nearest districts by centroid (ties by index), ascending indices per list. */
export function knnNeighbours(centroids: readonly (readonly number[])[], k: number): number[][] {
  const n = centroids.length;
  return centroids.map((c, i) => {
    const others: { j: number; d: number }[] = [];
    for (let j = 0; j < n; j++) if (j !== i) others.push({ j, d: greatCircleMetres(c, centroids[j]) });
    others.sort((p, q) => p.d - q.d || p.j - q.j);
    return others.slice(0, k).map((o) => o.j).sort((p, q) => p - q);
  });
}

/**
 * Neighbour index lists for the districts (result[i] = neighbours of i, ascending, self excluded).
 * @throws InputError for k < 1 or k ≥ the number of districts
 * @example neighbours(districts, { kind: 'knn', k: 4 })
 */
export function neighbours(districts: readonly District[], options: WeightsOptions): number[][] {
  if (options.kind === 'knn') {
    const k = options.k ?? 4;
    if (!Number.isInteger(k) || k < 1 || k >= districts.length) {
      throw new InputError(`--k must be an integer from 1 to ${districts.length - 1} (one less than the ${districts.length} districts), got ${k}`);
    }
    return knnNeighbours(districts.map(centroidLonLat), k);
  }
  const tol = options.toleranceMetres ?? 1;
  if (!(tol >= 0)) throw new InputError(`the contiguity tolerance must be ≥ 0 metres, got ${tol}`);
  return adjacency(districts, { contiguity: 'queen', toleranceDegrees: Math.max(1e-9, tol / METRES_PER_DEGREE) });
}
