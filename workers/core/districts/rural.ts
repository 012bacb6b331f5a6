/**
 * The rural reference ring around a city: the band between the districts'
 * union buffered by `innerMetres` and by `outerMetres` (an "urban minus
 * surrounding buffer" SUHI reference; Schwarz, Lautenbach & Seppelt 2011, RSE
 * 115:3175-3186, pages from memory, compare such indicators; buffer widths of
 * 2-30 km and rings of area equal to the urban area, as in Peng et al. 2012,
 * Environ. Sci. Technol. 46:696-703, appear in the literature, as reproduced by
 * secondary sources).
 *
 * The ring is derived from the district polygons simplified within
 * SIMPLIFY_TOLERANCE_METRES (1 m, see overlay.ts); the districts' own statistics
 * use their original polygons.
 */
import { InputError } from '../errors.js';
import { ellipsoidalAreaSquareMetres } from './area.js';
import { bboxCentre, metricFrame, SIMPLIFY_TOLERANCE_METRES } from './overlay.js';
import type { District } from './types.js';
import type { Metres } from '../units.js';

/**
 * The rural reference ring around the districts.
 *
 * @param districts the city's districts (lon/lat WGS 84)
 * @param innerMetres gap between the city edge and the ring, metres (default 2000)
 * @param outerMetres outer edge of the ring from the city edge, metres (default 10000)
 * @param options.source the districts file, named in errors
 * @returns a District with id 'rural', role 'rural', RFC 7946 winding and its ellipsoidal area
 * @throws InputError for no districts, distances that are not 0 <= inner < outer, an empty ring
 *   or polygons the overlay cannot handle (naming the file)
 * @example ruralRing(districts, 2000, 10000).areaSquareMetres
 */
export function ruralRing(
  districts: readonly District[],
  innerMetres: Metres = 2000,
  outerMetres: Metres = 10000,
  options: { source?: string } = {},
): District {
  if (districts.length === 0) throw new InputError('a rural ring needs at least one district', options.source);
  if (!Number.isFinite(innerMetres) || !Number.isFinite(outerMetres) || innerMetres < 0 || outerMetres <= innerMetres) {
    throw new InputError(
      `rural ring distances must satisfy 0 <= inner < outer metres (got inner ${innerMetres}, outer ${outerMetres})`,
      options.source,
    );
  }
  const [lon, lat] = bboxCentre(districts.map((d) => d.geometry));
  const frame = metricFrame(lon, lat, options.source);
  // Districts simplified one by one may leave gaps up to twice the tolerance along shared
  // boundaries; a closing (buffer out, then in, by the tolerance) removes them.
  const union = frame.union(districts.map((d) => frame.region(d.geometry)));
  const city = frame.buffer(frame.buffer(union, SIMPLIFY_TOLERANCE_METRES), -SIMPLIFY_TOLERANCE_METRES);
  if (frame.isEmpty(city)) throw new InputError('the districts have an empty union', options.source);
  const ring = frame.difference(frame.buffer(city, outerMetres), frame.buffer(city, innerMetres));
  if (frame.isEmpty(ring)) throw new InputError('the rural ring is empty', options.source);
  const geometry = frame.lonLat(ring);
  return {
    id: 'rural',
    name: 'rural',
    geometry,
    properties: { innerMetres, outerMetres },
    areaSquareMetres: ellipsoidalAreaSquareMetres(geometry),
    role: 'rural',
  };
}

/**
 * A rural ring from {@link ruralRing} without the given water polygons: the
 * same overlay; the water is simplified as the districts are, the ring is not again.
 * @param waterSource the water file, named in errors
 */
export function subtractPolygons(ring: District, water: number[][][][], waterSource?: string): District {
  const [lon, lat] = bboxCentre([ring.geometry]);
  const frame = metricFrame(lon, lat, waterSource);
  const cut = frame.difference(frame.region(ring.geometry, false), frame.union([frame.region(water)]));
  if (frame.isEmpty(cut)) throw new InputError('the water polygons cover the whole rural ring', waterSource);
  const geometry = frame.lonLat(cut);
  return { ...ring, geometry, areaSquareMetres: ellipsoidalAreaSquareMetres(geometry) };
}
