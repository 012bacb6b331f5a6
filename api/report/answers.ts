/**
 * The API's answers the report reads (their types are the API's own: field
 * names as the API returns them, snake_case, units in the names, temperatures
 * in kelvin), and what the report gathers from them for one year. The report does not query
 * the store for any figure it states: every number comes from these answers,
 * so the report and the API always agree.
 */
import type { MonthSelection, SeasonName } from '../../workers/core/trend/index.js';
import type {
  DistrictsAnswer, HealthAnswer, HotspotsAnswer, RankingsAnswer, SceneAnswerRow, SeriesAnswer, TrendsAnswer,
} from '../answers/index.js';

export type {
  DistrictsAnswer, HealthAnswer, HotspotsAnswer, Metric, RankingsAnswer, SceneAnswerRow, SeriesAnswer, TrendRow, TrendsAnswer,
} from '../answers/index.js';
export type { DistrictFeature } from '../answers/districts.js';
export type { RankingRow } from '../answers/rankings.js';
export type { TrendFields } from '../answers/trends.js';

/** What the report asks for. */
export interface ReportRequest {
  year: number;
  season: SeasonName;
  /** First and last year of the baseline period (inclusive). */
  baseline: { from: number; to: number };
  /** Unit temperatures are shown in: kelvin, or degrees Celsius (differences are the same number in both). */
  units: 'K' | 'C';
  /** Significance level of the trend verdicts (false-discovery rate across districts). */
  alpha: number;
}

/** How the LST of a thermal (Level-1 DN) scene was made, as stored with it; paths cut to file names. */
export interface ThermalFacts {
  /** 'rte': radiative transfer equation inverted with the atmosphere; 'emissivity_only': no atmospheric correction; null: not yet processed. */
  lst_method: 'rte' | 'emissivity_only' | null;
  constants_source: string | null;
  emissivity_source: string | null;
  /** The one sentence saying how its LST was made (core/thermal/describe.ts); the appendix shows it on hover. */
  how: string;
}

export type ReportScene = SceneAnswerRow & { content_hash: string | null; thermal?: ThermalFacts | null };

/** A run's recorded parameters (the runs table), for the methods section. */
export interface RunRecord {
  id: number;
  mode: string;
  softwareVersion: string;
  finishedAt: string | null;
  state: string;
  parameters: Record<string, unknown>;
}

/** Everything the report document is built from. */
export interface ReportData {
  request: ReportRequest;
  /** Version of the software writing the report. */
  version: string;
  /** When the report was made (UTC ISO 8601). */
  madeAt: string;
  health: HealthAnswer;
  /** Districts with the night SUHI of the report year, and of the year before (null when it has no values). */
  districts: DistrictsAnswer;
  previous: DistrictsAnswer | null;
  /** One districts answer per baseline year that has values. */
  baselineYears: DistrictsAnswer[];
  rankingNight: RankingsAnswer;
  rankingDay: RankingsAnswer;
  trendsNight: TrendsAnswer;
  trendsDay: TrendsAnswer;
  /** Night SUHI series (up to the report year) of the districts drawn as small multiples, hottest first. */
  series: SeriesAnswer[];
  /** Night SUHI hot spots of the year; null with the reason when they cannot be computed. */
  hotspots: HotspotsAnswer | null;
  hotspotsMissing: string | null;
  /** Every stored scene, with the content hash the appendix lists and, for a thermal (DN) scene, how its LST was made. */
  scenes: ReportScene[];
  /** The run whose results the store holds (the latest finished one), or null. */
  run: RunRecord | null;
  /** The season's months (label e.g. "Jun-Aug"), for the scenes the data-quality section counts. */
  selection: MonthSelection;
  /** Fewest dates a year needs to count in a trend. */
  minDates: number;
}
