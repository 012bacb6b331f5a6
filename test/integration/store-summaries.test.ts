/**
 * Migrations 006 (sql/migrations/006_district_summaries.sql) and 008
 * (008_district_reads.sql: district by district) change how the district tables
 * and the trend series are computed, never what they say: on a
 * small generated store (test/bench/big-store-data.ts, the generator of the big
 * store bench), the named queries give the same rows as the queries as they read
 * before 006 — straight from district_daily() of migration 003, kept below as the
 * reference — before and after the derived rows change (an update, a scene
 * deleted, a district re-derived), on PGlite (rows written to a current store:
 * the triggers keep the summaries) and on the PostgreSQL server (rows written
 * before 006, then migrated: 006 fills the summaries).
 * Keys and counts must be equal; means equal to 1e-9 relative (summing daily
 * values month by month instead of in one pass changes only the last digits;
 * the stated precision of the outputs is 0.0001 K). The scene listing's keyset
 * paging (sql/queries/scene_listing.sql: by acquisition time, scenes without one
 * last, then id) gives the same ids as one ordered read, with and without the
 * index 009 adds; the named queries give the same rows with and without
 * the index 008 adds (districts in the tables' order). Means and orderings follow SQL's avg() and ORDER BY
 * (PostgreSQL manual, "Aggregate Functions" and "Row Constructor Comparison").
 */
import { afterAll, describe, expect, it } from 'vitest';
import { listMigrations, migrate } from '../../workers/store/migrate.js';
import { districtTableByDate } from '../../workers/store/district-tables.js';
import type { Queryable } from '../../workers/store/interface.js';
import { namedQuery } from '../../workers/store/queries.js';
import { openStore, type Store } from '../../workers/store/store.js';
import { QUERIES_BEFORE_006, bigStoreStatements } from '../bench/big-store-data.js';
import { createTempDatabase, type TempDatabase } from '../support/pipeline-harness.js';
import { serviceAvailable } from '../support/services.js';

const pgAvailable = await serviceAvailable('postgres', 'store-summaries.test.ts (PostgreSQL server)');

const SHAPE = { districts: 4, years: 2, firstYear: 2023 };

type QueryName = keyof typeof QUERIES_BEFORE_006;
const BEFORE = QUERIES_BEFORE_006;

/** Parameter sets: every year and one year, no filter and a minimum valid fraction; series of several metrics and seasons. */
const CASES: [QueryName, unknown[]][] = [
  ['district_table_date', [null, null]],
  ['district_table_date', [SHAPE.firstYear + 1, null]],
  ['district_table_date', [SHAPE.firstYear, 0.6]],
  ['district_table_year', [null, null]],
  ['district_table_year', [SHAPE.firstYear, null]],
  ['district_table_year', [null, 0.6]],
  ['district_series', ['suhi_night', null, null, false, null]],
  ['district_series', ['lst_day', '6,7,8', null, false, null]],
  ['district_series', ['ati', '12,1,2', 12, true, null]],
  ['district_series', ['suhi_day', null, null, true, 0.6]],
];

/**
 * The rows of a named query as the store reads them: the table by date through its reader
 * (the query sends each district's dates packed as one binary value, the reader unfolds them).
 */
function readNamed(db: Queryable, name: QueryName, params: unknown[]): Promise<Record<string, unknown>[]> {
  if (name === 'district_table_date') {
    return districtTableByDate(db, { year: params[0] as number | null, minValidFraction: params[1] as number | null }) as unknown as Promise<Record<string, unknown>[]>;
  }
  return db.query<Record<string, unknown>>(namedQuery(name), params);
}

/** Equal rows: same keys, texts and counts; numbers equal to 1e-9 relative. */
function expectSameRows(after: Record<string, unknown>[], before: Record<string, unknown>[], label: string): void {
  expect(after.length, `${label}: row count`).toBe(before.length);
  expect(after.length, `${label}: the store has rows to compare`).toBeGreaterThan(0);
  for (let i = 0; i < before.length; i++) {
    expect(Object.keys(after[i]).sort(), label).toEqual(Object.keys(before[i]).sort());
    for (const [k, b] of Object.entries(before[i])) {
      const a = after[i][k];
      if (typeof b === 'number' && typeof a === 'number' && !Number.isInteger(b)) {
        expect(Math.abs(a - b), `${label} row ${i} ${k}: ${a} vs ${b}`).toBeLessThanOrEqual(1e-9 * Math.max(1, Math.abs(b)));
      } else {
        expect(a, `${label} row ${i} ${k}`).toEqual(b);
      }
    }
  }
}

/** The readings of the kept summaries (no minimum valid fraction) against the reference, after the rows changed. */
async function compareKept(store: Store, stage: string): Promise<void> {
  for (const [name, params] of CASES.filter(([, p]) => p.at(-1) === null)) {
    const before = await store.query<Record<string, unknown>>(BEFORE[name], params);
    const after = await readNamed(store, name, params);
    expectSameRows(after, before, `${stage}: ${name}(${params.map(String).join(', ')})`);
  }
}

/**
 * Every page of the scene listing (sql/queries/scene_listing.sql, as the scenes route
 * pages it: the cursor is the last row's acquisition time, 'infinity' for a scene
 * without one, and its id), joined: the ids in listing order.
 */
async function pages(db: Queryable, pass: string | null, size: number): Promise<number[]> {
  const out: { id: number; acquired_at: unknown }[] = [];
  for (;;) {
    const last = out.at(-1);
    const cursor = last === undefined ? [null, null] : [last.acquired_at ?? 'infinity', last.id];
    const page = await db.query<{ id: number; acquired_at: unknown }>(namedQuery('scene_listing'), ['processed', 'lst', pass, null, null, ...cursor, size, null]);
    out.push(...page);
    if (page.length < size) return out.map((r) => Number(r.id));
  }
}

/**
 * `fill`: 'before-006' generates the rows into a store at migration 005 and then
 * migrates (the summaries filled by 006 itself); 'after-006' generates them into
 * a current store (the summaries kept by the triggers as the rows arrive).
 */
function suite(name: string, fill: 'before-006' | 'after-006', open: () => Promise<Store>): void {
  describe(name, () => {
    let store: Store;
    afterAll(async () => { await store?.close(); });

    it(`gives the rows of the queries as they were before 006 (rows written ${fill === 'before-006' ? 'before migrating' : 'after migrating'})`, async () => {
      store = await open();
      const all = listMigrations();
      if (fill === 'before-006') await migrate(store, all.filter((m) => m.version < 6));
      for (const sql of bigStoreStatements(SHAPE)) await store.exec(sql);
      const reference: Record<string, unknown[]> = {};
      for (const [qn, params] of CASES) reference[`${qn}${JSON.stringify(params)}`] = await store.query(BEFORE[qn], params);
      if (fill === 'before-006') expect(await migrate(store, all)).toEqual({ applied: all.filter((m) => m.version >= 6).map((m) => m.id) });
      for (const [qn, params] of CASES) {
        const after = await readNamed(store, qn, params);
        expectSameRows(after, reference[`${qn}${JSON.stringify(params)}`] as Record<string, unknown>[], `${fill}: ${qn}`);
      }
    });

    it('gives the same rows without the districts_table_order index of 008 (the order comes from ORDER BY, not from the index)', async () => {
      const withIndex: Record<string, unknown>[][] = [];
      for (const [qn, params] of CASES) withIndex.push(await readNamed(store, qn, params));
      await store.transaction(async (tx) => {
        await tx.exec('DROP INDEX districts_table_order');
        for (const [i, [qn, params]] of CASES.entries()) {
          // the same data read in another plan: equal to the last digit, in the same order
          expect(withIndex[i].length, `${qn}: the store has rows to compare`).toBeGreaterThan(0);
          expect(await readNamed(tx, qn, params), `without the index: ${qn}(${params.map(String).join(', ')})`).toEqual(withIndex[i]);
        }
        throw new RollBack();
      }).catch((e: unknown) => { if (!(e instanceof RollBack)) throw e; });
      expect(await store.query(`SELECT indexname FROM pg_indexes WHERE indexname = 'districts_table_order'`)).toHaveLength(1);
    });

    it('the kept summaries follow updates, deleted scenes and re-derived districts', async () => {
      await store.query(`UPDATE derived_metrics SET t_day_k = t_day_k + 0.5, suhi_night_k = NULL WHERE obs_date BETWEEN $1 AND $2`,
        [`${SHAPE.firstYear}-02-10`, `${SHAPE.firstYear}-03-20`]);
      await compareKept(store, 'after an update');
      // a night scene deleted: its paired rows lose the night values (ON DELETE SET NULL, 001_init.sql)
      await store.query(`DELETE FROM scenes WHERE pass = 'night' AND acquired_at::date = $1::date`, [`${SHAPE.firstYear}-07-04`]);
      // a day scene deleted: its rows go (ON DELETE CASCADE)
      await store.query(`DELETE FROM scenes WHERE pass = 'day' AND acquired_at::date = $1::date`, [`${SHAPE.firstYear + 1}-01-31`]);
      await compareKept(store, 'after deleting scenes');
      // a district re-derived in one transaction: its rows deleted, some written back
      await store.transaction(async (tx) => {
        await tx.query(`CREATE TEMP TABLE kept AS SELECT * FROM derived_metrics WHERE district_id = 'd00002' AND obs_date < $1`, [`${SHAPE.firstYear + 1}-06-01`]);
        await tx.query(`DELETE FROM derived_metrics WHERE district_id = 'd00002'`);
        await tx.query(`INSERT INTO derived_metrics SELECT * FROM kept`);
        await tx.query('DROP TABLE kept');
      });
      await compareKept(store, 'after re-deriving a district');
      expect(await store.query(`SELECT count(*)::int AS n FROM district_day_summary WHERE district_id = 'd00002'`))
        .toEqual(await store.query(`SELECT count(DISTINCT obs_date)::int AS n FROM derived_metrics WHERE district_id = 'd00002'`));
    });

    it('keyset pages of the scene listing join into the ordered listing, with and without its index (scenes_listing_order, migration 009)', async () => {
      // two scenes at the same instant: the id breaks the tie; a scene without a time comes last
      await store.query(`UPDATE scenes SET acquired_at = (SELECT acquired_at FROM scenes WHERE id = 3) WHERE id = 5`);
      await store.query(`UPDATE scenes SET acquired_at = NULL WHERE id = 7`);
      const ids = async (pass: string | null) => (await store.query<{ id: number }>(
        `SELECT id FROM scenes WHERE status = 'processed' AND kind = 'lst' AND ($1::text IS NULL OR pass = $1::text)
         ORDER BY acquired_at IS NULL, acquired_at, id`, [pass])).map((r) => Number(r.id));
      const whole = await ids(null);
      const nights = await ids('night');
      expect(whole.at(-1)).toBe(7);
      expect(await pages(store, null, 97)).toEqual(whole);
      expect(await pages(store, 'night', 50)).toEqual(nights);
      await store.transaction(async (tx) => {
        await tx.exec('DROP INDEX scenes_listing_order');
        expect(await pages(tx, null, 97)).toEqual(whole);
        expect(await pages(tx, 'night', 50)).toEqual(nights);
        throw new RollBack();
      }).catch((e: unknown) => { if (!(e instanceof RollBack)) throw e; });
      expect(await store.query(`SELECT indexname FROM pg_indexes WHERE indexname = 'scenes_listing_order'`)).toHaveLength(1);
    });
  });
}

class RollBack extends Error {}

suite('district summaries on PGlite', 'after-006', () => openStore({ memory: true }));

let db: TempDatabase | null = null;
afterAll(async () => { if (db) await db.drop(); });
if (pgAvailable) {
  suite('district summaries on the PostgreSQL server', 'before-006', async () => {
    db = await createTempDatabase('summaries');
    const { openPgStore } = await import('../../workers/store/pg.js');
    return openPgStore(db.url);
  });
}
