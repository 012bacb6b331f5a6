/** GET /api/table: the district table by date or by year, at its stated precision, with units and the caution. */
import { CAUTION_TEXT } from '../../workers/core/defaults.js';
import type { Row } from '../../workers/format.js';
import { districtTable, roundTableRows } from '../../workers/store/district-table.js';
import type { Store } from '../../workers/store/index.js';
import { storeSummary } from '../../workers/store/store-summary.js';
import { requireYearWithValues, UNITS } from './common.js';

export { TABLE_FIELDS } from '../../workers/store/district-table.js';

export interface TableQuery {
  level: 'date' | 'year';
  year?: number;
}

export interface TableAnswer {
  level: 'date' | 'year';
  units: typeof UNITS;
  caution: string;
  rows: Row[];
}

/** The table of every year, or of one year with values (another year is a 404 naming those that have values). */
export async function answerTable(store: Store, q: TableQuery): Promise<TableAnswer> {
  if (q.year !== undefined) requireYearWithValues(q.year, (await storeSummary(store)).years);
  return { level: q.level, units: UNITS, caution: CAUTION_TEXT, rows: roundTableRows(await districtTable(store, q.level, q.year)) };
}
