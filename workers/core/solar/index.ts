/** Sun position (NREL SPA), sunrise/sunset, local solar time, pass classification and timing rating. */
export {
  sunPosition,
  geocentricSun,
  julianDayFromDate,
  deltaTSecondsEstimate,
  limitDegrees180,
  limitDegrees360,
  type SunPosition,
  type SunPositionOptions,
  type GeocentricSun,
} from './spa.js';
export { simpleSunPosition, type SimpleSunPosition } from './noaa.js';
export { localSolarTimeHours, sunTimes, APPARENT_HORIZON_ALTITUDE_DEG, type SunTimes, type SolarTimeOptions } from './times.js';
export {
  classifyPass,
  rateTiming,
  type PassKind,
  type ClassifyPassOptions,
  type TimingRating,
  type RateTimingOptions,
  type TimingAssessment,
} from './timing.js';
export { sceneTiming, type SceneTiming } from './scene.js';
