/**
 * The embedded store on disk (the default for one machine): the data directory
 * is created when missing, data survive closing, a database made at schema 1
 * is brought to schema 2 on opening (its rows kept), and a current one gets no
 * migration twice. Also measures the bulk write path (100 000 zonal rows) on the
 * on-disk embedded store and on the PostgreSQL server, and prints the rates.
 *
 * Expected counts are derived from the generated plan (scenes × districts);
 * mean checks compare SQL avg() with the arithmetic mean computed here. The
 * upgrade check follows sql/migrations/002_night_only_rows.sql: rows keyed by a
 * day scene keep that key, and night-only rows (no day scene) become possible.
 */
import crypto from 'node:crypto';
import fs from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import pg from 'pg';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ServiceError } from '../../workers/core/errors.js';
import { listMigrations, migrate } from '../../workers/store/migrate.js';
import { openPgliteStore } from '../../workers/store/pglite.js';
import {
  listDerived,
  registerScene,
  replaceDerived,
  replaceZonalStats,
  upsertDistricts,
  type DerivedInput,
  type ZonalStatsInput,
} from '../../workers/store/index.js';
import { openStore, type Store } from '../../workers/store/store.js';
import { serviceAvailable, testDatabaseUrl } from '../support/services.js';

const pgAvailable = await serviceAvailable('postgres', 'store-disk.test.ts (PostgreSQL server bulk write)');

const DISTRICT_COUNT = 1000;
const SCENE_COUNT = 100; // × 1000 districts = 100 000 zonal rows

/** Write 100 000 zonal rows (100 scenes × 1 000 districts); returns rows per second. */
async function bulkWrite(store: Store): Promise<{ rowsPerSecond: number; expectedMeanSum: number }> {
  await upsertDistricts(
    store,
    Array.from({ length: DISTRICT_COUNT }, (_, i) => ({
      id: `d${String(i).padStart(4, '0')}`,
      name: `Block ${i}`,
      geometry: [[[[0, 0], [1, 0], [1, 1], [0, 0]]]],
      areaSquareMetres: 10_000 + i,
    })),
  );
  const sceneIds: number[] = [];
  for (let s = 0; s < SCENE_COUNT; s++) {
    const h = crypto.createHash('sha256').update(`bench-${s}`).digest('hex');
    sceneIds.push(
      await registerScene(store, {
        contentHash: h, path: `/bench/${s}.tif`, kind: 'lst', acquiredAt: new Date(Date.UTC(2024, 6, 1) + s * 86_400_000).toISOString(),
        pass: s % 2 ? 'night' : 'day', epsg: 32632, crsDefinition: null, width: 100, height: 100, pixelSizeMetres: 30,
        scale: 1, offset: 0, nodata: null,
      }),
    );
  }
  let expectedMeanSum = 0;
  const batches = sceneIds.map((sceneId, s) =>
    Array.from({ length: DISTRICT_COUNT }, (_, i): ZonalStatsInput => {
      const mean = 290 + ((s * 7 + i * 13) % 400) / 10;
      expectedMeanSum += mean;
      return {
        districtId: `d${String(i).padStart(4, '0')}`, pixels: 400, valid: 380, validFraction: 0.95, meanKelvin: mean,
        stdKelvin: 1.5, minKelvin: mean - 4, maxKelvin: mean + 5, medianKelvin: mean, p10Kelvin: mean - 2, p90Kelvin: mean + 2,
        nodataCount: 20, maskedCount: 0, implausibleCount: 0, coverageRule: 'centre',
      };
    }),
  );
  const t0 = performance.now();
  for (let s = 0; s < sceneIds.length; s++) await replaceZonalStats(store, sceneIds[s], batches[s]);
  const seconds = (performance.now() - t0) / 1000;
  return { rowsPerSecond: (SCENE_COUNT * DISTRICT_COUNT) / seconds, expectedMeanSum };
}

async function checkBulk(store: Store, expectedMeanSum: number): Promise<void> {
  const [row] = await store.query<{ n: number; s: number; processed: number }>(
    `SELECT count(*) AS n, sum(mean_k) AS s, (SELECT count(*) FROM scenes WHERE status = 'processed') AS processed FROM zonal_stats`,
  );
  expect(row.n).toBe(SCENE_COUNT * DISTRICT_COUNT);
  expect(row.processed).toBe(SCENE_COUNT);
  expect(row.s).toBeCloseTo(expectedMeanSum, 4);
}

describe('embedded store on disk', () => {
  const root = fs.mkdtempSync(path.join(os.tmpdir(), 'heatledger-store-'));
  const dataDir = path.join(root, 'nested', 'data'); // does not exist yet
  let store: Store | undefined;

  afterAll(async () => {
    await store?.close();
    fs.rmSync(root, { recursive: true, force: true });
  });

  it('creates the data directory, upgrades a schema-1 database keeping its rows, and applies no migration twice', async () => {
    expect(fs.existsSync(dataDir)).toBe(false);
    // A database as heatledger left it before 002: only 001_init applied (made from scratch, not from the prepared template).
    const first = await openPgliteStore({ dataDir, memory: false, fromScratch: true });
    expect(await migrate(first, listMigrations().slice(0, 1))).toEqual({ applied: ['001_init'] });
    await upsertDistricts(first, [{ id: 'quay', name: 'Quay', geometry: [[[[0, 0], [1, 0], [1, 1], [0, 0]]]], areaSquareMetres: 5 }]);
    // written with schema 1's columns (the program of today writes columns added since)
    const scene = async (tag: string, acquiredAt: string, pass: 'day' | 'night') =>
      (await first.query<{ id: number }>(
        `INSERT INTO scenes (content_hash, path, kind, acquired_at, pass, epsg, width, height, pixel_size_m, scale, add_offset)
         VALUES ($1, $2, 'lst', $3::timestamptz, $4, 32632, 10, 10, 30, 1, 0) RETURNING id`,
        [crypto.createHash('sha256').update(tag).digest('hex'), `/archive/${tag}.tif`, acquiredAt, pass],
      ))[0].id;
    const day = await scene('quay-day', '2024-07-14T10:30:00Z', 'day');
    const night = await scene('quay-night', '2024-07-14T21:15:00Z', 'night');
    const lateNight = await scene('quay-late-night', '2024-07-16T22:30:00Z', 'night');
    // Schema 1 keyed derived rows by (obs_date, district_id, day_scene_id), NOT NULL.
    await first.query(
      `INSERT INTO derived_metrics (obs_date, district_id, day_scene_id, night_scene_id, t_day_k, t_night_k, status)
       VALUES ('2024-07-14', 'quay', $1, $2, 309.5, 295.25, 'ok')`,
      [day, night],
    );
    const nightOnlyBefore = await first.query(
      `INSERT INTO derived_metrics (obs_date, district_id, day_scene_id, night_scene_id, t_night_k, status)
       VALUES ('2024-07-16', 'quay', NULL, $1, 296.0, 'no day pass')`,
      [lateNight],
    ).catch((e: unknown) => e);
    // SQLSTATE 23502 not_null_violation (PostgreSQL manual, Appendix A): schema 1 had no night-only rows.
    expect((nightOnlyBefore as Error).message).toMatch(/day_scene_id.*SQLSTATE 23502/);
    await first.close();
    expect(fs.existsSync(path.join(dataDir, 'PG_VERSION'))).toBe(true);

    // Opening through openStore brings it to schema 2.
    store = await openStore({ dataDir });
    expect(await migrate(store)).toEqual({ applied: [] });
    expect(await store.query('SELECT id, area_m2 FROM districts')).toEqual([{ id: 'quay', area_m2: 5 }]);
    expect(await store.query('SELECT version FROM schema_migrations ORDER BY version')).toEqual([{ version: 1 }, { version: 2 }, { version: 3 }, { version: 4 }, { version: 5 }, { version: 6 }, { version: 7 }, { version: 8 }, { version: 9 }]);
    // The schema-1 row survived, and replaceDerived's key (day scene, else night scene)
    // finds it: writing it again updates it in place; a night-only row is now accepted, once.
    const row = (values: Partial<DerivedInput>): DerivedInput => ({
      obsDate: '2024-07-14', districtId: 'quay', daySceneId: day, nightSceneId: night, albedoSceneId: null, albedoSource: null,
      tDayKelvin: 309.5, tNightKelvin: 295.25, albedo: null, atiPerKelvin: null, suhiDayKelvin: null, suhiNightKelvin: null,
      status: 'ok', reason: null, runId: null, ...values,
    });
    const rows = [
      row({ tDayKelvin: 309.75 }),
      row({ obsDate: '2024-07-16', daySceneId: null, nightSceneId: lateNight, tDayKelvin: null, tNightKelvin: 296.0, status: 'no day pass' }),
    ];
    expect(await replaceDerived(store, rows)).toBe(2);
    expect(await replaceDerived(store, rows)).toBe(2);
    expect(await listDerived(store)).toEqual(rows);
  });

  it('refuses a data directory that is a file, naming it', async () => {
    const file = path.join(root, 'not-a-directory');
    fs.writeFileSync(file, 'x');
    const err = await openStore({ dataDir: file }).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(ServiceError);
    expect((err as Error).message).toContain(`cannot open the embedded database at ${file}: `);
  });

  it('writes 100 000 zonal rows', async () => {
    const s = store as Store;
    await s.exec('DELETE FROM derived_metrics; DELETE FROM districts');
    const { rowsPerSecond, expectedMeanSum } = await bulkWrite(s);
    console.log(`bulk write, embedded on disk: ${Math.round(rowsPerSecond)} zonal rows/s`);
    await checkBulk(s, expectedMeanSum);
  });
});

describe.skipIf(!pgAvailable)('server store bulk write', () => {
  const dbName = `heatledger_test_${crypto.randomBytes(6).toString('hex')}`;
  const urlFor = (name: string) => {
    const u = new URL(testDatabaseUrl);
    u.pathname = `/${name}`;
    return u.toString();
  };
  async function admin(sql: string): Promise<void> {
    const client = new pg.Client({ connectionString: urlFor('postgres') });
    await client.connect();
    try {
      await client.query(sql);
    } finally {
      await client.end();
    }
  }
  let store: Store | undefined;
  beforeAll(async () => {
    await admin(`CREATE DATABASE ${dbName}`);
    store = await openStore({ databaseUrl: urlFor(dbName) });
  });
  afterAll(async () => {
    await store?.close();
    await admin(`DROP DATABASE IF EXISTS ${dbName} WITH (FORCE)`);
  });

  it('writes 100 000 zonal rows', async () => {
    const s = store as Store;
    const { rowsPerSecond, expectedMeanSum } = await bulkWrite(s);
    console.log(`bulk write, PostgreSQL server: ${Math.round(rowsPerSecond)} zonal rows/s`);
    await checkBulk(s, expectedMeanSum);
  });
});
