/**
 * Map-coordinate bounding box, shared by raster (windows of a box) and crs
 * (reprojection of a box); it lives here so neither has to import the other.
 */

/** [minX, minY, maxX, maxY] in the map units of whatever CRS the box is in. */
export type BBox = readonly [number, number, number, number];
