/**
 * Datum shifts to WGS 84 for CRSs whose datum is NOT WGS 84-compatible, as
 * proj4 `+towgs84` parameters (dx, dy, dz metres; rx, ry, rz arc-seconds;
 * scale ppm; position-vector convention, the convention proj4 uses).
 *
 * The EPSG data frozen inside geotiff-geokeys-to-proj4 carries projection
 * parameters and ellipsoids but, for many datums, no shift: without one a
 * British or Swiss grid would land 100-500 m off. Each entry is the Helmert
 * transformation the EPSG dataset lists for that datum (transformation code
 * in the comment); PROJ chooses the same one when no grid file is installed.
 * Coordinate-frame rotations (EPSG method 9607) are negated into position-vector
 * form (EPSG Guidance Note 7-2, 2.4.3.3).
 */
export interface DatumShift {
  /** Datum name for messages. */
  readonly datum: string;
  /** proj4 `+towgs84` value. */
  readonly towgs84: string;
  /** EPSG codes of the CRSs (geographic and projected) on this datum. */
  readonly crs: readonly number[];
}

export const DATUM_SHIFTS: readonly DatumShift[] = [
  // EPSG:1314 OSGB36 to WGS 84 (6), 2 m, position vector
  { datum: 'OSGB36', towgs84: '446.448,-125.157,542.06,0.15,0.247,0.842,-20.489', crs: [4277, 27700] },
  // EPSG:1676 CH1903+ to WGS 84 (1), 1 m, geocentric translation
  { datum: 'CH1903+', towgs84: '674.374,15.056,405.346,0,0,0,0', crs: [4150, 2056] },
  // EPSG:1753 CH1903 to WGS 84 (1), 1 m, geocentric translation (same three numbers)
  { datum: 'CH1903', towgs84: '674.374,15.056,405.346,0,0,0,0', crs: [4149, 21781] },
  // EPSG:1777 DHDN to WGS 84 (2), 3 m, position vector (former West Germany;
  // the national grid BETA2007 is better but needs a grid file)
  {
    datum: 'DHDN',
    towgs84: '598.1,73.7,418.2,0.202,0.045,-2.455,6.7',
    crs: [4314, 31466, 31467, 31468, 31469],
  },
  // EPSG:4833 Amersfoort to WGS 84 (4), 1 m, coordinate frame -> rotations negated
  {
    datum: 'Amersfoort',
    towgs84: '565.4171,50.3319,465.5524,-0.398957388243134,0.343987817378283,-1.87740163998045,4.0725',
    crs: [4289, 28992],
  },
  // EPSG:1623 S-JTSK to WGS 84 (1), 1 m, position vector (Czechia)
  { datum: 'S-JTSK', towgs84: '570.8,85.7,462.8,4.998,1.587,5.261,3.56', crs: [4156, 5514] },
  // EPSG:1272 GGRS87 to WGS 84 (1), 1 m, geocentric translation (GRS80 ellipsoid, but
  // not WGS 84-compatible: ~200 m apart)
  { datum: 'GGRS87', towgs84: '-199.87,74.79,246.62,0,0,0,0', crs: [4121, 2100] },
];

const byCode = new Map<number, DatumShift>();
for (const shift of DATUM_SHIFTS) for (const code of shift.crs) byCode.set(code, shift);

/** The tabled datum shift for a CRS code, or undefined. */
export function datumShiftFor(epsg: number): DatumShift | undefined {
  return byCode.get(epsg);
}
