/**
 * GeoTIFF georeferencing: the affine geotransform from the model tags and the
 * CRS from the GeoKey directory (OGC GeoTIFF 1.1, OGC 19-008r4, 2019).
 */
import { InputError } from '../errors.js';
import type { Epsg } from '../units.js';
import type { Affine } from './affine.js';
import { geokeysToProj4 } from '../crs/frozen-epsg.js';

/** GeoKey ids and names (GeoTIFF 1.1, OGC 19-008r4, section 7; the geotiff package's table, checked equal in a test). */
export const GEOKEY_NAMES: Readonly<Record<number, string>> = {
  1024: 'GTModelTypeGeoKey',
  1025: 'GTRasterTypeGeoKey',
  1026: 'GTCitationGeoKey',
  2048: 'GeographicTypeGeoKey',
  2049: 'GeogCitationGeoKey',
  2050: 'GeogGeodeticDatumGeoKey',
  2051: 'GeogPrimeMeridianGeoKey',
  2052: 'GeogLinearUnitsGeoKey',
  2053: 'GeogLinearUnitSizeGeoKey',
  2054: 'GeogAngularUnitsGeoKey',
  2055: 'GeogAngularUnitSizeGeoKey',
  2056: 'GeogEllipsoidGeoKey',
  2057: 'GeogSemiMajorAxisGeoKey',
  2058: 'GeogSemiMinorAxisGeoKey',
  2059: 'GeogInvFlatteningGeoKey',
  2060: 'GeogAzimuthUnitsGeoKey',
  2061: 'GeogPrimeMeridianLongGeoKey',
  2062: 'GeogTOWGS84GeoKey',
  3072: 'ProjectedCSTypeGeoKey',
  3073: 'PCSCitationGeoKey',
  3074: 'ProjectionGeoKey',
  3075: 'ProjCoordTransGeoKey',
  3076: 'ProjLinearUnitsGeoKey',
  3077: 'ProjLinearUnitSizeGeoKey',
  3078: 'ProjStdParallel1GeoKey',
  3079: 'ProjStdParallel2GeoKey',
  3080: 'ProjNatOriginLongGeoKey',
  3081: 'ProjNatOriginLatGeoKey',
  3082: 'ProjFalseEastingGeoKey',
  3083: 'ProjFalseNorthingGeoKey',
  3084: 'ProjFalseOriginLongGeoKey',
  3085: 'ProjFalseOriginLatGeoKey',
  3086: 'ProjFalseOriginEastingGeoKey',
  3087: 'ProjFalseOriginNorthingGeoKey',
  3088: 'ProjCenterLongGeoKey',
  3089: 'ProjCenterLatGeoKey',
  3090: 'ProjCenterEastingGeoKey',
  3091: 'ProjCenterNorthingGeoKey',
  3092: 'ProjScaleAtNatOriginGeoKey',
  3093: 'ProjScaleAtCenterGeoKey',
  3094: 'ProjAzimuthAngleGeoKey',
  3095: 'ProjStraightVertPoleLongGeoKey',
  3096: 'ProjRectifiedGridAngleGeoKey',
  4096: 'VerticalCSTypeGeoKey',
  4097: 'VerticalCitationGeoKey',
  4098: 'VerticalDatumGeoKey',
  4099: 'VerticalUnitsGeoKey',
};

/** GeoKey ids used here (OGC 19-008r4, Annex A). */
export const GT_MODEL_TYPE = 1024;
export const GT_RASTER_TYPE = 1025;
export const GEOGRAPHIC_TYPE = 2048;
export const PROJECTED_CS_TYPE = 3072;
/** "User-defined" code of GeoTIFF (OGC 19-008r4, 7.4). */
export const USER_DEFINED = 32767;
/** GTRasterTypeGeoKey value RasterPixelIsPoint. */
const PIXEL_IS_POINT = 2;

export type GeoKeyValue = number | number[] | string;

/**
 * Decode the GeoKey directory (tag 34735) with its double (34736) and ASCII
 * (34737) parameter tags into key id → value.
 */
export function parseGeoKeys(
  dirShorts: number[],
  doubles: number[] | null,
  ascii: string | null,
  path: string,
): Map<number, GeoKeyValue> {
  if (dirShorts.length < 4) throw new InputError('GeoKey directory is shorter than its 4-value header', path);
  const n = dirShorts[3];
  if (4 + n * 4 > dirShorts.length) {
    throw new InputError(`GeoKey directory claims ${n} keys but holds ${Math.floor((dirShorts.length - 4) / 4)}`, path);
  }
  const keys = new Map<number, GeoKeyValue>();
  for (let i = 0; i < n; i++) {
    const [id, loc, count, value] = dirShorts.slice(4 + i * 4, 8 + i * 4);
    if (loc === 0) {
      keys.set(id, value);
    } else if (loc === 34736) {
      if (!doubles || value + count > doubles.length) throw new InputError(`GeoKey ${id} points past the GeoDoubleParams tag`, path);
      keys.set(id, count === 1 ? doubles[value] : doubles.slice(value, value + count));
    } else if (loc === 34737) {
      if (ascii === null || value + count > ascii.length + 1) throw new InputError(`GeoKey ${id} points past the GeoAsciiParams tag`, path);
      // GeoTIFF ends each ASCII parameter with "|" (OGC 19-008r4, 7.1.4).
      keys.set(id, ascii.slice(value, value + count).replace(/\|$/, ''));
    } else if (loc === 34735) {
      if (value + count > dirShorts.length) throw new InputError(`GeoKey ${id} points past the GeoKey directory`, path);
      keys.set(id, count === 1 ? dirShorts[value] : dirShorts.slice(value, value + count));
    }
    // Keys stored in other tags are ignored, as GDAL does.
  }
  return keys;
}

/** True for a raster whose tie points refer to pixel centres (GTRasterTypeGeoKey = PixelIsPoint). */
export function isPixelIsPoint(keys: Map<number, GeoKeyValue> | null): boolean {
  return keys?.get(GT_RASTER_TYPE) === PIXEL_IS_POINT;
}

/**
 * Affine geotransform from ModelTransformation (34264) or ModelTiepoint (33922)
 * + ModelPixelScale (33550), in the corner (pixel-is-area) convention.
 * PixelIsPoint rasters are shifted up-left by half a pixel, as GDAL does by
 * default (GDAL GTiff driver, GTIFF_POINT_GEO_IGNORE=FALSE).
 * Without georeferencing tags the GDAL default (0, 1, 0, 0, 0, 1) is returned.
 */
export function geotransform(
  matrix: number[] | null,
  tiepoints: number[] | null,
  scales: number[] | null,
  pixelIsPoint: boolean,
  path: string,
): Affine {
  let t: Affine;
  if (matrix) {
    if (matrix.length < 16) throw new InputError(`ModelTransformation has ${matrix.length} values, expected 16`, path);
    t = { a: matrix[0], b: matrix[1], c: matrix[3], d: matrix[4], e: matrix[5], f: matrix[7] };
  } else if (tiepoints && scales) {
    if (tiepoints.length < 6) throw new InputError(`ModelTiepoint has ${tiepoints.length} values, expected 6`, path);
    if (scales.length < 2) throw new InputError(`ModelPixelScale has ${scales.length} values, expected 3`, path);
    const [i, j, , x, y] = tiepoints;
    const [sx, sy] = scales;
    // OGC 19-008r4, B.6: x = X + (col - I)·Sx, y = Y - (row - J)·Sy.
    t = { a: sx, b: 0, c: x - i * sx, d: 0, e: -sy, f: y + j * sy };
  } else {
    return { a: 1, b: 0, c: 0, d: 0, e: 1, f: 0 };
  }
  for (const v of [t.a, t.b, t.c, t.d, t.e, t.f]) {
    if (!Number.isFinite(v)) throw new InputError('geotransform holds a non-finite number', path);
  }
  if (t.a * t.e - t.b * t.d === 0) throw new InputError('geotransform has zero pixel size', path);
  if (pixelIsPoint) {
    t = { ...t, c: t.c - 0.5 * t.a - 0.5 * t.b, f: t.f - 0.5 * t.d - 0.5 * t.e };
  }
  return t;
}

/**
 * EPSG code of the CRS: ProjectedCSTypeGeoKey for a projected model,
 * GeographicTypeGeoKey for a geographic one; null when user-defined (32767)
 * or absent.
 */
export function epsgOf(keys: Map<number, GeoKeyValue> | null): Epsg | null {
  if (!keys) return null;
  const model = keys.get(GT_MODEL_TYPE);
  const proj = keys.get(PROJECTED_CS_TYPE);
  const geog = keys.get(GEOGRAPHIC_TYPE);
  const valid = (v: GeoKeyValue | undefined): v is number =>
    typeof v === 'number' && Number.isInteger(v) && v > 0 && v !== USER_DEFINED;
  if (model === 1 || (model === undefined && proj !== undefined)) return valid(proj) ? proj : null;
  if (model === 2 || (model === undefined && geog !== undefined)) return valid(geog) ? geog : null;
  return null;
}

/**
 * proj4 definition of the GeoKeys' CRS (EPSG-coded or user-defined), or null
 * when there are no CRS keys.
 *
 * The "+axis" term is dropped: GeoTIFF model space is always x = easting or
 * longitude, y = northing or latitude (OGC 19-008r4, 4.3), whatever axis order
 * the EPSG definition of the CRS declares; keeping "+axis=ne" would make proj4
 * swap the coordinates of every pixel.
 */
export function crsDefinitionOf(keys: Map<number, GeoKeyValue> | null, path: string): string | null {
  if (!keys) return null;
  const named: Record<string, GeoKeyValue> = {};
  let crsKeys = 0;
  for (const [id, v] of keys) {
    const name = GEOKEY_NAMES[id];
    if (name) named[name] = v;
    if (id >= 2048) crsKeys++;
  }
  if (crsKeys === 0) return null;
  let def: string;
  try {
    def = geokeysToProj4(named).proj4;
  } catch (e) {
    throw new InputError(`GeoKeys describe a CRS that cannot be converted (${(e as Error).message})`, path);
  }
  if (typeof def !== 'string' || !def.includes('+proj=')) {
    throw new InputError('GeoKeys describe a CRS that cannot be converted to a proj4 definition', path);
  }
  return def.replace(/\s*\+axis=\w+/g, '').replace(/\s+/g, ' ').trim();
}
