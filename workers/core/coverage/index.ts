/**
 * Polygon -> pixel coverage: the centre rule (row spans) and exact area
 * fractions, both in the raster's pixel grid.
 */
export type { CentreMask, FractionMask } from './types.js';
export { centreMask } from './centre.js';
export { fractionMask } from './fraction.js';
export { toPixelSpace } from './pixelspace.js';
export type { PixelGeometry, PixelPolygon } from './pixelspace.js';
