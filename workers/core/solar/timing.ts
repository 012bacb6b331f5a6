/**
 * Day/night classification of a satellite pass and a rating of its timing for
 * thermal work (diurnal maximum, pre-dawn minimum, thermal crossovers).
 */
import type { Degrees } from '../units.js';
import { requireBetween } from '../checks.js';
import { sunPosition, type SunPositionOptions } from './spa.js';
import { localSolarTimeHours, sunTimes } from './times.js';

const MS_PER_HOUR = 3_600_000;

export type PassKind = 'day' | 'night';

export interface ClassifyPassOptions extends SunPositionOptions {
  /** Refraction-corrected sun elevation (deg) above which a pass is 'day'. Default 0: sun above the horizon. */
  dayElevationDeg?: number;
}

/**
 * Day or night pass: 'day' when the sun's refraction-corrected topocentric
 * elevation (NREL SPA) is above `dayElevationDeg` (default 0), else 'night'.
 * @param dateUtc acquisition instant.
 * @param latDeg latitude of the scene centre or pixel (deg, north positive).
 * @param lonDeg longitude (deg, east positive).
 * @example
 * classifyPass(new Date('2024-07-01T12:00:00Z'), 45, 0) // 'day'
 */
export function classifyPass(dateUtc: Date, latDeg: number, lonDeg: number, options: ClassifyPassOptions = {}): PassKind {
  const threshold = options.dayElevationDeg === undefined ? 0 : requireBetween(options.dayElevationDeg, 'dayElevationDeg', -90, 90, 'classifyPass');
  return sunPosition(dateUtc, latDeg, lonDeg, options).elevationDeg > threshold ? 'day' : 'night';
}

export type TimingRating = 'predawn' | 'midday' | 'crossover' | 'other';

export interface RateTimingOptions extends SunPositionOptions {
  /**
   * Half-width (h) of the midday window around solar noon. Default 2 (rule of thumb; common
   * practice, no source): surface temperature peaks in the early afternoon, and the Heat
   * Capacity Mapping Mission (1978-80) flew a ~14:00 / ~02:00 orbit to sample near the diurnal
   * maximum and minimum (NASA HCMM mission description).
   */
  middayHalfWidthHours?: number;
  /**
   * Length (h) of the morning crossover window after sunrise. Default 3 (rule of thumb; common
   * practice, no source): the diurnal temperature curves of materials of different thermal
   * inertia (water, dry soil, rock) cross shortly after sunrise, so contrast is minimal
   * (Sabins 1987, Remote Sensing: Principles and Interpretation, 2nd ed., diurnal
   * radiant-temperature curves; figure as reproduced by a secondary source).
   */
  crossoverAfterSunriseHours?: number;
  /** Start (h before sunset) of the evening crossover window. Default 1.5 (Sabins 1987 curves cross around sunset). */
  crossoverBeforeSunsetHours?: number;
  /** End (h after sunset) of the evening crossover window. Default 1. */
  crossoverAfterSunsetHours?: number;
  /**
   * Polar night (no sunrise): instants with local solar time in [0, this) are rated
   * 'predawn' (the coldest part of the solar day), the rest 'other'. Default 6.
   */
  polarPredawnEndHours?: number;
}

export interface TimingAssessment {
  rating: TimingRating;
  /** Local apparent solar time (h, 0..24). */
  localSolarHours: number;
  /** Refraction-corrected sun elevation (deg). */
  sunElevationDeg: Degrees;
  /** Hours since sunrise of the same solar day (negative before sunrise); null without sunrise. */
  hoursAfterSunrise: number | null;
  /** Hours until sunset of the same solar day (negative after sunset); null without sunset. */
  hoursToSunset: number | null;
  /** Hours from solar noon (negative in the morning). */
  hoursFromSolarNoon: number;
  polarNight: boolean;
  midnightSun: boolean;
}

/**
 * Rate the timing of a thermal acquisition.
 *
 * Ratings, checked in this order (the solar day is local apparent solar time 00-24 h):
 * - 'crossover': from sunrise to sunrise + 3 h, and from sunset - 1.5 h to sunset + 1 h,
 *   when diurnal curves of different materials cross and contrast is lowest
 *   (Sabins 1987); it wins over 'midday' on short winter days, since the
 *   low-contrast warning matters more there.
 * - 'midday': within +-2 h of solar noon, near the diurnal maximum of surface
 *   temperature (early afternoon).
 * - 'predawn': between solar midnight and sunrise (sun below the horizon), near the
 *   diurnal minimum (Kahle & Alley 1985, PE&RS 51).
 * - 'other': the rest (evening and the first half of the night).
 * Polar night (sun below the apparent horizon all day): 'predawn' when local solar
 * time is in [0, 6) h, else 'other'. Midnight sun: 'midday' within the midday
 * window, else 'other'. All windows are options.
 *
 * @param dateUtc acquisition instant.
 * @param latDeg latitude (deg, north positive).
 * @param lonDeg longitude (deg, east positive).
 * @example
 * rateTiming(new Date('2024-07-01T13:00:00Z'), 45, 0).rating // 'midday'
 */
export function rateTiming(dateUtc: Date, latDeg: number, lonDeg: number, options: RateTimingOptions = {}): TimingAssessment {
  const source = 'rateTiming';
  const opt = (v: number | undefined, name: string, dflt: number, max: number): number =>
    v === undefined ? dflt : requireBetween(v, name, 0, max, source);
  const middayHalf = opt(options.middayHalfWidthHours, 'middayHalfWidthHours', 2, 12);
  const afterRise = opt(options.crossoverAfterSunriseHours, 'crossoverAfterSunriseHours', 3, 12);
  const beforeSet = opt(options.crossoverBeforeSunsetHours, 'crossoverBeforeSunsetHours', 1.5, 12);
  const afterSet = opt(options.crossoverAfterSunsetHours, 'crossoverAfterSunsetHours', 1, 12);
  const polarPredawnEnd = opt(options.polarPredawnEndHours, 'polarPredawnEndHours', 6, 24);

  const position = sunPosition(dateUtc, latDeg, lonDeg, options);
  const times = sunTimes(dateUtc, latDeg, lonDeg, { deltaT: options.deltaT });
  const localSolarHours = localSolarTimeHours(dateUtc, lonDeg, { deltaT: options.deltaT });
  const t = dateUtc.getTime();
  const hoursFromSolarNoon = (t - times.solarNoonUtc.getTime()) / MS_PER_HOUR;
  const hoursAfterSunrise = times.sunriseUtc === null ? null : (t - times.sunriseUtc.getTime()) / MS_PER_HOUR;
  const hoursToSunset = times.sunsetUtc === null ? null : (times.sunsetUtc.getTime() - t) / MS_PER_HOUR;
  const inMidday = Math.abs(hoursFromSolarNoon) <= middayHalf;

  let rating: TimingRating;
  if (times.midnightSun) {
    rating = inMidday ? 'midday' : 'other';
  } else if (times.polarNight) {
    rating = localSolarHours < polarPredawnEnd ? 'predawn' : 'other';
  } else {
    const morningCrossover = hoursAfterSunrise !== null && hoursAfterSunrise >= 0 && hoursAfterSunrise <= afterRise;
    const eveningCrossover = hoursToSunset !== null && hoursToSunset <= beforeSet && hoursToSunset >= -afterSet;
    if (morningCrossover || eveningCrossover) rating = 'crossover';
    else if (inMidday) rating = 'midday';
    else if (hoursAfterSunrise !== null && hoursAfterSunrise < 0) rating = 'predawn';
    else rating = 'other';
  }
  return {
    rating,
    localSolarHours,
    sunElevationDeg: position.elevationDeg,
    hoursAfterSunrise,
    hoursToSunset,
    hoursFromSolarNoon,
    polarNight: times.polarNight,
    midnightSun: times.midnightSun,
  };
}
