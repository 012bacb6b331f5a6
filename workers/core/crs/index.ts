/** EPSG -> proj4 definitions offline, and reprojection. */
export { crsDefinitionForEpsg } from './epsg.js';
export { GEOJSON_CRS } from './geojson.js';
export { DATUM_SHIFTS, datumShiftFor, type DatumShift } from './datumShifts.js';
export {
  isGeographic,
  makeTransformer,
  reprojectFlat,
  isFlatMultiPolygon,
  reprojectBBox,
  type PointTransformer,
  type MultiPolygonCoordinates,
  type FlatMultiPolygon,
  type FlatPolygon,
} from './transform.js';
