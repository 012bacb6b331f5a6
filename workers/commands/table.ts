import { InputError } from '../core/errors.js';
import { YEAR_MAX, YEAR_MIN } from '../core/year.js';
import { formatRows, type OutputFormat, type Row } from '../format.js';
import { districtTable, roundTableRows, TABLE_FIELDS, TABLE_LABELS } from '../store/district-table.js';
import { requireValuesInYears } from '../store/store-summary.js';
import { withStore } from './common.js';

export interface TableCommandOptions {
  level: 'date' | 'year';
  year?: number;
  format: OutputFormat;
  dataDir?: string;
}

export function renderTable(rows: readonly Row[], level: 'date' | 'year', format: OutputFormat): string {
  return formatRows(format === 'table' ? rows : roundTableRows(rows), format, {
    columns: TABLE_FIELDS[level],
    labels: TABLE_LABELS,
    decimals: { lst_day_k: 2, lst_night_k: 2, suhi_day_k: 2, suhi_night_k: 2, ati_per_k: 5 },
  });
}

export async function runTableCommand(opts: TableCommandOptions): Promise<void> {
  if (opts.year !== undefined && !(Number.isInteger(opts.year) && opts.year >= YEAR_MIN && opts.year <= YEAR_MAX)) {
    throw new InputError(`--year must be a year from ${YEAR_MIN} to ${YEAR_MAX}, got ${opts.year}`);
  }
  await withStore(opts, async (store) => {
    if (opts.year !== undefined) await requireValuesInYears(store, { from: opts.year, to: opts.year });
    const rows = await districtTable(store, opts.level, opts.year);
    if (rows.length === 0 && opts.format === 'table') {
      process.stderr.write('heatledger: the store holds no derived rows yet; run `heatledger ingest` first\n');
    }
    process.stdout.write(renderTable(rows, opts.level, opts.format));
  });
}
