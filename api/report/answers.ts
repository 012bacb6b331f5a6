/**
 * The parts of the API's answers the report reads (field names as the API
 * returns them: snake_case, units in the names, temperatures in kelvin), and
 * what the report gathers from them for one year. The report does not query
 * the store for any figure it states: every number comes from these answers,
 * so the report and the API always agree.
 */
import type { MonthSelection, SeasonName } from '../../workers/core/trend/index.js';

export type Metric = 'lst_day' | 'lst_night' | 'suhi_day' | 'suhi_night' | 'ati';

/** One district feature of the districts answer (that year's means, season applied). */
export interface DistrictFeature {
  id: string;
  geometry: { type: string; coordinates: unknown } | null;
  properties: {
    id: string;
    name: string;
    role: 'district' | 'rural';
    area_m2: number;
    lst_day_k: number | null;
    lst_night_k: number | null;
    suhi_day_k: number | null;
    suhi_night_k: number | null;
    ati_per_k: number | null;
    dates_day: number | null;
    dates_night: number | null;
    value: number | null;
  };
}

export interface DistrictsAnswer {
  year: number;
  season: SeasonName;
  metric: Metric;
  years: number[];
  features: DistrictFeature[];
}

export interface TrendFields {
  n: number;
  p: number | null;
  q: number | null;
  slope_per_year: number | null;
  slope_per_decade: number | null;
  slope_ci_lower_per_decade: number | null;
  slope_ci_upper_per_decade: number | null;
  pivot_year: number | null;
  pivot_value: number | null;
  slope_ci_lower: number | null;
  slope_ci_upper: number | null;
  direction: 'increasing' | 'decreasing' | 'none' | null;
  direction_raw: 'increasing' | 'decreasing' | 'none' | null;
  alpha: number;
  districts_tested: number;
  years_used: string;
  note: string | null;
}

export interface TrendsAnswer {
  metric: Metric;
  season: SeasonName;
  alpha: number;
  districts_tested: number;
  rows: (TrendFields & { district: string; name: string })[];
}

export interface SeriesAnswer {
  district: { id: string; name: string };
  metric: Metric;
  season: SeasonName;
  unit: string;
  points: { year: number; value: number | null; dates: number }[];
  trend: TrendFields;
}

export interface RankingRow {
  rank: number;
  district: string;
  name: string;
  value: number | null;
  previous_rank: number | null;
  rank_change: number | null;
}

export interface RankingsAnswer {
  year: number;
  previous_year: number | null;
  metric: Metric;
  order: 'desc' | 'asc';
  rows: RankingRow[];
}

export interface HotspotsAnswer {
  year: number;
  metric: Metric;
  weights: string;
  left_out: string[];
  moran: { i: number; expected: number; z: number; p: number } | null;
  rows: { district: string; name: string; value: number | null; gi_z: number | null; gi_p: number | null; gi_q: number | null; spot: 'hot' | 'cold' | 'none'; confidence: 99 | 95 | 90 | null }[];
}

export interface SceneAnswerRow {
  id: number | string;
  file: string;
  acquired_at: string | null;
  pass: 'day' | 'night' | null;
  kind: string | null;
  sensor: string | null;
  timing_rating: string | null;
  state: string;
  reason: string | null;
  warnings: string[];
  districts: { district: string; valid_fraction: number | null; missing_reason: string | null }[];
}

export interface HealthAnswer {
  store: string;
  schema_version: number;
  version: string;
  last_run: { id: number; state: string; finished_at: string | null } | null;
  years: number[];
}

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
  /** Every stored scene, with the content hash the appendix lists. */
  scenes: (SceneAnswerRow & { content_hash: string | null })[];
  /** The run whose results the store holds (the latest finished one), or null. */
  run: RunRecord | null;
  /** The season's months (label e.g. "Jun-Aug"), for the scenes the data-quality section counts. */
  selection: MonthSelection;
  /** Fewest dates a year needs to count in a trend. */
  minDates: number;
}
