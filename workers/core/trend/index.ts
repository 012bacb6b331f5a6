/** Trend statistics: Mann–Kendall, Hamed–Rao, Seasonal Kendall, Sen's slope, Benjamini–Hochberg. */
export { mannKendall, mannKendallS, mannKendallVariance, continuityZ, type MannKendallResult } from './mannKendall.js';
export { senSlope, senFromSlopes, senPivot, pairwiseSlopes, type CiRanks, type SenSlopeResult, type SenPivot } from './senSlope.js';
export { hamedRao, autocorrelation, type HamedRaoResult } from './hamedRao.js';
export { seasonalKendall, type SeasonalObservation, type SeasonalKendallResult } from './seasonalKendall.js';
export { benjaminiHochberg } from './fdr.js';
export { twoSidedP, normalQuantile } from './normal.js';
export { trendOfSeries, seasonalTrendOfSeries, directionOf, yearRanges, MIN_TREND_YEARS, type TrendOptions, type TrendResult, type Direction, type SerialCorrection } from './series.js';
export { parseMonths, seasonMonths, hemisphereOf, seasonYear, monthSelected, SEASON_NAMES, type SeasonName, type Hemisphere, type MonthSelection } from './season.js';
export { yearlySeries, datesPerYearText, noteWithDrops, type PeriodMean, type YearlySeries } from './yearly.js';
export { parseSeriesCsv, type ParsedSeries } from './seriesFile.js';
