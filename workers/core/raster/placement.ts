/**
 * Where a raster lies on the Earth: its coordinate reference system, its
 * centre in lon/lat (WGS 84) and its pixel size in metres.
 */
import { InputError } from '../errors.js';
import { pixelSize, pixelToMap } from './affine.js';
import type { RasterHeader } from './header.js';
import { crsDefinitionForEpsg, isGeographic, makeTransformer } from '../crs/index.js';

/**
 * The raster's CRS definition, or an InputError naming the file. The header
 * has one whenever it has an EPSG code (an unknown code fails when it is read),
 * so no CRS here means no GeoKeys at all.
 */
export function rasterCrs(header: RasterHeader): string {
  if (header.crsDefinition) return header.crsDefinition;
  throw new InputError('has no coordinate reference system (no GeoKeys); assign one, e.g. with an EPSG code', header.path);
}

/** Lon/lat (WGS 84) of the raster's centre (InputError naming the file when it has no CRS). */
export function sceneCentreLonLat(header: RasterHeader): [number, number] {
  const def = rasterCrs(header);
  const [x, y] = pixelToMap(header.transform, header.width / 2, header.height / 2);
  if (isGeographic(def)) return [x, y];
  return makeTransformer(def, crsDefinitionForEpsg(4326))(x, y);
}

/** Pixel size in metres, when the CRS is projected in metres (null for degrees). */
export function pixelSizeMetres(header: Pick<RasterHeader, 'transform' | 'crsDefinition'>): number | null {
  const def = header.crsDefinition ?? '';
  if (!def || isGeographic(def)) return null;
  const s = pixelSize(header.transform);
  const toMetre = /\+to_meter=([0-9.eE+-]+)/.exec(def);
  const unit = toMetre ? Number(toMetre[1]) : /\+units=(us-)?ft/.test(def) ? (/us-ft/.test(def) ? 1200 / 3937 : 0.3048) : 1;
  return Math.sqrt(s.x * s.y) * unit;
}
