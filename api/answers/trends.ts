/**
 * GET /api/trends: every district's trend (Mann–Kendall, Sen slope with its
 * interval and pivot, raw p, Benjamini–Hochberg q across the districts and the
 * direction); GET /api/districts/{id}/series: one district's yearly series with
 * its row of the same table.
 */
import { MIN_DATES_PER_YEAR } from '../../workers/core/defaults.js';
import type { SerialCorrection } from '../../workers/core/trend/index.js';
import { PRECISION, roundNumber } from '../../workers/format.js';
import { districtTrends, roundTrendRow, type DistrictTrendRow } from '../../workers/store/district-statistics.js';
import { districtSeries, type SeriesRow } from '../../workers/store/series.js';
import { districtMetricDates } from '../../workers/store/district-means.js';
import type { Store } from '../../workers/store/index.js';
import {
  districtsHemisphere, LIMIT_DEFAULT, noMemo, pageByKey, seasonSelection, unitOf,
  type AnswerContext, type Memo, type Metric, type Season,
} from './common.js';
import { storedDistrictRows, UnknownDistrictError } from './districts.js';

export interface TrendQuery {
  metric: Metric;
  season: Season;
  from?: number;
  to?: number;
  /** Significance level of the direction and of the slope interval (1 − alpha); default 0.05. */
  alpha?: number;
  serial_correction?: SerialCorrection;
}

export interface TrendFields {
  n: number;
  s: number | null;
  var_s: number | null;
  z: number | null;
  p: number | null;
  /** Benjamini–Hochberg q across `districts_tested` districts. */
  q: number | null;
  tau: number | null;
  slope_per_year: number | null;
  slope_per_decade: number | null;
  slope_ci_lower: number | null;
  slope_ci_upper: number | null;
  slope_ci_lower_per_decade: number | null;
  slope_ci_upper_per_decade: number | null;
  pivot_year: number | null;
  pivot_value: number | null;
  /** After FDR (q ≤ alpha). */
  direction: 'increasing' | 'decreasing' | 'none' | null;
  /** From p alone. */
  direction_raw: 'increasing' | 'decreasing' | 'none' | null;
  z_corrected: number | null;
  p_corrected: number | null;
  alpha: number;
  districts_tested: number;
  years_used: string;
  dates_per_year: string;
  note: string | null;
}

export interface TrendRow extends TrendFields {
  district: string;
  name: string;
}

export interface TrendsAnswer {
  metric: Metric;
  season: Season;
  alpha: number;
  serial_correction: SerialCorrection;
  unit: 'K' | '1/K';
  districts_tested: number;
  next_cursor: string | null;
  rows: TrendRow[];
}

/** Slope bounds per decade (×10), at the precision of the other slopes. */
function perDecade(v: number | null, metric: Metric): number | null {
  return v === null ? null : roundNumber(v * 10, { decimals: metric === 'ati' ? 8 : 4 });
}

/** Every district's trend, rounded as the CLI rounds it; kept while the last run stays. */
export function trendTable(store: Store, q: Required<Omit<TrendQuery, 'from' | 'to'>> & Pick<TrendQuery, 'from' | 'to'>, memo: Memo): Promise<TrendRow[]> {
  const key = `trends:${q.metric}:${q.season}:${q.from ?? ''}:${q.to ?? ''}:${q.alpha}:${q.serial_correction}`;
  return memo(key, async () => {
    const series = [...(await seasonSeries(store, q.metric, q.season, memo)).values()].flat();
    const { rows } = await districtTrends(store, {
      metric: q.metric, season: q.season, hemisphere: await districtsHemisphere(store, memo), series,
      from: q.from, to: q.to, alpha: q.alpha, serialCorrection: q.serial_correction, ciRanks: 'rounded', minDates: MIN_DATES_PER_YEAR,
    });
    const tested = rows.filter((r) => (q.serial_correction === 'hamed-rao' ? r.p_corrected ?? null : r.p) !== null).length;
    return rows.map((r) => trendRow(r, q.metric, q.alpha, tested));
  });
}

function trendRow(r: DistrictTrendRow, metric: Metric, alpha: number, tested: number): TrendRow {
  const x = roundTrendRow(r as unknown as Record<string, unknown>, metric) as unknown as DistrictTrendRow;
  return {
    district: r.district, name: r.name, n: r.n, s: x.s, var_s: x.var_s, z: x.z, p: x.p, q: x.q, tau: x.tau,
    slope_per_year: x.slope_per_year, slope_per_decade: x.slope_per_decade, slope_ci_lower: x.slope_ci_lower, slope_ci_upper: x.slope_ci_upper,
    slope_ci_lower_per_decade: perDecade(r.slope_ci_lower, metric), slope_ci_upper_per_decade: perDecade(r.slope_ci_upper, metric),
    pivot_year: r.pivot_year, pivot_value: x.pivot_value,
    direction: r.direction, direction_raw: r.direction_raw, z_corrected: x.z_corrected ?? null, p_corrected: x.p_corrected ?? null,
    alpha, districts_tested: tested, years_used: r.years_used, dates_per_year: r.dates_per_year, note: r.note,
  };
}

const withDefaults = (q: TrendQuery) => ({ ...q, alpha: q.alpha ?? 0.05, serial_correction: q.serial_correction ?? 'none' as SerialCorrection });

export async function answerTrends(store: Store, q: TrendQuery & { limit?: number; cursor?: string }, ctx: AnswerContext = {}): Promise<TrendsAnswer> {
  const full = withDefaults(q);
  const rows = await trendTable(store, full, ctx.memo ?? noMemo);
  const page = pageByKey(rows, (r) => r.district, q.limit ?? LIMIT_DEFAULT, q.cursor);
  return {
    metric: q.metric, season: q.season, alpha: full.alpha, serial_correction: full.serial_correction, unit: unitOf(q.metric),
    districts_tested: rows[0]?.districts_tested ?? 0, next_cursor: page.next_cursor, rows: page.rows,
  };
}

export interface SeriesPoint {
  /** Season-year (for a season across the new year, the year of its January). */
  year: number;
  /** Mean over the dates of that season-year; K, ATI 1/K. */
  value: number;
  /** Dates behind the mean. */
  dates: number;
  /** Whether the year counts in the trend (at least MIN_DATES_PER_YEAR dates). */
  in_trend: boolean;
  dates_list?: string[];
}

export interface SeriesAnswer {
  district: { id: string; name: string };
  metric: Metric;
  season: Season;
  unit: 'K' | '1/K';
  min_dates_per_year: number;
  points: SeriesPoint[];
  trend: TrendFields;
}

/** Every district's seasonal series of a metric; kept while the last run stays. */
function seasonSeries(store: Store, metric: Metric, season: Season, memo: Memo): Promise<Map<string, SeriesRow[]>> {
  return memo(`series:${metric}:${season}`, async () => {
    const sel = await seasonSelection(store, season, memo);
    const rows = await districtSeries(store, { metric, months: sel.months, wrapFromMonth: sel.wrapFromMonth, byMonth: false });
    const out = new Map<string, SeriesRow[]>();
    for (const r of rows) {
      const list = out.get(r.district_id) ?? [];
      list.push(r);
      out.set(r.district_id, list);
    }
    return out;
  });
}

export async function answerSeries(store: Store, id: string, q: TrendQuery & { dates?: boolean }, ctx: AnswerContext = {}): Promise<SeriesAnswer> {
  const memo = ctx.memo ?? noMemo;
  const district = (await storedDistrictRows(store, memo)).find((d) => d.id === id);
  if (!district) throw new UnknownDistrictError(id);
  const full = withDefaults(q);
  const [series, trends] = await Promise.all([seasonSeries(store, q.metric, q.season, memo), trendTable(store, full, memo)]);
  const rows = (series.get(id) ?? []).filter((r) => (q.from === undefined || r.season_year >= q.from) && (q.to === undefined || r.season_year <= q.to));
  const dateLists = q.dates ? await districtMetricDates(store, id, q.metric, await seasonSelection(store, q.season, memo)) : null;
  const precision = q.metric === 'ati' ? PRECISION.perKelvin : PRECISION.kelvin;
  const points: SeriesPoint[] = rows.map((r) => ({
    year: r.season_year, value: roundNumber(r.value, precision) as number, dates: r.dates, in_trend: r.dates >= MIN_DATES_PER_YEAR,
    ...(dateLists ? { dates_list: dateLists.get(r.season_year) ?? [] } : {}),
  }));
  const row = trends.find((t) => t.district === id);
  const { district: _d, name: _n, ...trend } = row ?? emptyTrend(full.alpha, trends[0]?.districts_tested ?? 0, district.role);
  return { district: { id: district.id, name: district.name }, metric: q.metric, season: q.season, unit: unitOf(q.metric), min_dates_per_year: MIN_DATES_PER_YEAR, points, trend };
}

/** The trend fields of a district outside the trend table (the rural reference, or no value at all). */
function emptyTrend(alpha: number, tested: number, role: string): TrendRow {
  return {
    district: '', name: '', n: 0, s: null, var_s: null, z: null, p: null, q: null, tau: null, slope_per_year: null, slope_per_decade: null,
    slope_ci_lower: null, slope_ci_upper: null, slope_ci_lower_per_decade: null, slope_ci_upper_per_decade: null, pivot_year: null, pivot_value: null,
    direction: null, direction_raw: null, z_corrected: null, p_corrected: null, alpha, districts_tested: tested, years_used: '', dates_per_year: '',
    note: role === 'rural' ? 'the rural reference is not tested for a trend' : 'no year has a value',
  };
}
