/** District GeoJSON parsing and validation, areas, rural ring and adjacency. */
export type { District, LonLatBBox } from './types.js';
export { parseDistricts, readDistricts, type ParseDistrictsOptions } from './parse.js';
export { ellipsoidalAreaSquareMetres, signedRingAreaSquareMetres } from './area.js';
export { orientPolygon, orientMultiPolygon } from './orient.js';
export { districtsBBox } from './bbox.js';
export { readMergedPolygons, readRuralReference } from './merged.js';
export { ruralRing, subtractPolygons } from './rural.js';
export { readRuralDescription, writeRuralDescription, type RuralDescription } from './rural-description.js';
export { SIMPLIFY_TOLERANCE_METRES } from './overlay.js';
export { adjacency, type AdjacencyOptions } from './adjacency.js';
