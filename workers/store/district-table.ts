/**
 * The district table (sql/queries/district_table_date.sql, _year.sql) with its
 * public field names: the CLI `table` command, the demo and the HTTP API all
 * read it through `districtTable`, so a table means the same thing everywhere.
 */
import { PRECISION, roundRow, type Precision, type Row } from '../format.js';
import { districtTableByDate, districtTableByYear } from './district-tables.js';
import type { Store } from './interface.js';

/** One row of the district table; unit suffixes: `_k` Kelvin, `_per_k` 1/K. */
export type DistrictTableRow = { readonly [field: string]: string | number | null };

/** Column order of the district table. Field names carry their unit: `_k` Kelvin, `_per_k` 1/K. */
export const TABLE_FIELDS = {
  date: ['district', 'name', 'date', 'lst_day_k', 'lst_night_k', 'suhi_day_k', 'suhi_night_k', 'ati_per_k', 'day_scenes', 'night_scenes'],
  year: ['district', 'name', 'year', 'dates', 'lst_day_k', 'lst_night_k', 'suhi_day_k', 'suhi_night_k', 'ati_per_k', 'day_scenes', 'night_scenes'],
} as const;

/** Headers of the terminal table: the unit spelled out beside the field name. */
export const TABLE_LABELS: Record<string, string> = {
  lst_day_k: 'lst_day K', lst_night_k: 'lst_night K', suhi_day_k: 'suhi_day K', suhi_night_k: 'suhi_night K', ati_per_k: 'ati 1/K',
};

/** The district table rows with the public field names, at full precision (round at the output edge). */
export async function districtTable(store: Store, level: 'date' | 'year', year?: number): Promise<DistrictTableRow[]> {
  if (level === 'date') {
    return (await districtTableByDate(store, { year: year ?? null })).map((r) => ({
      district: r.district_id, name: r.district_name, date: r.obs_date,
      lst_day_k: r.lst_day_k, lst_night_k: r.lst_night_k, suhi_day_k: r.suhi_day_k, suhi_night_k: r.suhi_night_k, ati_per_k: r.ati_per_k,
      day_scenes: r.day_scenes, night_scenes: r.night_scenes,
    }));
  }
  return (await districtTableByYear(store, { year: year ?? null })).map((r) => ({
    district: r.district_id, name: r.district_name, year: r.year, dates: r.dates,
    lst_day_k: r.lst_day_k, lst_night_k: r.lst_night_k, suhi_day_k: r.suhi_day_k, suhi_night_k: r.suhi_night_k, ati_per_k: r.ati_per_k,
    day_scenes: r.day_scenes, night_scenes: r.night_scenes,
  }));
}

/** Stated precision of the district table in CSV and JSON: 0.0001 K, ATI 6 significant digits. */
export const TABLE_PRECISION: Readonly<Record<string, Precision>> = {
  lst_day_k: PRECISION.kelvin, lst_night_k: PRECISION.kelvin, suhi_day_k: PRECISION.kelvin, suhi_night_k: PRECISION.kelvin,
  ati_per_k: PRECISION.perKelvin,
};

/** District table rows rounded to their stated precision (CLI CSV and JSON, the API). */
export function roundTableRows(rows: readonly Row[]): Row[] {
  return rows.map((r) => roundRow(r, TABLE_PRECISION));
}
