/**
 * NREL Solar Position Algorithm (Reda & Andreas 2004, Solar Energy 76(5):577-589;
 * NREL/TP-560-34302, revised 2008). Stated uncertainty +-0.0003 deg for the years
 * -2000..6000. Step numbers in comments follow section 3 of the report.
 */
import { InputError } from '../errors.js';
import type { Degrees, Metres } from '../units.js';
import { requireDate, requireBetween } from '../checks.js';
import { EARTH_B, EARTH_L, EARTH_R, NUTATION, type EarthTerm } from './spaTables.js';

const DEG = Math.PI / 180;
const MS_PER_DAY = 86_400_000;
/** Julian day of the Unix epoch 1970-01-01T00:00Z. */
const JD_UNIX_EPOCH = 2_440_587.5;
const JD_J2000 = 2_451_545.0;
/** Apparent solar radius used by SPA to decide when refraction applies (deg). */
const SUN_RADIUS_DEG = 0.26667;
/** Default atmospheric refraction at sunrise/sunset (deg), SPA's default. */
const DEFAULT_REFRACTION_DEG = 0.5667;
/** SPA's valid year range (Reda & Andreas 2004, section 1). */
const MIN_YEAR = -2000;
const MAX_YEAR = 6000;

export interface SunPositionOptions {
  /** Observer height above the ellipsoid / sea level (m). Default 0. */
  elevationMetres?: number;
  /** Mean annual local pressure (mbar = hPa). Default: standard atmosphere at `elevationMetres`. */
  pressureMbar?: number;
  /** Mean annual local temperature (deg C). Default: standard atmosphere at `elevationMetres`. */
  temperatureC?: number;
  /** TT - UT1 in seconds. Default: {@link deltaTSecondsEstimate} for the date. */
  deltaT?: number;
  /** UT1 - UTC in seconds (|x| < 1). Default 0. */
  deltaUt1Seconds?: number;
  /** Refraction at the horizon (deg) that decides whether the refraction term is applied. Default 0.5667. */
  atmosphericRefractionDeg?: number;
  /** Slope of a surface for the incidence angle (deg from horizontal). Omit for no incidence angle. */
  surfaceSlopeDeg?: number;
  /**
   * Azimuth rotation of that surface (deg), SPA convention: measured from south to the
   * projection of the surface normal on the horizontal plane, negative towards east. Default 0.
   */
  surfaceAzimuthRotationDeg?: number;
}

export interface SunPosition {
  /** Topocentric zenith angle including refraction (deg). */
  zenithDeg: Degrees;
  /** Topocentric elevation above the horizon including refraction (deg). */
  elevationDeg: Degrees;
  /** Topocentric elevation without refraction (deg). */
  geometricElevationDeg: Degrees;
  /** Topocentric azimuth, clockwise from north (deg, 0..360). */
  azimuthDeg: Degrees;
  /** Geocentric apparent declination (deg). */
  declinationDeg: Degrees;
  /** Topocentric declination (deg). */
  topocentricDeclinationDeg: Degrees;
  /** Geocentric apparent right ascension (deg, 0..360). */
  rightAscensionDeg: Degrees;
  /** Equation of time: apparent minus mean solar time (minutes). */
  equationOfTimeMinutes: number;
  /** Observer local hour angle, geocentric (deg, -180..180; negative before solar noon). */
  hourAngleDeg: Degrees;
  /** Incidence angle on the surface given in the options (deg), or null when no surface was given. */
  incidenceDeg: Degrees | null;
  julianDay: number;
  julianEphemerisDay: number;
  /** Earth heliocentric longitude (deg, 0..360). */
  heliocentricLongitudeDeg: Degrees;
  /** Earth heliocentric latitude (deg). */
  heliocentricLatitudeDeg: Degrees;
  /** Earth-Sun distance (astronomical units). */
  earthSunDistanceAu: number;
  /** Nutation in longitude (deg). */
  nutationLongitudeDeg: Degrees;
  /** Nutation in obliquity (deg). */
  nutationObliquityDeg: Degrees;
  /** True obliquity of the ecliptic (deg). */
  trueObliquityDeg: Degrees;
}

/** Geocentric quantities that depend only on time (SPA steps 3.1-3.9 and A.1). */
export interface GeocentricSun {
  julianDay: number;
  julianEphemerisDay: number;
  heliocentricLongitudeDeg: number;
  heliocentricLatitudeDeg: number;
  earthSunDistanceAu: number;
  nutationLongitudeDeg: number;
  nutationObliquityDeg: number;
  trueObliquityDeg: number;
  /** Apparent sidereal time at Greenwich (deg, 0..360). */
  siderealTimeDeg: number;
  rightAscensionDeg: number;
  declinationDeg: number;
  equationOfTimeMinutes: number;
}

/** Reduce an angle to [0, 360). */
export function limitDegrees360(deg: number): number {
  const r = deg - 360 * Math.floor(deg / 360);
  return r >= 360 ? 0 : r;
}

/** Reduce an angle to [-180, 180). */
export function limitDegrees180(deg: number): number {
  return limitDegrees360(deg + 180) - 180;
}

/** Julian day (UT) of an instant; exact for any instant a JS Date can hold. */
export function julianDayFromDate(dateUtc: Date): number {
  return dateUtc.getTime() / MS_PER_DAY + JD_UNIX_EPOCH;
}

/**
 * Estimate of delta T = TT - UT1 (seconds) for a date, from the polynomial fits of
 * Espenak & Meeus (2006, NASA Five Millennium Canon of Solar Eclipses) for
 * 1900-2150 and the long-term parabola of Morrison & Stephenson (2004) outside
 * (coefficients from memory). An error of 10 s moves the sun by about 0.0001 deg,
 * far below what the tool needs, so an estimate is enough when the caller has no
 * IERS value.
 */
export function deltaTSecondsEstimate(dateUtc: Date): number {
  const y = dateUtc.getUTCFullYear() + (dateUtc.getUTCMonth() + 0.5) / 12;
  const longTerm = (yr: number): number => {
    const u = (yr - 1820) / 100;
    return -20 + 32 * u * u;
  };
  if (y < 1900 || y >= 2150) return longTerm(y);
  if (y < 1920) {
    const t = y - 1900;
    return -2.79 + 1.494119 * t - 0.0598939 * t ** 2 + 0.0061966 * t ** 3 - 0.000197 * t ** 4;
  }
  if (y < 1941) {
    const t = y - 1920;
    return 21.2 + 0.84493 * t - 0.0761 * t ** 2 + 0.0020936 * t ** 3;
  }
  if (y < 1961) {
    const t = y - 1950;
    return 29.07 + 0.407 * t - t ** 2 / 233 + t ** 3 / 2547;
  }
  if (y < 1986) {
    const t = y - 1975;
    return 45.45 + 1.067 * t - t ** 2 / 260 - t ** 3 / 718;
  }
  if (y < 2005) {
    const t = y - 2000;
    return 63.86 + 0.3345 * t - 0.060374 * t ** 2 + 0.0017275 * t ** 3 + 0.000651814 * t ** 4 + 0.00002373599 * t ** 5;
  }
  if (y < 2050) {
    const t = y - 2000;
    return 62.92 + 0.32217 * t + 0.005589 * t ** 2;
  }
  return longTerm(y) - 0.5628 * (2150 - y);
}

/** Sum of a VSOP87-style series: sum_i (sum_j A cos(B + C*JME)) * JME^i, scaled by 1e-8 (SPA eq. 9-11). */
function earthSeries(series: readonly (readonly EarthTerm[])[], jme: number): number {
  let total = 0;
  let power = 1;
  for (const terms of series) {
    let s = 0;
    for (const [a, b, c] of terms) s += a * Math.cos(b + c * jme);
    total += s * power;
    power *= jme;
  }
  return total / 1e8;
}

/** Third-order polynomial in JCE (SPA eq. 15-19). */
function poly3(a0: number, a1: number, a2: number, a3Divisor: number, t: number): number {
  return a0 + a1 * t + a2 * t * t + (t * t * t) / a3Divisor;
}

/**
 * Geocentric apparent solar coordinates for an instant (SPA steps 3.1-3.9, and the
 * equation of time of appendix A.1).
 * @param julianDay Julian day in UT.
 * @param deltaTSeconds TT - UT (s).
 */
export function geocentricSun(julianDay: number, deltaTSeconds: number): GeocentricSun {
  const jd = julianDay;
  const jde = jd + deltaTSeconds / 86_400; // eq. 5
  const jc = (jd - JD_J2000) / 36_525; // eq. 6
  const jce = (jde - JD_J2000) / 36_525; // eq. 7
  const jme = jce / 10; // eq. 8

  // 3.2 Earth heliocentric longitude, latitude and radius vector.
  const lDeg = limitDegrees360(earthSeries(EARTH_L, jme) / DEG);
  const bDeg = earthSeries(EARTH_B, jme) / DEG;
  const rAu = earthSeries(EARTH_R, jme);

  // 3.3 Geocentric longitude and latitude.
  const thetaDeg = limitDegrees360(lDeg + 180);
  const betaDeg = -bDeg;

  // 3.4 Nutation in longitude and obliquity (IAU 1980, 63 terms).
  const x0 = poly3(297.85036, 445267.11148, -0.0019142, 189474, jce); // mean elongation of the moon
  const x1 = poly3(357.52772, 35999.05034, -0.0001603, -300000, jce); // mean anomaly of the sun
  const x2 = poly3(134.96298, 477198.867398, 0.0086972, 56250, jce); // mean anomaly of the moon
  const x3 = poly3(93.27191, 483202.017538, -0.0036825, 327270, jce); // moon's argument of latitude
  const x4 = poly3(125.04452, -1934.136261, 0.0020708, 450000, jce); // longitude of the ascending node
  let dPsi = 0;
  let dEps = 0;
  for (const [y0, y1, y2, y3, y4, a, b, c, d] of NUTATION) {
    const arg = (x0 * y0 + x1 * y1 + x2 * y2 + x3 * y3 + x4 * y4) * DEG;
    dPsi += (a + b * jce) * Math.sin(arg);
    dEps += (c + d * jce) * Math.cos(arg);
  }
  const dPsiDeg = dPsi / 36_000_000;
  const dEpsDeg = dEps / 36_000_000;

  // 3.5 True obliquity of the ecliptic (Laskar 1986 polynomial, U = JME/10).
  const u = jme / 10;
  const eps0Arcsec =
    84381.448 +
    u * (-4680.93 + u * (-1.55 + u * (1999.25 + u * (-51.38 + u * (-249.67 + u * (-39.05 + u * (7.12 + u * (27.87 + u * (5.79 + u * 2.45)))))))));
  const epsDeg = eps0Arcsec / 3600 + dEpsDeg;

  // 3.6-3.7 Aberration correction and apparent sun longitude.
  const dTauDeg = -20.4898 / (3600 * rAu);
  const lambdaDeg = thetaDeg + dPsiDeg + dTauDeg;

  // 3.8 Apparent sidereal time at Greenwich.
  const nu0 = limitDegrees360(280.46061837 + 360.98564736629 * (jd - JD_J2000) + 0.000387933 * jc * jc - (jc * jc * jc) / 38_710_000);
  const nuDeg = nu0 + dPsiDeg * Math.cos(epsDeg * DEG);

  // 3.9-3.10 Geocentric right ascension and declination.
  const lam = lambdaDeg * DEG;
  const eps = epsDeg * DEG;
  const beta = betaDeg * DEG;
  const alphaDeg = limitDegrees360(Math.atan2(Math.sin(lam) * Math.cos(eps) - Math.tan(beta) * Math.sin(eps), Math.cos(lam)) / DEG);
  const deltaDeg = Math.asin(Math.sin(beta) * Math.cos(eps) + Math.cos(beta) * Math.sin(eps) * Math.sin(lam)) / DEG;

  // A.1 Equation of time from the sun's mean longitude M.
  const m = limitDegrees360(
    280.4664567 + 360007.6982779 * jme + 0.03032028 * jme ** 2 + jme ** 3 / 49931 - jme ** 4 / 15300 - jme ** 5 / 2_000_000,
  );
  let eotMinutes = 4 * (m - 0.0057183 - alphaDeg + dPsiDeg * Math.cos(eps));
  eotMinutes = eotMinutes - 1440 * Math.round(eotMinutes / 1440); // the degree difference may wrap by 360

  return {
    julianDay: jd,
    julianEphemerisDay: jde,
    heliocentricLongitudeDeg: lDeg,
    heliocentricLatitudeDeg: bDeg,
    earthSunDistanceAu: rAu,
    nutationLongitudeDeg: dPsiDeg,
    nutationObliquityDeg: dEpsDeg,
    trueObliquityDeg: epsDeg,
    siderealTimeDeg: limitDegrees360(nuDeg),
    rightAscensionDeg: alphaDeg,
    declinationDeg: deltaDeg,
    equationOfTimeMinutes: eotMinutes,
  };
}

/**
 * Pressure (mbar) and temperature (deg C) of the ICAO standard atmosphere at a height (m):
 * p = 1013.25 (1 - 0.0065 h / 288.15)^5.25588, T = 15 - 0.0065 h (troposphere; ICAO Doc 7488,
 * Manual of the ICAO Standard Atmosphere; from memory).
 */
function standardAtmosphere(elevationMetres: number): { pressureMbar: number; temperatureC: number } {
  const h = Math.min(Math.max(elevationMetres, -500), 11_000); // troposphere formula only
  return {
    pressureMbar: 1013.25 * (1 - (0.0065 * h) / 288.15) ** 5.25588,
    temperatureC: 15 - 0.0065 * h,
  };
}

/** Shared checks of an instant and a site; returns the year-checked Date. */
export function checkInstantAndSite(dateUtc: unknown, latDeg: unknown, lonDeg: unknown, source: string): Date {
  const date = requireDate(dateUtc, 'dateUtc', source);
  const year = date.getUTCFullYear();
  if (year < MIN_YEAR || year > MAX_YEAR) {
    throw new InputError(`dateUtc must lie in the years ${MIN_YEAR}..${MAX_YEAR} where the solar position algorithm is valid, got ${year}.`, source);
  }
  requireBetween(latDeg, 'latDeg', -90, 90, source);
  requireBetween(lonDeg, 'lonDeg', -180, 180, source);
  return date;
}

/** Delta T from the options or the estimate, checked. */
export function resolveDeltaT(date: Date, deltaT: unknown, source: string): number {
  if (deltaT === undefined) return deltaTSecondsEstimate(date);
  return requireBetween(deltaT, 'deltaT (seconds)', -8000, 8000, source);
}

/**
 * Topocentric position of the sun seen from a site, by the NREL Solar Position
 * Algorithm (Reda & Andreas 2004).
 *
 * @param dateUtc the instant (a JS Date is UTC by nature).
 * @param latDeg geodetic latitude (deg, north positive, -90..90).
 * @param lonDeg longitude (deg, east positive, -180..180).
 * @param options observer height (m), pressure (mbar), temperature (deg C),
 *   delta T (s), and optionally a tilted surface for the incidence angle.
 * @returns zenith / elevation (refraction-corrected), azimuth clockwise from north,
 *   declination, equation of time (min), hour angle and the intermediate SPA values.
 * @throws InputError for a non-finite or out-of-range argument.
 * @example
 * const p = sunPosition(new Date('2003-10-17T19:30:30Z'), 39.742476, -105.1786,
 *   { elevationMetres: 1830.14, pressureMbar: 820, temperatureC: 11, deltaT: 67 });
 * // p.zenithDeg ~ 50.1116, p.azimuthDeg ~ 194.3402
 */
export function sunPosition(dateUtc: Date, latDeg: number, lonDeg: number, options: SunPositionOptions = {}): SunPosition {
  const source = 'sunPosition';
  const date = checkInstantAndSite(dateUtc, latDeg, lonDeg, source);
  const elevationMetres: Metres =
    options.elevationMetres === undefined ? 0 : requireBetween(options.elevationMetres, 'elevationMetres', -6_500_000, 100_000, source);
  const atmosphere = standardAtmosphere(elevationMetres);
  const pressureMbar = options.pressureMbar === undefined ? atmosphere.pressureMbar : requireBetween(options.pressureMbar, 'pressureMbar', 0, 5000, source);
  const temperatureC = options.temperatureC === undefined ? atmosphere.temperatureC : requireBetween(options.temperatureC, 'temperatureC', -272.99, 6000, source);
  const deltaT = resolveDeltaT(date, options.deltaT, source);
  const deltaUt1 = options.deltaUt1Seconds === undefined ? 0 : requireBetween(options.deltaUt1Seconds, 'deltaUt1Seconds', -1, 1, source);
  const refraction = options.atmosphericRefractionDeg === undefined ? DEFAULT_REFRACTION_DEG : requireBetween(options.atmosphericRefractionDeg, 'atmosphericRefractionDeg', -5, 5, source);
  const slopeDeg = options.surfaceSlopeDeg === undefined ? null : requireBetween(options.surfaceSlopeDeg, 'surfaceSlopeDeg', -360, 360, source);
  const rotationDeg = options.surfaceAzimuthRotationDeg === undefined ? 0 : requireBetween(options.surfaceAzimuthRotationDeg, 'surfaceAzimuthRotationDeg', -360, 360, source);

  const jd = julianDayFromDate(date) + deltaUt1 / 86_400; // eq. 4 with UT = UTC + dUT1
  const g = geocentricSun(jd, deltaT);

  // 3.11 Observer local hour angle.
  const hDeg = limitDegrees360(g.siderealTimeDeg + lonDeg - g.rightAscensionDeg);

  // 3.12 Topocentric right ascension and declination (parallax).
  const phi = latDeg * DEG;
  const xi = (8.794 / (3600 * g.earthSunDistanceAu)) * DEG; // equatorial horizontal parallax
  const uu = Math.atan(0.99664719 * Math.tan(phi));
  const x = Math.cos(uu) + (elevationMetres / 6_378_140) * Math.cos(phi);
  const y = 0.99664719 * Math.sin(uu) + (elevationMetres / 6_378_140) * Math.sin(phi);
  const h = hDeg * DEG;
  const delta = g.declinationDeg * DEG;
  const denom = Math.cos(delta) - x * Math.sin(xi) * Math.cos(h);
  const dAlpha = Math.atan2(-x * Math.sin(xi) * Math.sin(h), denom);
  const deltaPrime = Math.atan2((Math.sin(delta) - y * Math.sin(xi)) * Math.cos(dAlpha), denom);
  const hPrime = h - dAlpha; // 3.13 topocentric local hour angle

  // 3.14 Topocentric elevation, refraction (Bennett-type formula of SPA eq. 42), zenith.
  const e0Deg = Math.asin(Math.sin(phi) * Math.sin(deltaPrime) + Math.cos(phi) * Math.cos(deltaPrime) * Math.cos(hPrime)) / DEG;
  let dE = 0;
  if (e0Deg >= -1 * (SUN_RADIUS_DEG + refraction)) {
    dE = (pressureMbar / 1010) * (283 / (273 + temperatureC)) * (1.02 / (60 * Math.tan((e0Deg + 10.3 / (e0Deg + 5.11)) * DEG)));
  }
  const eDeg = e0Deg + dE;
  const zenithDeg = 90 - eDeg;

  // 3.15 Topocentric azimuth: astronomers' (westward from south), then navigators' (eastward from north).
  const gammaDeg = limitDegrees360(
    Math.atan2(Math.sin(hPrime), Math.cos(hPrime) * Math.sin(phi) - Math.tan(deltaPrime) * Math.cos(phi)) / DEG,
  );
  const azimuthDeg = limitDegrees360(gammaDeg + 180);

  // 3.16 Incidence angle on a surface of slope omega and azimuth rotation gamma.
  let incidenceDeg: number | null = null;
  if (slopeDeg !== null) {
    const zen = zenithDeg * DEG;
    const omega = slopeDeg * DEG;
    const c = Math.cos(zen) * Math.cos(omega) + Math.sin(omega) * Math.sin(zen) * Math.cos((gammaDeg - rotationDeg) * DEG);
    incidenceDeg = Math.acos(Math.min(1, Math.max(-1, c))) / DEG;
  }

  return {
    zenithDeg,
    elevationDeg: eDeg,
    geometricElevationDeg: e0Deg,
    azimuthDeg,
    declinationDeg: g.declinationDeg,
    topocentricDeclinationDeg: deltaPrime / DEG,
    rightAscensionDeg: g.rightAscensionDeg,
    equationOfTimeMinutes: g.equationOfTimeMinutes,
    hourAngleDeg: limitDegrees180(hDeg),
    incidenceDeg,
    julianDay: g.julianDay,
    julianEphemerisDay: g.julianEphemerisDay,
    heliocentricLongitudeDeg: g.heliocentricLongitudeDeg,
    heliocentricLatitudeDeg: g.heliocentricLatitudeDeg,
    earthSunDistanceAu: g.earthSunDistanceAu,
    nutationLongitudeDeg: g.nutationLongitudeDeg,
    nutationObliquityDeg: g.nutationObliquityDeg,
    trueObliquityDeg: g.trueObliquityDeg,
  };
}

