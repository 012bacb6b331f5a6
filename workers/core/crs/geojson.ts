/** The CRS of GeoJSON coordinates. */
import { crsDefinitionForEpsg } from './epsg.js';

/** WGS 84 longitude/latitude, the only CRS of GeoJSON coordinates (RFC 7946, section 4). */
export const GEOJSON_CRS = crsDefinitionForEpsg(4326);
