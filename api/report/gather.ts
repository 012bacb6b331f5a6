/**
 * Gathering what the report needs: the API's answers for the report year, the
 * year before, the baseline years and the series of the hottest districts
 * (called in-process through the same functions the HTTP routes use), plus the
 * run's recorded settings and the scenes' content hashes for the methods
 * section and the appendix.
 */
import { isInputError } from '../../workers/core/errors.js';
import { seasonMonths } from '../../workers/core/trend/index.js';
import type { Store } from '../../workers/store/index.js';
import { getRun, listScenes, thermalPasses } from '../../workers/store/index.js';
import { YearWithoutValuesError } from '../answers/common.js';
import { handedOnParameters, relativeInText } from '../../workers/core/relative-paths.js';
import { storedHemisphere } from '../../workers/store/district-statistics.js';
import { MIN_DATES_PER_YEAR } from '../../workers/core/defaults.js';
import type {
  DistrictsAnswer, HealthAnswer, HotspotsAnswer, Metric, RankingsAnswer, ReportData, ReportRequest, SceneAnswerRow, SeriesAnswer, ThermalFacts, TrendsAnswer,
} from './answers.js';

/** The API answers the report reads, as functions of their query (lists already followed to their last page). */
export interface ReportAnswers {
  health(): Promise<HealthAnswer>;
  districts(q: { year: number; season: ReportRequest['season']; metric: Metric }): Promise<DistrictsAnswer>;
  series(district: string, q: { metric: Metric; season: ReportRequest['season']; to: number; alpha: number }): Promise<SeriesAnswer>;
  trends(q: { metric: Metric; season: ReportRequest['season']; to: number; alpha: number }): Promise<TrendsAnswer>;
  rankings(q: { year: number; metric: Metric; season: ReportRequest['season'] }): Promise<RankingsAnswer>;
  hotspots(q: { year: number; metric: Metric; season: ReportRequest['season'] }): Promise<HotspotsAnswer>;
  scenes(): Promise<SceneAnswerRow[]>;
}

/** Districts drawn as small multiples: the hottest by night. */
export const MULTIPLES = 6;

/** True when the answer has a value of the metric for at least one district. */
function hasValues(a: DistrictsAnswer): boolean {
  return a.features.some((f) => f.properties.role === 'district' && (f.properties.suhi_night_k !== null || f.properties.suhi_day_k !== null));
}

export async function gatherReportData(store: Store, request: ReportRequest, answers: ReportAnswers, version: string, madeAt = new Date().toISOString()): Promise<ReportData> {
  const { year, season, alpha } = request;
  const health = await answers.health();
  const districts = await answers.districts({ year, season, metric: 'suhi_night' });
  const prevYear = year - 1;
  // each year's answer asked once: the report year and the year before may lie in the baseline too
  const byYear = new Map<number, DistrictsAnswer | null>([[year, districts]]);
  // a calendar year with values may still have none in the season asked: then it is left out
  const seasonYear = async (y: number): Promise<DistrictsAnswer | null> => {
    if (!health.years.includes(y)) return null;
    if (byYear.has(y)) return byYear.get(y) ?? null;
    let answer: DistrictsAnswer | null;
    try {
      answer = await answers.districts({ year: y, season, metric: 'suhi_night' });
    } catch (e) {
      if (!(e instanceof YearWithoutValuesError)) throw e;
      answer = null;
    }
    byYear.set(y, answer);
    return answer;
  };
  const previous = await seasonYear(prevYear);
  const baselineYears: DistrictsAnswer[] = [];
  for (let y = request.baseline.from; y <= request.baseline.to; y++) {
    const a = await seasonYear(y);
    if (a && hasValues(a)) baselineYears.push(a);
  }
  const rankingNight = await answers.rankings({ year, metric: 'suhi_night', season });
  const rankingDay = await answers.rankings({ year, metric: 'suhi_day', season });
  const trendsNight = await answers.trends({ metric: 'suhi_night', season, to: year, alpha });
  const trendsDay = await answers.trends({ metric: 'suhi_day', season, to: year, alpha });
  const series: SeriesAnswer[] = [];
  for (const r of rankingNight.rows.filter((x) => x.value !== null).slice(0, MULTIPLES)) {
    series.push(await answers.series(r.district, { metric: 'suhi_night', season, to: year, alpha }));
  }
  let hotspots: HotspotsAnswer | null = null;
  let hotspotsMissing: string | null = null;
  try {
    hotspots = await answers.hotspots({ year, metric: 'suhi_night', season });
  } catch (e) {
    if (!isInputError(e)) throw e;
    hotspotsMissing = (e as Error).message;
  }
  const hashes = new Map((await listScenes(store)).map((s) => [String(s.id), s.contentHash]));
  // how each thermal scene's LST was made (stored with it; file names only, as the API shows files)
  const files = (text: string | null) => (text === null ? null : relativeInText(text, null));
  const thermal = new Map<string, ThermalFacts>((await thermalPasses(store)).map((t) => [String(t.sceneId), {
    lst_method: t.lstMethod, constants_source: files(t.thermalConstantsSource), emissivity_source: files(t.emissivitySource),
    how: relativeInText(t.howLstWasMade, null),
  }]));
  const scenes = (await answers.scenes()).map((s) => ({ ...s, content_hash: hashes.get(String(s.id)) ?? null, thermal: thermal.get(String(s.id)) ?? null }));
  const runRow = health.last_run ? await getRun(store, health.last_run.id) : null;
  return {
    request, version, madeAt, health, districts, previous: previous && hasValues(previous) ? previous : null, baselineYears,
    rankingNight, rankingDay, trendsNight, trendsDay, series, hotspots, hotspotsMissing, scenes,
    run: runRow ? { id: runRow.id, mode: runRow.mode, softwareVersion: runRow.softwareVersion, finishedAt: runRow.finishedAt, state: health.last_run?.state ?? runRow.status, parameters: handedOnParameters(runRow.parameters ?? {}, null) } : null,
    selection: seasonMonths(season, await storedHemisphere(store)),
    minDates: MIN_DATES_PER_YEAR,
  };
}
