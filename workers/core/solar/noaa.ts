/**
 * NOAA "General Solar Position Calculations" (NOAA Global Monitoring Laboratory,
 * solareqns.PDF), built on the Fourier series of Spencer (1971, Search 2(5):172). Accuracy
 * is about 0.1-0.3 deg: a cheap cross-check of the full algorithm in spa.ts, not a substitute.
 */
import type { Degrees } from '../units.js';
import { checkInstantAndSite } from './spa.js';

const DEG = Math.PI / 180;

export interface SimpleSunPosition {
  /** Equation of time (minutes). */
  equationOfTimeMinutes: number;
  /** Solar declination (deg). */
  declinationDeg: Degrees;
  /** Hour angle (deg, negative in the morning). */
  hourAngleDeg: Degrees;
  /** Zenith angle without refraction (deg). */
  zenithDeg: Degrees;
  /** Azimuth clockwise from north (deg, 0..360). */
  azimuthDeg: Degrees;
}

function isLeapYear(year: number): boolean {
  return (year % 4 === 0 && year % 100 !== 0) || year % 400 === 0;
}

/**
 * Sun position by the NOAA simple equations (Spencer 1971 series).
 * @param dateUtc the instant.
 * @param latDeg latitude (deg, north positive).
 * @param lonDeg longitude (deg, east positive).
 * @returns equation of time (min), declination, hour angle, zenith and azimuth (deg).
 * @example
 * simpleSunPosition(new Date('2003-10-17T19:30:30Z'), 39.742476, -105.1786).zenithDeg // ~49.90
 */
export function simpleSunPosition(dateUtc: Date, latDeg: number, lonDeg: number): SimpleSunPosition {
  const date = checkInstantAndSite(dateUtc, latDeg, lonDeg, 'simpleSunPosition');
  const year = date.getUTCFullYear();
  const startOfYear = Date.UTC(year, 0, 1);
  const dayOfYear = Math.floor((date.getTime() - startOfYear) / 86_400_000) + 1;
  const hourUtc = date.getUTCHours() + date.getUTCMinutes() / 60 + (date.getUTCSeconds() + date.getUTCMilliseconds() / 1000) / 3600;
  const nDays = isLeapYear(year) ? 366 : 365;
  const g = ((2 * Math.PI) / nDays) * (dayOfYear - 1 + (hourUtc - 12) / 24); // fractional year (rad), NOAA GML

  // Equation of time and declination: NOAA GML "General Solar Position Calculations" (Spencer 1971
  // series). NOAA prints 0.040849 for the last EoT coefficient where Spencer has 0.04089 (as
  // reproduced by a secondary source); NOAA's value is used.
  const eqTimeMinutes =
    229.18 * (0.000075 + 0.001868 * Math.cos(g) - 0.032077 * Math.sin(g) - 0.014615 * Math.cos(2 * g) - 0.040849 * Math.sin(2 * g));
  const decl =
    0.006918 -
    0.399912 * Math.cos(g) +
    0.070257 * Math.sin(g) -
    0.006758 * Math.cos(2 * g) +
    0.000907 * Math.sin(2 * g) -
    0.002697 * Math.cos(3 * g) +
    0.00148 * Math.sin(3 * g);

  const trueSolarMinutes = hourUtc * 60 + eqTimeMinutes + 4 * lonDeg; // time offset with timezone 0 (NOAA GML)
  const haDeg = trueSolarMinutes / 4 - 180; // hour angle (NOAA GML)
  const ha = haDeg * DEG;
  const phi = latDeg * DEG;
  const cosZen = Math.sin(phi) * Math.sin(decl) + Math.cos(phi) * Math.cos(decl) * Math.cos(ha);
  const zen = Math.acos(Math.min(1, Math.max(-1, cosZen)));
  // cos(az0) = (sin(decl) - sin(lat) cos(zen)) / (cos(lat) sin(zen)), az = 360 - az0 in the
  // afternoon (spherical trigonometry; common practice, no source).
  const denom = Math.cos(phi) * Math.sin(zen);
  const cosAz = denom === 0 ? 1 : Math.min(1, Math.max(-1, (Math.sin(decl) - Math.sin(phi) * Math.cos(zen)) / denom));
  const az0 = Math.acos(cosAz) / DEG;
  const haWrapped = ((haDeg + 180) % 360 + 360) % 360 - 180;
  const azimuthDeg = haWrapped > 0 ? 360 - az0 : az0;

  return {
    equationOfTimeMinutes: eqTimeMinutes,
    declinationDeg: decl / DEG,
    hourAngleDeg: haWrapped,
    zenithDeg: zen / DEG,
    azimuthDeg,
  };
}
