/**
 * The GeoKeys -> proj4 conversion of geotiff-geokeys-to-proj4 (with the EPSG
 * tables frozen inside it), loaded on first use. Its 1.5 MB module costs 66-72 ms
 * of CPU to load (three runs, 2-core machine, 2026-12), in every process and
 * worker thread that imports it; WGS 84, Web Mercator and the UTM zones, the codes
 * most scenes use, never need it (see epsg.ts).
 */
import { createRequire } from 'node:module';

/** What the conversion gives for a set of GeoKeys. */
export interface GeokeysConversion {
  proj4: string;
  /** Keys it could not use, by name. */
  errors?: Record<string, unknown>;
  /** True for a geographic CRS. */
  isGCS?: boolean;
  /** True when the CRS's coordinates are not in degrees or metres (e.g. grads). */
  shouldConvertCoordinates?: boolean;
  coordinatesUnits?: string;
}

const requireCjs = createRequire(import.meta.url);
let convert: ((keys: never) => GeokeysConversion) | null = null;

/** The proj4 definition of a CRS given by GeoKey names and values (e.g. { ProjectedCSTypeGeoKey: 2056, GTModelTypeGeoKey: 1 }). */
export function geokeysToProj4(keys: Record<string, unknown>): GeokeysConversion {
  convert ??= (requireCjs('geotiff-geokeys-to-proj4') as { toProj4(keys: never): GeokeysConversion }).toProj4;
  return convert(keys as never);
}
