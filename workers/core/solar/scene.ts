/** The sun at a scene's centre at its acquisition time: day/night pass and timing rating. */
import { classifyPass, rateTiming, type TimingRating } from './timing.js';

export interface SceneTiming {
  acquiredAt: string | null;
  pass: 'day' | 'night' | null;
  sunElevationDeg: number | null;
  solarTimeHours: number | null;
  timingRating: TimingRating | null;
}

/** Pass and timing of an acquisition at the scene centre; nulls when there is no time. */
export function sceneTiming(acquiredAt: string | null, lon: number, lat: number, dayElevationDeg = 0): SceneTiming {
  if (!acquiredAt) return { acquiredAt: null, pass: null, sunElevationDeg: null, solarTimeHours: null, timingRating: null };
  const t = new Date(acquiredAt);
  const rating = rateTiming(t, lat, lon);
  return {
    acquiredAt,
    pass: classifyPass(t, lat, lon, { dayElevationDeg }),
    sunElevationDeg: rating.sunElevationDeg,
    solarTimeHours: rating.localSolarHours >= 24 ? 0 : rating.localSolarHours,
    timingRating: rating.rating,
  };
}
