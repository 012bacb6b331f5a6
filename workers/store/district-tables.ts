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

/** One element of a district's days in sql/queries/district_table_date.sql. */
type DayTuple = [string, Kelvin | null, Kelvin | null, Kelvin | null, Kelvin | null, number | null, number, number];

/** A JSON number as it came; the text 'NaN' or 'Infinity' (JSON has no such number) as that number. */
function jsonNumber<T extends number | null>(v: T | string): T {
  return (typeof v === 'string' ? Number(v) : v) as T;
}

/**
 * Per district and date: mean day/night LST, SUHI, ATI and scene counts (sql/queries/district_table_date.sql),
 * in the query's order. The query sends each district's dates as one JSON array: decoding
 * 365,000 rows of 11 text fields took the client 2-3x the CPU of decoding them as 1,000 JSON
 * texts (big-store bench), with the same values.
 */
export async function districtTableByDate(db: Db, options: DistrictTableOptions = {}): Promise<DistrictDateRow[]> {
  const districts = await db.query<{ district_id: string; district_name: string; role: DistrictDateRow['role']; days: DayTuple[] }>(
    namedQuery('district_table_date'), tableParams(options));
  const rows: DistrictDateRow[] = [];
  for (const d of districts) {
    for (const day of d.days) {
      rows.push({
        district_id: d.district_id, district_name: d.district_name, role: d.role, obs_date: day[0],
        lst_day_k: jsonNumber(day[1]), lst_night_k: jsonNumber(day[2]), suhi_day_k: jsonNumber(day[3]), suhi_night_k: jsonNumber(day[4]),
        ati_per_k: jsonNumber(day[5]), day_scenes: jsonNumber(day[6]), night_scenes: jsonNumber(day[7]),
      });
    }
  }
  return rows;
}

/** Per district and year: means over dates and counts (sql/queries/district_table_year.sql). */
export function districtTableByYear(db: Db, options: DistrictTableOptions = {}): Promise<DistrictYearRow[]> {
  return db.query<DistrictYearRow>(namedQuery('district_table_year'), tableParams(options));
}
