/** EPSG -> proj4 definitions offline, and reprojection. */
export { crsDefinitionForEpsg } from './epsg.js';
export { GEOJSON_CRS } from './geojson.js';
export { DATUM_SHIFTS, datumShiftFor, type DatumShift } from './datumShifts.js';
export {
  isGeographic,
  makeTransformer,
  reprojectGeometry,
  reprojectBBox,
  type PointTransformer,
  type MultiPolygonCoordinates,
} from './transform.js';
