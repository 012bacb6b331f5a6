/**
 * Where a raster sits on the globe: its centre in lon/lat (WGS 84) and its
 * pixel size in metres.
 */
import { pixelSize, pixelToMap } from './affine.js';
import type { RasterHeader } from './header.js';
import { crsDefinitionForEpsg, isGeographic, makeTransformer } from '../crs/index.js';

/** Lon/lat (WGS 84) of the raster's centre; `crsDefinition` is the raster's own CRS (proj4 text). */
export function sceneCentreLonLat(header: Pick<RasterHeader, 'transform' | 'width' | 'height'>, crsDefinition: string): [number, number] {
  const [x, y] = pixelToMap(header.transform, header.width / 2, header.height / 2);
  if (isGeographic(crsDefinition)) return [x, y];
  return makeTransformer(crsDefinition, crsDefinitionForEpsg(4326))(x, y);
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
