/**
 * GeoTIFF / COG reading: `openRaster(path)` gives the header (georeferencing,
 * CRS, nodata, scale/offset, acquisition time) and decoded blocks by window.
 */
export { openRaster, clampWindow } from './reader.js';
export type { RasterFile, RasterBlock, TypedArray } from './reader.js';
export type { RasterHeader } from './header.js';
export { rasterCrs } from './placement.js';
export { registerDecoder, type BlockDecoder } from './decoders/index.js';
export type { Affine, Window, BBox } from './affine.js';
