/**
 * Local solar time, solar noon, sunrise and sunset, from the geocentric sun of the
 * NREL SPA (Reda & Andreas 2004).
 */
import type { Degrees } from '../units.js';
import { requireBetween } from '../checks.js';
import { checkInstantAndSite, geocentricSun, julianDayFromDate, limitDegrees180, resolveDeltaT } from './spa.js';

const DEG = Math.PI / 180;
const MS_PER_HOUR = 3_600_000;
const MS_PER_DAY = 86_400_000;

/**
 * Altitude of the sun's centre at sunrise and sunset: -(34' refraction + 16' semidiameter)
 * = -0.8333 deg (Meeus 1998, Astronomical Algorithms, 2nd ed., ch. 15; the value SPA uses). Common practice.
 */
export const APPARENT_HORIZON_ALTITUDE_DEG = -0.8333;

export interface SolarTimeOptions {
  /** TT - UT1 in seconds. Default: the estimate of spa.ts. */
  deltaT?: number;
}

/**
 * Local apparent (true) solar time at a longitude: UTC + lon/15 + EoT/60 (hours),
 * reduced to [0, 24) (the definition; common practice, no source). 12:00 is the sun's transit;
 * the equation of time EoT comes from SPA (Reda & Andreas 2004, appendix A.1).
 * @param dateUtc the instant.
 * @param lonDeg longitude (deg, east positive).
 * @returns hours in [0, 24).
 * @example
 * localSolarTimeHours(new Date('2003-10-17T19:30:30Z'), -105.1786) // ~12.74
 */
export function localSolarTimeHours(dateUtc: Date, lonDeg: number, options: SolarTimeOptions = {}): number {
  const date = checkInstantAndSite(dateUtc, 0, lonDeg, 'localSolarTimeHours');
  const deltaT = resolveDeltaT(date, options.deltaT, 'localSolarTimeHours');
  const eot = geocentricSun(julianDayFromDate(date), deltaT).equationOfTimeMinutes;
  const utcHours = (date.getTime() - Math.floor(date.getTime() / MS_PER_DAY) * MS_PER_DAY) / MS_PER_HOUR;
  const h = utcHours + lonDeg / 15 + eot / 60;
  const r = h - 24 * Math.floor(h / 24);
  return r >= 24 ? 0 : r;
}

export interface SunTimes {
  /** 'normal' when the sun rises and sets on this solar day. */
  kind: 'normal' | 'polar-night' | 'midnight-sun';
  /**
   * Sun's centre crossing the apparent horizon upwards, or null when there is none on this
   * solar day (polar day or night; or, with kind 'normal', the day a polar day begins or ends,
   * when the sun rises but does not set, or sets but does not rise).
   */
  sunriseUtc: Date | null;
  /** Sun's centre crossing the apparent horizon downwards, or null (see sunriseUtc). */
  sunsetUtc: Date | null;
  /** Transit of the sun over the local meridian. */
  solarNoonUtc: Date;
  /** True when the sun stays below the apparent horizon all day. */
  polarNight: boolean;
  /** True when the sun stays above the apparent horizon all day. */
  midnightSun: boolean;
  /** Geocentric altitude of the sun at transit (deg, no refraction). */
  noonAltitudeDeg: Degrees;
}

interface LocalSun {
  hourAngleDeg: number;
  declinationDeg: number;
  altitudeDeg: number;
}

function localSun(ms: number, latDeg: number, lonDeg: number, deltaT: number): LocalSun {
  const g = geocentricSun(ms / MS_PER_DAY + 2_440_587.5, deltaT);
  const hourAngleDeg = limitDegrees180(g.siderealTimeDeg + lonDeg - g.rightAscensionDeg);
  const phi = latDeg * DEG;
  const d = g.declinationDeg * DEG;
  const s = Math.sin(phi) * Math.sin(d) + Math.cos(phi) * Math.cos(d) * Math.cos(hourAngleDeg * DEG);
  return { hourAngleDeg, declinationDeg: g.declinationDeg, altitudeDeg: Math.asin(Math.min(1, Math.max(-1, s))) / DEG };
}

/**
 * Newton iteration on the time when the sun's geocentric altitude equals `h0Deg`
 * (Meeus 1998, Astronomical Algorithms, 2nd ed., ch. 15: dm = (h - h0) / (360 cos(dec) cos(lat) sin(H)) days).
 * Returns null when it does not converge (the crossing does not exist near `startMs`).
 */
function refineCrossing(startMs: number, latDeg: number, lonDeg: number, deltaT: number, h0Deg: number, rising: boolean): number | null {
  let t = startMs;
  for (let i = 0; i < 20; i++) {
    const s = localSun(t, latDeg, lonDeg, deltaT);
    const denom = 360 * Math.cos(s.declinationDeg * DEG) * Math.cos(latDeg * DEG) * Math.sin(s.hourAngleDeg * DEG);
    if (!Number.isFinite(denom) || Math.abs(denom) < 1e-9) return null;
    if (rising ? s.hourAngleDeg > 0 : s.hourAngleDeg < 0) return null; // wrong side of the meridian
    const dtDays = Math.max(-0.25, Math.min(0.25, (s.altitudeDeg - h0Deg) / denom));
    t += dtDays * MS_PER_DAY;
    if (Math.abs(dtDays) < 1e-8) {
      const check = localSun(t, latDeg, lonDeg, deltaT);
      return Math.abs(check.altitudeDeg - h0Deg) < 1e-4 ? t : null;
    }
  }
  return null;
}

/**
 * Sunrise, sunset and solar noon of the solar day (local apparent solar time
 * 00:00-24:00) that contains `dateUtc`, with polar-night / midnight-sun flags.
 * Sunrise and sunset are the crossings of the sun's centre through the standard
 * apparent horizon, -0.8333 deg (see {@link APPARENT_HORIZON_ALTITUDE_DEG}).
 *
 * @param dateUtc any instant of the wanted solar day.
 * @param latDeg latitude (deg, north positive).
 * @param lonDeg longitude (deg, east positive).
 * @returns times as UTC Dates; sunrise/sunset are null on a polar day or night.
 * @example
 * const t = sunTimes(new Date('2003-10-17T19:30:30Z'), 39.742476, -105.1786, { deltaT: 67 });
 * // t.sunriseUtc ~ 2003-10-17T13:12:43Z, t.sunsetUtc ~ 2003-10-18T00:20:19Z
 */
export function sunTimes(dateUtc: Date, latDeg: number, lonDeg: number, options: SolarTimeOptions & { horizonDeg?: number } = {}): SunTimes {
  const source = 'sunTimes';
  const date = checkInstantAndSite(dateUtc, latDeg, lonDeg, source);
  const deltaT = resolveDeltaT(date, options.deltaT, source);
  const h0Deg = options.horizonDeg === undefined ? APPARENT_HORIZON_ALTITUDE_DEG : requireBetween(options.horizonDeg, 'horizonDeg', -18, 10, source);

  // Transit: start from the solar time of the instant, then cancel the hour angle.
  const solarHours = localSolarTimeHours(date, lonDeg, { deltaT });
  let noonMs = date.getTime() + (12 - solarHours) * MS_PER_HOUR;
  for (let i = 0; i < 5; i++) {
    const s = localSun(noonMs, latDeg, lonDeg, deltaT);
    noonMs -= (s.hourAngleDeg / 360) * MS_PER_DAY;
    if (Math.abs(s.hourAngleDeg) < 1e-7) break;
  }
  const atNoon = localSun(noonMs, latDeg, lonDeg, deltaT);
  const phi = latDeg * DEG;
  const dec = atNoon.declinationDeg * DEG;
  const noonAltitudeDeg = 90 - Math.abs(latDeg - atNoon.declinationDeg);
  const lowerTransitAltitudeDeg = Math.abs(latDeg + atNoon.declinationDeg) - 90;
  const result = (kind: SunTimes['kind'], rise: number | null, set: number | null): SunTimes => ({
    kind,
    sunriseUtc: rise === null ? null : new Date(Math.round(rise)),
    sunsetUtc: set === null ? null : new Date(Math.round(set)),
    solarNoonUtc: new Date(Math.round(noonMs)),
    polarNight: kind === 'polar-night',
    midnightSun: kind === 'midnight-sun',
    noonAltitudeDeg,
  });
  if (noonAltitudeDeg < h0Deg) return result('polar-night', null, null);
  if (lowerTransitAltitudeDeg > h0Deg) return result('midnight-sun', null, null);

  // Hour angle of the crossing with the noon declination, then Newton refinement.
  const cosH0 = (Math.sin(h0Deg * DEG) - Math.sin(phi) * Math.sin(dec)) / (Math.cos(phi) * Math.cos(dec));
  const h0HourAngleDeg = Math.acos(Math.min(1, Math.max(-1, cosH0))) / DEG;
  const rise = refineCrossing(noonMs - (h0HourAngleDeg / 360) * MS_PER_DAY, latDeg, lonDeg, deltaT, h0Deg, true);
  const set = refineCrossing(noonMs + (h0HourAngleDeg / 360) * MS_PER_DAY, latDeg, lonDeg, deltaT, h0Deg, false);
  return result('normal', rise, set);
}
