/** GET /api/table: the district table by date or by year, at its stated precision, with units and the caution. */
import { CAUTION_TEXT } from '../../workers/core/defaults.js';
import type { Row } from '../../workers/format.js';
import { districtTable, roundTableRows } from '../../workers/store/district-table.js';
import type { Store } from '../../workers/store/index.js';
import { UNITS } from './common.js';

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

export async function answerTable(store: Store, q: TableQuery): Promise<TableAnswer> {
  return { level: q.level, units: UNITS, caution: CAUTION_TEXT, rows: roundTableRows(await districtTable(store, q.level, q.year)) };
}
