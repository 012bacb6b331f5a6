/**
 * WGS 84 longitude/latitude -> WGS 84 UTM, without proj4: the usual case of
 * district polygons (GeoJSON) onto a UTM scene. Written by hand because
 * loading proj4's bundle costs ~30-60 ms of CPU per process, more than the
 * whole reprojection of 60 districts of 600 vertices (measured in the zonal
 * bench, 2026-12); everything else goes through proj4.
 *
 * Transverse Mercator by the Krüger series to order n^6 (Karney 2011,
 * "Transverse Mercator with an accuracy of a few nanometers", J. Geodesy
 * 85:475-485, eqs. 7-9 and 35; citation from memory): accurate to well under a
 * millimetre within 3900 km of the central meridian. The same series proj4
 * uses for +proj=utm (its etmerc, after Poder & Engsager), so the two agree to
 * far below a pixel.
 */

const A = 6378137;
const F = 1 / 298.257223563;
const K0 = 0.9996;
const FALSE_EASTING = 500_000;
const FALSE_NORTHING_SOUTH = 10_000_000;
/** Points farther than this from the central meridian go through proj4 (the series is exact well beyond it). */
const MAX_LONGITUDE_OFFSET_DEG = 30;

const N = F / (2 - F);
const E = Math.sqrt(F * (2 - F));
const N2 = N * N, N3 = N2 * N, N4 = N3 * N, N5 = N4 * N, N6 = N5 * N;
/** Rectifying radius times k0 (Karney 2011, eq. 14). */
const K0A = (K0 * A / (1 + N)) * (1 + N2 / 4 + N4 / 64 + N6 / 256);
/** Krüger's alpha coefficients (Karney 2011, eq. 35). */
const ALPHA = [
  N / 2 - (2 * N2) / 3 + (5 * N3) / 16 + (41 * N4) / 180 - (127 * N5) / 288 + (7891 * N6) / 37800,
  (13 * N2) / 48 - (3 * N3) / 5 + (557 * N4) / 1440 + (281 * N5) / 630 - (1983433 * N6) / 1935360,
  (61 * N3) / 240 - (103 * N4) / 140 + (15061 * N5) / 26880 + (167603 * N6) / 181440,
  (49561 * N4) / 161280 - (179 * N5) / 168 + (6601661 * N6) / 7257600,
  (34729 * N5) / 80640 - (3418889 * N6) / 1995840,
  (212378941 * N6) / 319334400,
];
const DEG = Math.PI / 180;

/** The WGS 84 UTM zone of a proj4 definition as `crsDefinitionForEpsg` writes it, or null. */
export function utmZoneOf(def: string): { zone: number; south: boolean } | null {
  const m = /^\+proj=utm \+zone=(\d{1,2})( \+south)? \+datum=WGS84 \+units=m \+no_defs$/.exec(def.trim());
  if (!m) return null;
  const zone = Number(m[1]);
  return zone >= 1 && zone <= 60 ? { zone, south: m[2] !== undefined } : null;
}

/**
 * Forward projection into one UTM zone: writes easting and northing (metres)
 * of (lon, lat) in degrees to `out[0]`, `out[1]`; returns false (leaving `out`
 * alone) for a point it does not handle (non-finite, beyond the poles, or more
 * than 30 degrees from the central meridian).
 */
export function utmForward(zone: number, south: boolean): (lon: number, lat: number, out: Float64Array | number[]) => boolean {
  const lon0 = (zone - 1) * 6 - 180 + 3;
  const fn = south ? FALSE_NORTHING_SOUTH : 0;
  return (lon, lat, out) => {
    let dlon = lon - lon0;
    if (dlon > 180) dlon -= 360;
    else if (dlon < -180) dlon += 360;
    if (!(Math.abs(dlon) <= MAX_LONGITUDE_OFFSET_DEG && Math.abs(lat) < 90)) return false;
    const lam = dlon * DEG;
    const tau = Math.tan(lat * DEG);
    // conformal latitude as tan (Karney 2011, eqs. 7-9)
    const sigma = Math.sinh(E * Math.atanh((E * tau) / Math.sqrt(1 + tau * tau)));
    const tauP = tau * Math.sqrt(1 + sigma * sigma) - sigma * Math.sqrt(1 + tau * tau);
    const cosLam = Math.cos(lam);
    const sinLam = Math.sin(lam);
    // Gauss-Schreiber coordinates (Karney 2011, eq. 10; equation numbers here from memory): xi' = atan2(tau', cos lam),
    // eta' = asinh(sin lam / hypot(tau', cos lam)); their sines and hyperbolic sines
    // come from the same ratios, so the doubled angles below need no further
    // transcendental calls
    const r = Math.sqrt(tauP * tauP + cosLam * cosLam);
    const xiP = Math.atan2(tauP, cosLam);
    const shEta = sinLam / r;
    const etaP = Math.asinh(shEta);
    const sXi = tauP / r, cXi = cosLam / r;
    const chEta = Math.sqrt(1 + shEta * shEta);
    const s0 = 2 * sXi * cXi, c0 = cXi * cXi - sXi * sXi; // sin 2xi', cos 2xi'
    const sh0 = 2 * shEta * chEta, ch0 = chEta * chEta + shEta * shEta; // sinh 2eta', cosh 2eta'
    // zeta = zeta' + sum_j alpha_j sin(2j zeta'), zeta = xi + i eta (Karney 2011, eq. 11),
    // by Clenshaw summation in complex arithmetic with a = 2 cos 2zeta'
    // (Clenshaw 1955, "A note on the summation of Chebyshev series", Math. Tables
    // Aids Comput. 9:118-120, the summation Karney 2011 uses; citations from memory)
    const ar = 2 * c0 * ch0, ai = -2 * s0 * sh0;
    let y0r = 0, y0i = 0, y1r = 0, y1i = 0;
    for (let j = ALPHA.length; j > 0; j--) {
      const tr = ar * y0r - ai * y0i - y1r + ALPHA[j - 1];
      const ti = ar * y0i + ai * y0r - y1i;
      y1r = y0r; y1i = y0i;
      y0r = tr; y0i = ti;
    }
    // sin 2zeta' = sin 2xi' cosh 2eta' + i cos 2xi' sinh 2eta'
    const sr = s0 * ch0, si = c0 * sh0;
    const xi = xiP + sr * y0r - si * y0i;
    const eta = etaP + sr * y0i + si * y0r;
    out[0] = FALSE_EASTING + K0A * eta;
    out[1] = fn + K0A * xi;
    return true;
  };
}
