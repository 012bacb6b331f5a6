/**
 * Unit-carrying number types. They are plain numbers at run time; the brand
 * makes a function signature say what it expects (Kelvin, metres, EPSG codes).
 */
export type Kelvin = number & { readonly __unit?: 'K' };
export type Metres = number & { readonly __unit?: 'm' };
export type SquareMetres = number & { readonly __unit?: 'm2' };
export type Degrees = number & { readonly __unit?: 'deg' };
/** EPSG code of a coordinate reference system, e.g. 32633 for WGS 84 / UTM 33N. */
export type Epsg = number & { readonly __unit?: 'epsg' };
/** ISO 8601 UTC timestamp string, e.g. "2024-07-14T13:30:00Z". */
export type UtcIso = string;
