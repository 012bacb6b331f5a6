/**
 * Reads for the trend and hot-spot commands: the yearly (or monthly) series of
 * one metric per district (sql/queries/district_series.sql) and the stored
 * district outlines.
 */
import type { District } from '../core/districts/types.js';
import { namedQuery } from './queries.js';
import type { Queryable, Store } from './interface.js';

export type Db = Store | Queryable;

/** Metrics a series can be taken of: Kelvin for LST and SUHI, 1/K for ATI. */
export const SERIES_METRICS = ['lst_day', 'lst_night', 'suhi_day', 'suhi_night', 'ati'] as const;
export type SeriesMetric = (typeof SERIES_METRICS)[number];

export interface SeriesQuery {
  metric: SeriesMetric;
  /** Months kept (1-12); null = all. */
  months: readonly number[] | null;
  /** First month counted with the next season-year (e.g. 12 for December-February); null = none. */
  wrapFromMonth: number | null;
  /** One row per month too (for the Seasonal Kendall test). */
  byMonth: boolean;
  /** Minimum zonal valid fraction on top of the derive step's; null = none. */
  minValidFraction?: number | null;
}

export interface SeriesRow {
  district_id: string;
  district_name: string;
  /** Calendar year, or for a season across the new year the year of its January. */
  season_year: number;
  /** 1-12 with byMonth, else 0. */
  month: number;
  /** Dates that had a value. */
  dates: number;
  /** Mean over those dates (K, or 1/K for ATI). */
  value: number;
}

/** @example await districtSeries(store, { metric: 'suhi_night', months: [6, 7, 8], wrapFromMonth: null, byMonth: false }) */
export async function districtSeries(db: Db, q: SeriesQuery): Promise<SeriesRow[]> {
  const rows = await db.query<SeriesRow>(namedQuery('district_series'), [
    q.metric,
    q.months ? q.months.join(',') : null,
    q.wrapFromMonth,
    q.byMonth,
    q.minValidFraction ?? null,
  ]);
  return rows.map((r) => ({ ...r, season_year: Number(r.season_year), month: Number(r.month), dates: Number(r.dates), value: Number(r.value) }));
}

/** The stored districts (role 'district', not the rural reference) as District values, ordered by id. */
export async function storedDistricts(db: Db): Promise<District[]> {
  const rows = await db.query<{ id: string; name: string; geometry: { type: string; coordinates: unknown }; area_m2: number; properties: Record<string, unknown> }>(
    `SELECT id, name, geometry, area_m2, properties FROM districts WHERE role = 'district' ORDER BY id COLLATE "C"`,
  );
  return rows.map((r) => ({
    id: r.id,
    name: r.name,
    geometry: (r.geometry.type === 'Polygon' ? [r.geometry.coordinates] : r.geometry.coordinates) as number[][][][],
    properties: r.properties ?? {},
    areaSquareMetres: Number(r.area_m2),
    role: 'district' as const,
  }));
}
