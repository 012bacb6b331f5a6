/** A city district (or the rural reference ring) in lon/lat WGS 84. */
export interface District {
  /** Unique id from the file (string form). */
  id: string;
  /** Display name; the id when the file has none. */
  name: string;
  /**
   * MultiPolygon coordinates [polygon][ring][position] = [lon, lat] degrees WGS 84;
   * outer rings counter-clockwise, holes clockwise (RFC 7946 section 3.1.6), rings closed.
   */
  geometry: number[][][][];
  /** The feature's properties as read (empty object when null). */
  properties: Record<string, unknown>;
  /** Area on the WGS 84 ellipsoid, square metres (see {@link ellipsoidalAreaSquareMetres}). */
  areaSquareMetres: number;
  /** 'district' for a polygon from the file, 'rural' for the reference ring. */
  role?: 'district' | 'rural';
}

/** [minLon, minLat, maxLon, maxLat] in degrees. */
export type LonLatBBox = [number, number, number, number];
