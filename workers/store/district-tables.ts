/** The district tables: per district and date, and per district and year (named queries sql/queries/district_table_*.sql). */
import type { Kelvin } from '../core/units.js';
import { namedQuery } from './queries.js';
import { type Db, num, yearOrNull } from './db.js';

export interface DistrictTableOptions {
  /** Only this calendar year (UTC). */
  year?: number | null;
  /** Minimum valid fraction of a scene's district pixels for its mean to count; default 0. */
  minValidFraction?: number | null;
}

export interface DistrictDateRow {
  district_id: string;
  district_name: string;
  role: 'district' | 'rural';
  /** 'YYYY-MM-DD' (UTC). */
  obs_date: string;
  lst_day_k: Kelvin | null;
  lst_night_k: Kelvin | null;
  suhi_day_k: Kelvin | null;
  suhi_night_k: Kelvin | null;
  ati_per_k: number | null;
  day_scenes: number;
  night_scenes: number;
}

export interface DistrictYearRow extends Omit<DistrictDateRow, 'obs_date'> {
  year: number;
  /** Dates of that year with any value. */
  dates: number;
}

function tableParams(options: DistrictTableOptions): unknown[] {
  return [yearOrNull(options.year), num(options.minValidFraction, 'minValidFraction')];
}

/** Per district and date: mean day/night LST, SUHI, ATI and scene counts (sql/queries/district_table_date.sql). */
export function districtTableByDate(db: Db, options: DistrictTableOptions = {}): Promise<DistrictDateRow[]> {
  return db.query<DistrictDateRow>(namedQuery('district_table_date'), tableParams(options));
}

/** Per district and year: means over dates and counts (sql/queries/district_table_year.sql). */
export function districtTableByYear(db: Db, options: DistrictTableOptions = {}): Promise<DistrictYearRow[]> {
  return db.query<DistrictYearRow>(namedQuery('district_table_year'), tableParams(options));
}
