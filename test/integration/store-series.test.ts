/**
 * The named query behind `trend` and `hotspots` (sql/queries/district_series.sql)
 * on both engines: PGlite in memory (always) and the PostgreSQL server (a fresh
 * database, when reachable). Rows are written straight into the tables for an
 * invented southern-hemisphere town, so a December–February season crosses the
 * new year. Expected values are means of the stored numbers, worked out beside
 * each check; the season rules (meteorological seasons, December counted with
 * the following January and February) are common practice, no source.
 */
import { afterAll, describe, expect, it } from 'vitest';
import { districtTrends } from '../../workers/store/district-statistics.js';
import { openStore, type Store } from '../../workers/store/store.js';
import { districtSeries, storedDistricts } from '../../workers/store/series.js';
import { createTempDatabase, type TempDatabase } from '../support/pipeline-harness.js';
import { serviceAvailable } from '../support/services.js';

const pgAvailable = await serviceAvailable('postgres', 'store-series.test.ts (PostgreSQL server)');

const square = (lon: number, lat: number) => ({
  type: 'Polygon',
  coordinates: [[[lon, lat], [lon + 0.01, lat], [lon + 0.01, lat + 0.01], [lon, lat + 0.01], [lon, lat]]],
});

/** Dates and night SUHI (K) of district S1; S2 gets the same dates, values + 1 K; the rural row must never show. */
const S1: [string, number | null][] = [
  ['2019-12-10', 1], ['2020-01-15', 3], ['2020-02-20', 2], // summer 2020 (Dec 2019 – Feb 2020): mean 2, 3 dates
  ['2020-06-01', 10], // winter: outside the summer months
  ['2020-12-05', 5], ['2021-01-05', 7], ['2021-02-01', null], // summer 2021: mean 6 over 2 dates (a null date does not count)
];

async function seed(store: Store): Promise<void> {
  await store.query(
    `INSERT INTO districts (id, name, role, geometry, area_m2) VALUES
       ('S1', 'Saltpan', 'district', $1::jsonb, 1e6), ('S2', 'Kelpwharf', 'district', $2::jsonb, 1e6), ('rural', 'Rural', 'rural', $3::jsonb, 1e7)`,
    [JSON.stringify(square(150.0, -34.0)), JSON.stringify(square(150.01, -34.0)), JSON.stringify(square(149.9, -34.1))],
  );
  let scene = 0;
  for (const [date, v] of S1) {
    scene++;
    await store.query(`INSERT INTO scenes (id, path, kind, pass, width, height) VALUES ($1, $2, 'lst', 'day', 10, 10)`, [scene, `/town/${scene}.tif`]);
    for (const [id, value] of [['S1', v], ['S2', v === null ? null : v + 1], ['rural', 0]] as const) {
      await store.query(
        `INSERT INTO derived_metrics (obs_date, district_id, day_scene_id, suhi_night_k, t_night_k, status) VALUES ($1, $2, $3, $4, $5, 'ok')`,
        [date, id, scene, value, value === null ? null : 290 + value],
      );
    }
  }
}

function suite(name: string, open: () => Promise<Store>): void {
  describe(name, () => {
    let store: Store;
    afterAll(async () => { await store?.close(); });

    it('yearly means of a December–February season count in the year of its January', async () => {
      store = await open();
      await seed(store);
      const rows = await districtSeries(store, { metric: 'suhi_night', months: [12, 1, 2], wrapFromMonth: 12, byMonth: false });
      expect(rows.map((r) => [r.district_id, r.season_year, r.month, r.dates, r.value])).toEqual([
        ['S1', 2020, 0, 3, 2], // (1 + 3 + 2) / 3
        ['S1', 2021, 0, 2, 6], // (5 + 7) / 2
        ['S2', 2020, 0, 3, 3],
        ['S2', 2021, 0, 2, 7],
      ]);
    });

    it('all months, per month, and another metric', async () => {
      const all = await districtSeries(store, { metric: 'suhi_night', months: null, wrapFromMonth: null, byMonth: false });
      expect(all.filter((r) => r.district_id === 'S1').map((r) => [r.season_year, r.dates, r.value])).toEqual([
        [2019, 1, 1], [2020, 4, 5], [2021, 1, 7], // 2020: (3 + 2 + 10 + 5) / 4
      ]);
      const monthly = await districtSeries(store, { metric: 'lst_night', months: [12, 1, 2], wrapFromMonth: 12, byMonth: true });
      expect(monthly.filter((r) => r.district_id === 'S1').map((r) => [r.season_year, r.month, r.value])).toEqual([
        [2020, 1, 293], [2020, 2, 292], [2020, 12, 291], [2021, 1, 297], [2021, 12, 295],
      ]);
    });

    it('the stored districts leave out the rural reference; summer south of the equator is December–February', async () => {
      expect((await storedDistricts(store)).map((d) => d.id)).toEqual(['S1', 'S2']);
      const { rows, selection } = await districtTrends(store, {
        metric: 'suhi_night', season: 'summer', alpha: 0.05, serialCorrection: 'none', ciRanks: 'rounded', minDates: 3,
      });
      expect(selection.label).toBe('Dec-Feb');
      expect(rows[0]).toMatchObject({ district: 'S1', n: 1, years_used: '2020', dates_per_year: '2020:3' });
      expect(rows[0].note).toMatch(/only 1 year .*; left out for fewer than 3 dates: 2021 \(2\)/);
    });
  });
}

suite('district_series on PGlite', () => openStore({ memory: true }));

let db: TempDatabase | null = null;
afterAll(async () => { if (db) await db.drop(); });
if (pgAvailable) {
  suite('district_series on the PostgreSQL server', async () => {
    db = await createTempDatabase('series');
    return openStore({ databaseUrl: db.url });
  });
}
