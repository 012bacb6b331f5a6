/**
 * The rural reference ring around a city: the band between the districts'
 * union buffered by `innerMetres` and by `outerMetres` (an "urban minus
 * surrounding buffer" SUHI reference; Schwarz, Lautenbach & Seppelt 2011 compare
 * such indicators, and buffer widths of 2-30 km are common - see METHODS.md §4).
 */
import { createRequire } from 'node:module';
import { featureCollection, multiPolygon } from '@turf/helpers';
import type { Feature, MultiPolygon, Polygon } from 'geojson';
import { InputError } from '../errors.js';
import { ellipsoidalAreaSquareMetres } from './area.js';
import { orientMultiPolygon } from './orient.js';
import type { District } from './types.js';
import type { Metres } from '../units.js';

type Area = Feature<Polygon | MultiPolygon>;

// The buffer/overlay code (with its JSTS dependency) costs ~0.1-0.3 s to load; only the
// default rural ring needs it, so it loads on first use.
const requireCjs = createRequire(import.meta.url);
const buffer = (...a: Parameters<typeof import('@turf/buffer').buffer>) =>
  (requireCjs('@turf/buffer') as typeof import('@turf/buffer')).buffer(...a);
const difference = (...a: Parameters<typeof import('@turf/difference').difference>) =>
  (requireCjs('@turf/difference') as typeof import('@turf/difference')).difference(...a);
const union = (...a: Parameters<typeof import('@turf/union').union>) =>
  (requireCjs('@turf/union') as typeof import('@turf/union')).union(...a);

function coordsOf(f: Area): number[][][][] {
  return f.geometry.type === 'Polygon' ? [f.geometry.coordinates] : f.geometry.coordinates;
}

/** Union of all district geometries as one feature. */
function unionOf(districts: readonly District[]): Area {
  const parts = districts.map((d) => multiPolygon(d.geometry));
  if (parts.length === 1) return parts[0];
  const u = union(featureCollection(parts));
  if (!u) throw new InputError('the districts have an empty union');
  return u;
}

function grow(area: Area, metres: number): Area {
  if (metres === 0) return area;
  // @turf/buffer defaults to kilometres: state the unit. 16 steps per quarter circle
  // keeps a circle's area within ~0.3 % (polygon/circle area ratio sin(2π/n)·n/2π, n = 64).
  const out = buffer(area, metres, { units: 'meters', steps: 16 }) as Area | undefined;
  if (!out) throw new InputError(`buffering the districts by ${metres} m gave no polygon`);
  return out;
}

/**
 * The rural reference ring around the districts.
 *
 * @param districts the city's districts (lon/lat WGS 84)
 * @param innerMetres gap between the city edge and the ring, metres (default 2000)
 * @param outerMetres outer edge of the ring from the city edge, metres (default 10000)
 * @returns a District with id 'rural', role 'rural', RFC 7946 winding and its ellipsoidal area
 * @throws InputError for no districts or distances that are not 0 <= inner < outer
 * @example ruralRing(districts, 2000, 10000).areaSquareMetres
 */
export function ruralRing(districts: readonly District[], innerMetres: Metres = 2000, outerMetres: Metres = 10000): District {
  if (districts.length === 0) throw new InputError('a rural ring needs at least one district');
  if (!Number.isFinite(innerMetres) || !Number.isFinite(outerMetres) || innerMetres < 0 || outerMetres <= innerMetres) {
    throw new InputError(
      `rural ring distances must satisfy 0 <= inner < outer metres (got inner ${innerMetres}, outer ${outerMetres})`,
    );
  }
  const city = unionOf(districts);
  const outer = grow(city, outerMetres);
  const inner = grow(city, innerMetres);
  const ring = difference(featureCollection([outer, inner]));
  if (!ring) throw new InputError('the rural ring is empty');
  const geometry = orientMultiPolygon(coordsOf(ring));
  return {
    id: 'rural',
    name: 'rural',
    geometry,
    properties: { innerMetres, outerMetres },
    areaSquareMetres: ellipsoidalAreaSquareMetres(geometry),
    role: 'rural',
  };
}
