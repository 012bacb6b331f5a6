/** Where a raster lies on the Earth: its coordinate reference system. */
import { InputError } from '../errors.js';
import type { RasterHeader } from './header.js';

/**
 * The raster's CRS definition, or an InputError naming the file. The header
 * has one whenever it has an EPSG code (an unknown code fails when it is read),
 * so no CRS here means no GeoKeys at all.
 */
export function rasterCrs(header: RasterHeader): string {
  if (header.crsDefinition) return header.crsDefinition;
  throw new InputError('has no coordinate reference system (no GeoKeys); assign one, e.g. with an EPSG code', header.path);
}
