/**
 * The district table by date sends each district's dates packed in binary
 * (sql/queries/district_table_date.sql, unfolded by districtTableByDate). Every
 * stored value must come out as the very double the store holds, null as null,
 * and each date as its calendar date, on both engines.
 *
 * Reference: the same kept rows read as plain rows, each double as PostgreSQL's
 * own text of it (the shortest text that reads back to the same double, which
 * PostgreSQL prints since version 12 at the default extra_float_digits = 1;
 * PostgreSQL manual, "Floating-Point Types") turned into a number by JavaScript's
 * Number() (ECMAScript 2024, 7.1.4.1.1 StringToNumber: the nearest double, so the
 * round trip is exact), and each date as PostgreSQL's ISO text.
 */
import { describe, expect, it } from 'vitest';
import { districtTableByDate } from '../../workers/store/district-tables.js';
import { openStore, type Store } from '../../workers/store/store.js';
import { createTempDatabase } from '../support/pipeline-harness.js';
import { serviceAvailable } from '../support/services.js';

const pgAvailable = await serviceAvailable('postgres', 'district table values');

// Values at the edges of what a double holds, and the ones text handles awkwardly.
const DOUBLES = [
  301.15, 0.1 + 0.2, -0, 0, 5e-324, -2.2250738585072014e-308, 1.7976931348623157e308, -1e-7,
  Number.NaN, Number.POSITIVE_INFINITY, Number.NEGATIVE_INFINITY, 273.15000000000003, 1 / 3,
] as const;
const DATES = ['1969-12-31', '1970-01-01', '2000-02-29', '2024-02-29', '2024-12-31', '2099-01-01'] as const;

/** The SQL literal of a double, as PostgreSQL's float8 input reads it back exactly. */
function float8(v: number | null): string {
  if (v === null) return 'NULL';
  if (Number.isNaN(v)) return `'NaN'::float8`;
  if (!Number.isFinite(v)) return v > 0 ? `'Infinity'::float8` : `'-Infinity'::float8`;
  return `'${Object.is(v, -0) ? '-0' : String(v)}'::float8`;
}

/** Rows that put every test double and a null in every column, over two districts and the rural reference. */
function summaryRows(): string[] {
  const rows: string[] = [];
  let k = 0;
  for (const district of ['b-district', 'a-district', 'rural-ref']) {
    for (const date of DATES) {
      const pick = (column: number): number | null => (
        (k + column) % (DOUBLES.length + 1) === DOUBLES.length ? null : DOUBLES[(k + column) % (DOUBLES.length + 1)]);
      rows.push(`('${district}', DATE '${date}', ${[0, 3, 5, 7, 11].map((c) => float8(pick(c))).join(', ')}, ${k % 4}, ${(k * 7) % 3})`);
      k++;
    }
  }
  return rows;
}

async function checkStore(store: Store): Promise<void> {
  await store.exec(`
    INSERT INTO districts (id, name, role, geometry, area_m2) VALUES
      ('b-district', 'B', 'district', '{}', 1), ('a-district', 'A', 'district', '{}', 1), ('rural-ref', 'R', 'rural', '{}', 1);
    INSERT INTO district_day_summary
      (district_id, obs_date, lst_day_k, lst_night_k, suhi_day_k, suhi_night_k, ati_per_k, day_scenes, night_scenes)
    VALUES ${summaryRows().join(',\n')};`);
  // Kept rows as text: no binary path between the stored double and the expected number.
  const plain = await store.query<Record<string, string | null>>(`
    SELECT s.district_id, d.name AS district_name, d.role, s.obs_date::text AS obs_date,
           s.lst_day_k::text AS lst_day_k, s.lst_night_k::text AS lst_night_k, s.suhi_day_k::text AS suhi_day_k,
           s.suhi_night_k::text AS suhi_night_k, s.ati_per_k::text AS ati_per_k,
           s.day_scenes::text AS day_scenes, s.night_scenes::text AS night_scenes
    FROM district_day_summary s JOIN districts d ON d.id = s.district_id
    ORDER BY d.role COLLATE "C", d.id COLLATE "C", s.obs_date`);
  const number = (t: string | null): number | null => (t === null ? null : Number(t));
  const expected = plain.map((r) => ({
    district_id: r.district_id, district_name: r.district_name, role: r.role, obs_date: r.obs_date,
    lst_day_k: number(r.lst_day_k), lst_night_k: number(r.lst_night_k), suhi_day_k: number(r.suhi_day_k),
    suhi_night_k: number(r.suhi_night_k), ati_per_k: number(r.ati_per_k),
    day_scenes: Number(r.day_scenes), night_scenes: Number(r.night_scenes),
  }));
  expect(expected).toHaveLength(3 * DATES.length);
  // The reference itself holds every test double, -0 and null (so the comparison can fail on each).
  const seen = expected.flatMap((r) => [r.lst_day_k, r.lst_night_k, r.suhi_day_k, r.suhi_night_k, r.ati_per_k]);
  for (const v of [...DOUBLES, null]) expect(seen.some((s) => Object.is(s, v))).toBe(true);

  const rows = await districtTableByDate(store);
  // toEqual tells -0 from 0 and takes NaN as equal to NaN.
  expect(rows).toEqual(expected);
  expect(rows.map((r) => r.district_id).slice(0, DATES.length)).toEqual(DATES.map(() => 'a-district'));
  // One year: its dates only (2024, incl. the leap day), in date order.
  expect(await districtTableByDate(store, { year: 2024 })).toEqual(expected.filter((r) => (r.obs_date as string).startsWith('2024-')));
}

describe('district table by date: each stored double and date exactly', () => {
  it('on PGlite', async () => {
    const store = await openStore({ memory: true });
    try {
      await checkStore(store);
    } finally {
      await store.close();
    }
  });

  it.skipIf(!pgAvailable)('on the PostgreSQL server', async () => {
    const database = await createTempDatabase('tablevalues');
    try {
      const store = await openStore({ databaseUrl: database.url });
      try {
        await checkStore(store);
      } finally {
        await store.close();
      }
    } finally {
      await database.drop();
    }
  });
});
