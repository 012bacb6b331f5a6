/** The answer functions of the API routes, for in-process callers (the report). */
export * from './common.js';
export { answerHealth, type HealthAnswer } from './health.js';
export { answerDistricts, answerDistrict, DISTRICT_CSV_FIELDS, type DistrictsAnswer, type DistrictAnswer, type DistrictsQuery } from './districts.js';
export { answerTrends, answerSeries, type TrendsAnswer, type SeriesAnswer, type TrendQuery, type TrendRow } from './trends.js';
export { answerRankings, type RankingsAnswer, type RankingsQuery } from './rankings.js';
export { answerHotspots, type HotspotsAnswer, type HotspotsQuery } from './hotspots.js';
export { answerScenes, answerScene, type ScenesAnswer, type SceneAnswerRow, type ScenesQuery } from './scenes.js';
export { answerTable, type TableAnswer, type TableQuery } from './table.js';
