/**
 * Seasonal means of every metric per district and season-year
 * (sql/queries/district_season_means.sql), and the dates behind one district's
 * series of one metric (district_metric_dates.sql): what the district map and
 * the yearly series of the API show beside the outlines of `listDistricts`.
 */
import type { MonthSelection } from '../core/trend/index.js';
import { namedQuery } from './queries.js';
import type { Db } from './db.js';
import type { SeriesMetric } from './series.js';

export interface DistrictSeasonMeans {
  district_id: string;
  season_year: number;
  /** Means over the dates of the season-year that have the value; Kelvin, ATI in 1/K; null = no date had one. */
  lst_day_k: number | null;
  lst_night_k: number | null;
  suhi_day_k: number | null;
  suhi_night_k: number | null;
  ati_per_k: number | null;
  /** Dates behind the day and the night LST means. */
  dates_day: number;
  dates_night: number;
}

const n = (v: unknown): number | null => (v === null || v === undefined ? null : Number(v));

/** Means per district and season-year for the months of `sel` (every season-year, or only `year`). */
export async function districtSeasonMeans(db: Db, sel: MonthSelection, year: number | null = null): Promise<DistrictSeasonMeans[]> {
  const rows = await db.query<DistrictSeasonMeans>(namedQuery('district_season_means'), [
    sel.months ? sel.months.join(',') : null, sel.wrapFromMonth, year, null,
  ]);
  return rows.map((r) => ({
    district_id: r.district_id, season_year: Number(r.season_year),
    lst_day_k: n(r.lst_day_k), lst_night_k: n(r.lst_night_k), suhi_day_k: n(r.suhi_day_k), suhi_night_k: n(r.suhi_night_k), ati_per_k: n(r.ati_per_k),
    dates_day: Number(r.dates_day), dates_night: Number(r.dates_night),
  }));
}

/** The dates ('YYYY-MM-DD') behind each season-year's mean of `metric` for one district. */
export async function districtMetricDates(db: Db, districtId: string, metric: SeriesMetric, sel: MonthSelection): Promise<Map<number, string[]>> {
  const rows = await db.query<{ season_year: number; obs_date: string }>(namedQuery('district_metric_dates'), [
    districtId, metric, sel.months ? sel.months.join(',') : null, sel.wrapFromMonth, null,
  ]);
  const out = new Map<number, string[]>();
  for (const r of rows) {
    const y = Number(r.season_year);
    const list = out.get(y) ?? [];
    list.push(r.obs_date);
    out.set(y, list);
  }
  return out;
}
