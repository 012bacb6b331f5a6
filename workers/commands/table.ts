import { InputError } from '../core/errors.js';
import { YEAR_MAX, YEAR_MIN } from '../core/year.js';
import { formatRows, type OutputFormat, type Row } from '../format.js';
import type { Store } from '../store/index.js';
import { withStore } from './common.js';

export interface TableCommandOptions {
  level: 'date' | 'year';
  year?: number;
  format: OutputFormat;
  dataDir?: string;
}

/** Column order of the district table; Kelvin for LST and SUHI, K⁻¹ for ATI. */
export const TABLE_FIELDS = {
  date: ['district', 'name', 'date', 'lst_day', 'lst_night', 'suhi_day', 'suhi_night', 'ati', 'day_scenes', 'night_scenes'],
  year: ['district', 'name', 'year', 'dates', 'lst_day', 'lst_night', 'suhi_day', 'suhi_night', 'ati', 'day_scenes', 'night_scenes'],
} as const;

export const TABLE_LABELS: Record<string, string> = {
  lst_day: 'lst_day K', lst_night: 'lst_night K', suhi_day: 'suhi_day K', suhi_night: 'suhi_night K', ati: 'ati 1/K',
};

/** The district table rows with the public field names. */
export async function districtTable(store: Store, level: 'date' | 'year', year?: number): Promise<Row[]> {
  const { districtTableByDate, districtTableByYear } = await import('../store/index.js');
  if (level === 'date') {
    return (await districtTableByDate(store, { year: year ?? null })).map((r) => ({
      district: r.district_id, name: r.district_name, date: r.obs_date,
      lst_day: r.lst_day_k, lst_night: r.lst_night_k, suhi_day: r.suhi_day_k, suhi_night: r.suhi_night_k, ati: r.ati_per_k,
      day_scenes: r.day_scenes, night_scenes: r.night_scenes,
    }));
  }
  return (await districtTableByYear(store, { year: year ?? null })).map((r) => ({
    district: r.district_id, name: r.district_name, year: r.year, dates: r.dates,
    lst_day: r.lst_day_k, lst_night: r.lst_night_k, suhi_day: r.suhi_day_k, suhi_night: r.suhi_night_k, ati: r.ati_per_k,
    day_scenes: r.day_scenes, night_scenes: r.night_scenes,
  }));
}

export function renderTable(rows: Row[], level: 'date' | 'year', format: OutputFormat): string {
  return formatRows(rows, format, {
    columns: TABLE_FIELDS[level],
    labels: TABLE_LABELS,
    decimals: { lst_day: 2, lst_night: 2, suhi_day: 2, suhi_night: 2, ati: 5 },
  });
}

export async function runTableCommand(opts: TableCommandOptions): Promise<void> {
  if (opts.year !== undefined && !(Number.isInteger(opts.year) && opts.year >= YEAR_MIN && opts.year <= YEAR_MAX)) {
    throw new InputError(`--year must be a year from ${YEAR_MIN} to ${YEAR_MAX}, got ${opts.year}`);
  }
  await withStore(opts, async (store) => {
    const rows = await districtTable(store, opts.level, opts.year);
    if (rows.length === 0 && opts.format === 'table') {
      process.stderr.write('heatledger: the store holds no derived rows yet; run `heatledger ingest` first\n');
    }
    process.stdout.write(renderTable(rows, opts.level, opts.format));
  });
}
