/** The district tables: per district and date, and per district and year (named queries sql/queries/district_table_*.sql). */
import type { Kelvin } from '../core/units.js';
import { dateOfEpochDay } from '../core/epoch-day.js';
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

/**
 * The layout of one date in a district's packed days (sql/queries/district_table_date.sql):
 * byte offsets, big-endian. Written by hand rather than read as text: on the big store
 * (1,000 districts, one year, 366,366 dates; npm run bench -- --big-store) the JSON form it
 * replaces took the server 0.7-0.95 s and the client 0.6-0.65 s of CPU, the packed form
 * about half of each, with the same doubles to the last bit.
 */
const PACKED = {
  bytes: 54, date: 0, nulls: 4, lstDay: 6, lstNight: 14, suhiDay: 22, suhiNight: 30, ati: 38, dayScenes: 46, nightScenes: 50,
} as const;

/** Unfold one district's packed days into rows, appending to `rows`; `dates` memoises day number → 'YYYY-MM-DD' (366 dates for 366,000 rows). */
function unpackDays(
  district: { district_id: string; district_name: string; role: DistrictDateRow['role'] },
  days: Uint8Array, dates: Map<number, string>, rows: DistrictDateRow[],
): void {
  if (days.byteLength % PACKED.bytes !== 0) {
    throw new Error(`district table: the packed days of district ${district.district_id} are ${days.byteLength} bytes, not a multiple of ${PACKED.bytes}`);
  }
  const v = new DataView(days.buffer, days.byteOffset, days.byteLength);
  const value = (at: number, nulls: number, bit: number): number | null => ((nulls & bit) !== 0 ? null : v.getFloat64(at));
  for (let o = 0; o < days.byteLength; o += PACKED.bytes) {
    const day = v.getInt32(o + PACKED.date);
    let date = dates.get(day);
    if (date === undefined) {
      date = dateOfEpochDay(day);
      dates.set(day, date);
    }
    const nulls = v.getInt16(o + PACKED.nulls);
    rows.push({
      district_id: district.district_id, district_name: district.district_name, role: district.role, obs_date: date,
      lst_day_k: value(o + PACKED.lstDay, nulls, 1), lst_night_k: value(o + PACKED.lstNight, nulls, 2),
      suhi_day_k: value(o + PACKED.suhiDay, nulls, 4), suhi_night_k: value(o + PACKED.suhiNight, nulls, 8),
      ati_per_k: value(o + PACKED.ati, nulls, 16),
      day_scenes: v.getInt32(o + PACKED.dayScenes), night_scenes: v.getInt32(o + PACKED.nightScenes),
    });
  }
}

/**
 * Per district and date: mean day/night LST, SUHI, ATI and scene counts (sql/queries/district_table_date.sql),
 * in the query's order. The query sends each district's dates packed as one binary value
 * (layout in the query's header), unfolded here.
 */
export async function districtTableByDate(db: Db, options: DistrictTableOptions = {}): Promise<DistrictDateRow[]> {
  const districts = await db.query<{ district_id: string; district_name: string; role: DistrictDateRow['role']; days: Uint8Array }>(
    namedQuery('district_table_date'), tableParams(options));
  const rows: DistrictDateRow[] = [];
  const dates = new Map<number, string>();
  for (const d of districts) unpackDays(d, d.days, dates, rows);
  return rows;
}

/** Per district and year: means over dates and counts (sql/queries/district_table_year.sql). */
export function districtTableByYear(db: Db, options: DistrictTableOptions = {}): Promise<DistrictYearRow[]> {
  return db.query<DistrictYearRow>(namedQuery('district_table_year'), tableParams(options));
}
