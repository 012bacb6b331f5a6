/**
 * The store against both engines: the embedded one (PGlite, in memory, always)
 * and the PostgreSQL server (a fresh database per run, when reachable). One
 * suite body runs on each; a last block checks that both returned the same
 * JavaScript values for the same rows.
 *
 * Expected values are worked examples on the invented city of Velmora
 * (arithmetic means of the stored numbers, written out beside each check;
 * ATI = (1 - a) / (T_day - T_night), Price 1977, C = 1; SUHI = district LST minus
 * rural-reference LST of the same scene, Peng et al. 2012), the
 * ISO 8601 / ECMAScript `Date.prototype.toISOString` text form for instants
 * (ECMA-262, "Date Time String Format"), and PostgreSQL's documented semantics
 * (ON CONFLICT upserts, unique indexes on expressions, CHECK constraints,
 * transactions, avg() ignoring NULLs, COLLATE "C" byte order).
 */
import crypto from 'node:crypto';
import pg from 'pg';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ServiceError } from '../../workers/core/errors.js';
import {
  districtTableByDate,
  districtTableByYear,
  failures,
  findSceneByHash,
  finishRun,
  getRun,
  listDerived,
  countScenes,
  listDistricts,
  listScenes,
  listSceneTimes,
  markSceneFailed,
  registerScene,
  registerSceneReporting,
  replaceDerived,
  replaceZonalStats,
  sceneStatusCounts,
  startRun,
  storedSceneState,
  storeProcessedScene,
  knownContentHashes,
  upsertDistricts,
  zonalStatsForScenes,
  type DerivedInput,
  type DistrictInput,
  type SceneInput,
  type ZonalStatsInput,
  zonalMeansForScenes,
} from '../../workers/store/index.js';
import { BATCH_ROWS } from '../../workers/store/db.js';
import { migrate } from '../../workers/store/migrate.js';
import { namedQuery } from '../../workers/store/queries.js';
import { openStore, type Store } from '../../workers/store/store.js';
import { serviceAvailable, testDatabaseUrl } from '../support/services.js';

const pgAvailable = await serviceAvailable('postgres', 'store.test.ts (PostgreSQL server)');

// ---------------------------------------------------------------------------
// Velmora, an invented city: two districts and the rural reference ring.

function square(lon: number, lat: number, size: number): number[][][][] {
  // Counter-clockwise outer ring (RFC 7946 §3.1.6).
  return [[[[lon, lat], [lon + size, lat], [lon + size, lat + size], [lon, lat + size], [lon, lat]]]];
}

const DISTRICTS: DistrictInput[] = [
  { id: 'harbour', name: 'Harbour', geometry: square(10.0, 45.0, 0.01), areaSquareMetres: 872_000, properties: { ward: 3 } },
  { id: 'old-town', name: 'Old Town', geometry: { type: 'MultiPolygon', coordinates: square(10.01, 45.0, 0.01) }, areaSquareMetres: 871_500 },
  { id: 'rural-ring', name: 'Rural ring', role: 'rural', geometry: square(9.95, 44.95, 0.1), areaSquareMetres: 8.7e7 },
];

const hash = (text: string) => crypto.createHash('sha256').update(text).digest('hex');

function lstScene(tag: string, acquiredAt: string, pass: 'day' | 'night'): SceneInput {
  return {
    contentHash: hash(tag),
    path: `/archive/velmora/${tag}.tif`,
    kind: 'lst',
    sensor: 'invented-tirs',
    productNotes: 'scaled UInt16',
    acquiredAt,
    pass,
    sunElevationDeg: pass === 'day' ? 58.25 : -31.5,
    solarTimeHours: pass === 'day' ? 11.2 : 22.1,
    timingRating: pass === 'day' ? 'midday' : 'other',
    epsg: 32632,
    crsDefinition: '+proj=utm +zone=32 +datum=WGS84 +units=m +no_defs',
    width: 512,
    height: 512,
    pixelSizeMetres: 30,
    scale: 0.00341802,
    offset: 149,
    nodata: 0,
  };
}

// Scene plan (UTC): 14 July 2024 has two day passes and one night pass (paired
// with both); 15 July one day pass; 16 July two night passes no day pass was
// paired with (night-only derived rows); 2025 one day pass (for the year filter).
const SCENES = {
  day1: lstScene('d-2024-07-14a', '2024-07-14T10:30:00Z', 'day'),
  // Written with an offset: must be stored as the same instant in UTC.
  day2: lstScene('d-2024-07-14b', '2024-07-14T13:00:00+02:00', 'day'),
  night1: lstScene('n-2024-07-14', '2024-07-14T21:15:30.250Z', 'night'),
  day3: lstScene('d-2024-07-15', '2024-07-15T10:30:00Z', 'day'),
  day4: lstScene('d-2025-07-20', '2025-07-20T10:30:00Z', 'day'),
  night2: lstScene('n-2024-07-16a', '2024-07-16T01:10:00Z', 'night'),
  night3: lstScene('n-2024-07-16b', '2024-07-16T22:30:00Z', 'night'),
};
type SceneKey = keyof typeof SCENES;

/** `x` to 9 decimals: for means whose sum is not exact in binary floating point. */
const near = (x: number) => expect.closeTo(x, 9);

function zonal(districtId: string, meanKelvin: number | null, validFraction: number, runId: number | null = null): ZonalStatsInput {
  const pixels = 968;
  const valid = Math.round(pixels * validFraction);
  return {
    districtId,
    pixels,
    valid,
    validFraction: valid / pixels,
    meanKelvin,
    stdKelvin: meanKelvin === null ? null : 1.25,
    minKelvin: meanKelvin === null ? null : meanKelvin - 3,
    maxKelvin: meanKelvin === null ? null : meanKelvin + 4,
    medianKelvin: meanKelvin,
    p10Kelvin: meanKelvin === null ? null : meanKelvin - 1.5,
    p90Kelvin: meanKelvin === null ? null : meanKelvin + 1.75,
    nodataCount: pixels - valid,
    maskedCount: 0,
    implausibleCount: 0,
    coverageRule: 'centre',
    runId,
  };
}

// Everything each store returned, for the cross-store comparison at the end.
const captured: Record<'pglite' | 'pg', Record<string, unknown>> = { pglite: {}, pg: {} };

/** Strip values that legitimately differ between two databases (clock times, generated ids). */
function stable(value: unknown): unknown {
  return JSON.parse(
    JSON.stringify(value, (key, v) =>
      ['updatedAt', 'ingestedAt', 'processedAt', 'startedAt', 'finishedAt', 'applied_at'].includes(key) && typeof v === 'string'
        ? 'TIME'
        : v,
    ),
  );
}

const TYPES_SQL = `SELECT 9007199254740991::int8 AS big, count(*) AS n, 12.5::numeric AS dec, 300.15::float8 AS k,
  7::int4 AS i, true AS b, 'Ž text'::text AS t,
  '2024-07-14 10:30:00.123456+00'::timestamptz AS ts, '2024-07-14 12:30:00+02:00'::timestamptz AS ts_offset,
  '0099-01-02 03:04:05+00'::timestamptz AS ts_year99, 'infinity'::timestamptz AS ts_inf,
  '2024-02-29'::date AS d, '{"a":[1,2.5,null],"b":{"c":"x"}}'::jsonb AS j,
  ARRAY[1, 2, NULL]::int8[] AS arr8, ARRAY['2024-07-14 10:30:00+00']::timestamptz[] AS arr_ts,
  ARRAY['2024-07-14']::date[] AS arr_d, NULL::int8 AS nothing
  FROM (VALUES (1), (2)) v(x)`;

function defineSuite(kind: 'pglite' | 'pg', open: () => Promise<Store>, reopen: () => Promise<Store>): void {
  let store: Store;
  const out = captured[kind];

  beforeAll(async () => {
    store = await open();
  });
  afterAll(async () => {
    await store?.close();
  });

  it('applies every migration once and records it', async () => {
    const rows = await store.query<{ version: number; name: string }>('SELECT version, name FROM schema_migrations ORDER BY version');
    expect(rows).toEqual([
      { version: 1, name: 'init' },
      { version: 2, name: 'night_only_rows' },
      { version: 3, name: 'district_daily' },
      { version: 4, name: 'run_states' },
      { version: 5, name: 'thermal_scenes' },
      { version: 6, name: 'district_summaries' },
      { version: 7, name: 'failure_kinds' },
      { version: 8, name: 'district_reads' },
      { version: 9, name: 'scene_listing_order' },
    ]);
    expect(await migrate(store)).toEqual({ applied: [] });
    const again = await reopen();
    try {
      expect(await migrate(again)).toEqual({ applied: [] });
    } finally {
      if (again !== store) await again.close();
    }
    // The trend indexes exist (names from 001_init.sql).
    const idx = await store.query<{ indexname: string }>(
      `SELECT indexname FROM pg_indexes WHERE schemaname = 'public' ORDER BY indexname COLLATE "C"`,
    );
    expect(idx.map((r) => r.indexname)).toEqual(
      expect.arrayContaining(['derived_metrics_district_date', 'scenes_kind_acquired', 'zonal_stats_district']),
    );
    // 002_night_only_rows.sql: the primary key gave way to the unique key index, and
    // day_scene_id may be NULL (a night-only row).
    expect(idx.map((r) => r.indexname)).toContain('derived_metrics_key');
    expect(idx.map((r) => r.indexname)).not.toContain('derived_metrics_pkey');
    const cols = await store.query<{ column_name: string; is_nullable: string }>(
      `SELECT column_name, is_nullable FROM information_schema.columns
       WHERE table_name = 'derived_metrics' AND column_name IN ('day_scene_id', 'night_scene_id') ORDER BY column_name COLLATE "C"`,
    );
    expect(cols).toEqual([
      { column_name: 'day_scene_id', is_nullable: 'YES' },
      { column_name: 'night_scene_id', is_nullable: 'YES' },
    ]);
  });

  it('returns int8, count, numeric as numbers, instants as ISO UTC strings, dates as YYYY-MM-DD', async () => {
    const [row] = await store.query(TYPES_SQL);
    out.types = row;
    expect(row).toEqual({
      big: 9007199254740991, // Number.MAX_SAFE_INTEGER (ECMA-262)
      n: 2,
      dec: 12.5,
      k: 300.15,
      i: 7,
      b: true,
      t: 'Ž text',
      ts: '2024-07-14T10:30:00.123Z', // microseconds truncated to milliseconds
      ts_offset: '2024-07-14T10:30:00.000Z', // 12:30 at +02:00 is 10:30 UTC
      ts_year99: '0099-01-02T03:04:05.000Z', // not 1999 (Date.UTC maps 0-99 to 19xx)
      ts_inf: 'infinity',
      d: '2024-02-29',
      j: { a: [1, 2.5, null], b: { c: 'x' } },
      arr8: [1, 2, null],
      arr_ts: ['2024-07-14T10:30:00.000Z'],
      arr_d: ['2024-07-14'],
      nothing: null,
    });
  });

  it('reads bytea as its bytes in both of PostgreSQL\'s output formats (hex and escape)', async () => {
    // Reference: the bytes 0..255 as PostgreSQL's own decode() of their hex text makes them
    // (PostgreSQL manual, "Binary String Functions"), printed with bytea_output hex and escape.
    const allBytes = `SELECT decode(string_agg(lpad(to_hex(i), 2, '0'), '' ORDER BY i), 'hex') AS b, ''::bytea AS empty
                      FROM generate_series(0, 255) AS i`;
    for (const output of ['hex', 'escape']) {
      const [row] = await store.transaction(async (tx) => {
        await tx.exec(`SET LOCAL bytea_output = ${output}`);
        const [shown] = await tx.query<{ shown: string }>(`SELECT setting AS shown FROM pg_settings WHERE name = 'bytea_output'`);
        expect(shown.shown).toBe(output);
        return tx.query<{ b: Uint8Array; empty: Uint8Array }>(allBytes);
      });
      expect(row.b).toBeInstanceOf(Uint8Array);
      expect(Array.from(row.b)).toEqual(Array.from({ length: 256 }, (_, i) => i));
      expect(row.empty).toEqual(new Uint8Array(0));
    }
  });

  it('reads timestamptz text in any session time zone as the instant PostgreSQL means', async () => {
    // Reference: PostgreSQL's own extract(epoch ...) of the same value, floored to
    // milliseconds, through ECMAScript Date.prototype.toISOString. Zones with odd
    // offsets: +05:45, -03:30 (summer -02:30), +12:45/+13:45; before standard time
    // the zones had local-mean-time offsets that PostgreSQL prints with seconds
    // (e.g. -03:30:52), and the two engines' tz databases differ in such history.
    let seed = 20240714;
    const rand = () => ((seed = (seed * 1103515245 + 12345) % 2147483648) / 2147483648);
    const epochs: number[] = [];
    for (let i = 0; i < 120; i++) {
      // Year 1 BC … 9999 AD, with microseconds.
      const ms = -62198755200000 + rand() * (253402300799000 + 62198755200000);
      epochs.push(Math.round(ms * 1000) / 1e6);
    }
    epochs.push(-0.0005, 0, 1e-6, -62135596800); // just before 1970, the epoch, 1 µs after, 0001-01-01
    const texts: string[] = [];
    for (const zone of ['UTC', 'Asia/Kathmandu', 'America/St_Johns', 'Pacific/Chatham', 'Europe/Amsterdam']) {
      const rows = await store.transaction(async (tx) => {
        await tx.query(`SELECT set_config('TimeZone', $1, true)`, [zone]);
        return tx.query<{ ts: string; text: string; ms: number }>(
          `SELECT t AS ts, t::text AS text, floor(extract(epoch FROM t) * 1000)::float8 AS ms
           FROM unnest($1::float8[]) AS e(x), LATERAL (SELECT to_timestamp(e.x) AS t) s`,
          [epochs],
        );
      });
      expect(rows).toHaveLength(epochs.length);
      for (const r of rows) {
        expect({ zone, text: r.text, ts: r.ts }).toEqual({ zone, text: r.text, ts: new Date(r.ms).toISOString() });
      }
      texts.push(...rows.map((r) => r.text));
    }
    // The sample did exercise every offset form: whole hours, hh:mm and hh:mm:ss, and BC.
    expect(texts.some((t) => /[+-]\d{2}$/.test(t))).toBe(true);
    expect(texts.some((t) => /[+-]\d{2}:\d{2}$/.test(t))).toBe(true);
    expect(texts.some((t) => /[+-]\d{2}:\d{2}:\d{2}$/.test(t))).toBe(true);
    expect(texts.some((t) => / BC$/.test(t))).toBe(true);
    // The session itself stayed in UTC (SET LOCAL ended with the transaction).
    expect(await store.query(`SELECT current_setting('TimeZone') AS tz`)).toEqual([{ tz: 'UTC' }]);
  });

  it('upserts districts by id, keeping geometry as GeoJSON objects', async () => {
    expect(await upsertDistricts(store, DISTRICTS)).toBe(3);
    const first = await listDistricts(store);
    expect(await upsertDistricts(store, DISTRICTS)).toBe(3);
    const second = await listDistricts(store);
    expect(second).toEqual(first); // unchanged content keeps updated_at too
    expect(second.map((d) => [d.id, d.role])).toEqual([
      ['harbour', 'district'],
      ['old-town', 'district'],
      ['rural-ring', 'rural'],
    ]);
    expect(second[0].geometry).toEqual({ type: 'MultiPolygon', coordinates: square(10.0, 45.0, 0.01) });
    expect(second[0].properties).toEqual({ ward: 3 });
    expect(second[1].properties).toEqual({});
    expect(second[0].updatedAt).toMatch(/^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}\.\d{3}Z$/);
    out.districts = stable(second);
  });

  it('rolls a failed transaction back completely', async () => {
    await expect(
      store.transaction(async (tx) => {
        await tx.query(`INSERT INTO districts (id, name, geometry, area_m2) VALUES ('ghost', 'Ghost', '{}'::jsonb, 1)`);
        const seen = await tx.query<{ n: number }>(`SELECT count(*) AS n FROM districts WHERE id = 'ghost'`);
        expect(seen[0].n).toBe(1); // visible inside the transaction
        throw new Error('abort on purpose');
      }),
    ).rejects.toThrow('abort on purpose');
    const after = await store.query<{ n: number }>(`SELECT count(*) AS n FROM districts WHERE id = 'ghost'`);
    expect(after[0].n).toBe(0);
  });

  it('refuses the store itself inside its own transaction instead of hanging', async () => {
    await expect(store.transaction(async () => store.query('SELECT 1'))).rejects.toThrow(/use the transaction handle/);
    // The store still works afterwards.
    expect(await store.query('SELECT 1 AS one')).toEqual([{ one: 1 }]);
  });

  it('reports SQL errors as ServiceError naming the statement', async () => {
    const err = await store.query('SELECT * FROM no_such_table').catch((e: unknown) => e);
    expect(err).toBeInstanceOf(ServiceError);
    expect((err as Error).message).toMatch(/no_such_table.*does not exist.*SQLSTATE 42P01/);
  });

  let runId = 0;
  const ids = Object.fromEntries(Object.keys(SCENES).map((k) => [k, 0])) as Record<SceneKey, number>;

  it('records runs with their parameters', async () => {
    runId = await startRun(store, {
      softwareVersion: '0.1.0',
      mode: 'embedded',
      parameters: {
        coverageRule: 'centre',
        ruralReference: { districtId: 'rural-ring', description: 'ring 2-10 km outside the built-up edge, water excluded' },
        plausibleRangeKelvin: [230, 350],
        minValidFraction: 0.5,
        pairingWindowHours: 18,
        albedoWindowDays: 16,
      },
    });
    expect(Number.isInteger(runId)).toBe(true);
    await finishRun(store, runId, { status: 'succeeded' });
    const run = await getRun(store, runId);
    expect(run?.status).toBe('succeeded');
    expect(run?.parameters.plausibleRangeKelvin).toEqual([230, 350]);
    expect(run?.finishedAt).toMatch(/Z$/);
    out.run = stable({ ...run, id: 'ID' });
  });

  it('registers a scene once however often it is registered', async () => {
    for (const key of Object.keys(SCENES) as SceneKey[]) {
      ids[key] = await registerScene(store, { ...SCENES[key], runId });
    }
    expect(await registerScene(store, SCENES.day1)).toBe(ids.day1);
    // the same write, also saying what the status was before it
    expect(await registerSceneReporting(store, SCENES.day1)).toEqual({ id: ids.day1, previousStatus: 'registered' });
    const n = await store.query<{ n: number }>('SELECT count(*) AS n FROM scenes');
    expect(n[0].n).toBe(7); // seven scenes in the plan
    const day2 = await findSceneByHash(store, SCENES.day2.contentHash);
    expect(day2).toMatchObject({
      id: ids.day2,
      acquiredAt: '2024-07-14T11:00:00.000Z', // 13:00 at +02:00
      kind: 'lst',
      pass: 'day',
      epsg: 32632,
      scale: 0.00341802,
      offset: 149,
      status: 'registered',
      runId,
    });
    expect(await findSceneByHash(store, hash('never seen'))).toBeNull();
    out.scene = stable({ ...day2, id: 'ID', runId: 'ID' });
  });

  it('records failures keyed by content hash or, for unreadable files, by path', async () => {
    const broken = hash('broken file');
    const a = await markSceneFailed(store, { contentHash: broken, path: '/archive/velmora/broken.tif', error: 'not a TIFF' });
    const b = await markSceneFailed(store, { contentHash: broken, path: '/archive/velmora/broken.tif', error: 'not a TIFF (again)' });
    expect(b).toBe(a);
    const c = await markSceneFailed(store, { path: '/archive/velmora/locked.tif', error: 'permission denied' });
    const d = await markSceneFailed(store, { path: '/archive/velmora/locked.tif', error: 'permission denied' });
    expect(d).toBe(c);
    const list = await failures(store);
    expect(list.map((f) => [f.path, f.error, f.contentHash])).toEqual([
      ['/archive/velmora/broken.tif', 'not a TIFF (again)', broken],
      ['/archive/velmora/locked.tif', 'permission denied', null],
    ]);
    expect(await sceneStatusCounts(store)).toEqual({ registered: 7, processed: 0, failed: 2, total: 9 });
    out.failures = stable(list.map((f) => ({ ...f, sceneId: 'ID' })));
  });

  it('replaces a scene\'s zonal statistics idempotently and marks it processed', async () => {
    // Means in Kelvin, invented: harbour / old-town / rural-ring per scene, then
    // old-town's valid fraction (harbour 0.9 and rural-ring 0.95 throughout).
    // Clouds over old-town on day3 (0.3) and night2 (0.4): below the 0.5 of the table checks.
    const plan: Array<[SceneKey, number, number, number, number]> = [
      ['day1', 310.4, 308.2, 303.1, 0.8],
      ['day2', 312.0, 309.0, 304.5, 0.8],
      ['night1', 295.5, 294.25, 291.0, 0.8],
      ['day3', 309.6, 307.8, 302.6, 0.3],
      ['day4', 311.0, 308.5, 303.0, 0.8],
      ['night2', 296.0, 294.5, 292.25, 0.4],
      ['night3', 297.0, 295.5, 292.75, 0.8],
    ];
    for (const [key, h, o, r, oValid] of plan) {
      const rows = [zonal('harbour', h, 0.9), zonal('old-town', o, oValid), zonal('rural-ring', r, 0.95)];
      expect(await replaceZonalStats(store, ids[key], rows, { runId })).toBe(3);
    }
    // day2's old-town is cloudy: valid fraction 0.25 (below the 0.5 used in the table checks).
    await replaceZonalStats(store, ids.day2, [zonal('harbour', 312.0, 0.9), zonal('old-town', 309.0, 0.25), zonal('rural-ring', 304.5, 0.95)], { runId });
    const once = await zonalStatsForScenes(store, [ids.day2]);
    await replaceZonalStats(store, ids.day2, [zonal('harbour', 312.0, 0.9), zonal('old-town', 309.0, 0.25), zonal('rural-ring', 304.5, 0.95)], { runId });
    const twice = await zonalStatsForScenes(store, [ids.day2]);
    expect(twice).toEqual(once);
    expect(twice.map((z) => [z.districtId, z.meanKelvin, z.valid])).toEqual([
      ['harbour', 312.0, 871], // round(968 × 0.9)
      ['old-town', 309.0, 242], // 968 × 0.25
      ['rural-ring', 304.5, 920], // round(968 × 0.95)
    ]);
    const total = await store.query<{ n: number }>('SELECT count(*) AS n FROM zonal_stats');
    expect(total[0].n).toBe(21); // 7 scenes × 3 districts
    expect(await sceneStatusCounts(store)).toEqual({ registered: 0, processed: 7, failed: 2, total: 9 });
    out.zonal = stable(twice.map((z) => ({ ...z, sceneId: 'ID', runId: 'ID' })));
  });

  it('gives the derive step its lean reads: scene times, the failed count, means of chosen districts', async () => {
    // The 7 LST scenes processed above, in acquisition order; the 2 failed scenes are not listed.
    const times = await listSceneTimes(store, ['lst', 'thermal', 'albedo'], 'processed');
    const full = await listScenes(store, { kind: 'lst', status: 'processed' });
    expect(times).toEqual(full.map((s) => ({ id: s.id, kind: s.kind, acquiredAt: s.acquiredAt, pass: s.pass })));
    // acquisition order of the fixture's instants (day2 is 11:00 UTC, written as 13:00+02:00)
    const keyOf = new Map(Object.entries(ids).map(([k, id]) => [id, k]));
    expect(times.map((t) => keyOf.get(t.id))).toEqual(['day1', 'day2', 'night1', 'day3', 'night2', 'night3', 'day4']);
    expect(await listSceneTimes(store, ['albedo'], 'processed')).toEqual([]);
    expect(await countScenes(store, 'failed')).toBe(2);
    expect(await countScenes(store, 'registered')).toBe(0);
    // Only the districts asked for, in scene then byte order of district id.
    const means = await zonalMeansForScenes(store, [ids.day2, ids.day1], ['rural-ring', 'old-town']);
    expect(means.map((m) => [m.sceneId === ids.day1 ? 'day1' : 'day2', m.districtId, m.meanKelvin, m.validFraction])).toEqual([
      // valid fraction = valid / pixels of the 968 pixels: round(968 × 0.8) = 774, round(968 × 0.95) = 920, 968 × 0.25 = 242
      ['day1', 'old-town', 308.2, 774 / 968],
      ['day1', 'rural-ring', 303.1, 920 / 968],
      ['day2', 'old-town', 309.0, 242 / 968],
      ['day2', 'rural-ring', 304.5, 920 / 968],
    ]);
  });

  it('leaves the old zonal rows when a replacement fails part-way', async () => {
    const before = await zonalStatsForScenes(store, [ids.day1]);
    // Unknown district: the foreign key rejects the insert after the delete ran.
    await expect(replaceZonalStats(store, ids.day1, [zonal('harbour', 1, 1), zonal('nowhere', 2, 1)])).rejects.toBeInstanceOf(ServiceError);
    expect(await zonalStatsForScenes(store, [ids.day1])).toEqual(before);
    // A NaN never reaches the database.
    await expect(replaceZonalStats(store, ids.day1, [zonal('harbour', Number.NaN, 1)])).rejects.toThrow(/meanKelvin.*finite/);
    expect(await zonalStatsForScenes(store, [ids.day1])).toEqual(before);
  });

  /** A derived row as the derive step writes it; every value not given is NULL. */
  function derivedRow(districtId: string, obsDate: string, day: SceneKey | null, night: SceneKey | null, values: Partial<DerivedInput>): DerivedInput {
    return {
      obsDate,
      districtId,
      daySceneId: day === null ? null : ids[day],
      nightSceneId: night === null ? null : ids[night],
      albedoSceneId: null,
      albedoSource: null,
      tDayKelvin: null,
      tNightKelvin: null,
      albedo: null,
      atiPerKelvin: null,
      suhiDayKelvin: null,
      suhiNightKelvin: null,
      status: 'ok',
      runId,
      ...values,
    };
  }

  // The city's derived rows, from the zonal plan above. T = the district's zonal mean;
  // SUHI = district minus rural-ring of the same scene (Peng et al. 2012);
  // ATI = (1 - a) / (T_day - T_night) (Price 1977, C = 1). The derive step here ran
  // with a looser valid-fraction minimum (0.2) than the 0.5 the table checks apply.
  // night3's rows come before night2's on purpose (listDerived must sort them).
  const cityRows = (): DerivedInput[] => [
    derivedRow('harbour', '2024-07-14', 'day1', 'night1', {
      tDayKelvin: 310.4, tNightKelvin: 295.5, albedo: 0.15, albedoSource: 'property',
      atiPerKelvin: 0.85 / 14.9, // (1 - 0.15) / (310.4 - 295.5)
      suhiDayKelvin: 7.3, // 310.4 - 303.1
      suhiNightKelvin: 4.5, // 295.5 - 291.0
    }),
    derivedRow('harbour', '2024-07-14', 'day2', 'night1', {
      tDayKelvin: 312.0, tNightKelvin: 295.5, albedo: 0.15, albedoSource: 'property',
      atiPerKelvin: 0.85 / 16.5, // (1 - 0.15) / (312.0 - 295.5)
      suhiDayKelvin: 7.5, // 312.0 - 304.5
      suhiNightKelvin: 4.5, // 295.5 - 291.0
    }),
    derivedRow('harbour', '2024-07-15', 'day3', null, { tDayKelvin: 309.6, suhiDayKelvin: 7.0 /* 309.6 - 302.6 */, status: 'no night pair' }),
    derivedRow('harbour', '2024-07-16', null, 'night3', { tNightKelvin: 297.0, suhiNightKelvin: 4.25 /* 297.0 - 292.75 */, status: 'no day pass' }),
    derivedRow('harbour', '2024-07-16', null, 'night2', { tNightKelvin: 296.0, suhiNightKelvin: 3.75 /* 296.0 - 292.25 */, status: 'no day pass' }),
    derivedRow('harbour', '2025-07-20', 'day4', null, { tDayKelvin: 311.0, suhiDayKelvin: 8.0 /* 311.0 - 303.0 */, status: 'no night pair' }),
    derivedRow('old-town', '2024-07-14', 'day1', 'night1', {
      tDayKelvin: 308.2, tNightKelvin: 294.25,
      suhiDayKelvin: 5.1, // 308.2 - 303.1
      suhiNightKelvin: 3.25, // 294.25 - 291.0
      status: 'no albedo',
    }),
    derivedRow('old-town', '2024-07-14', 'day2', 'night1', {
      tDayKelvin: 309.0, tNightKelvin: 294.25, albedo: 0.2, albedoSource: 'property',
      atiPerKelvin: 0.8 / 14.75, // (1 - 0.2) / (309.0 - 294.25)
      suhiDayKelvin: 4.5, // 309.0 - 304.5
      suhiNightKelvin: 3.25, // 294.25 - 291.0
    }),
    derivedRow('old-town', '2024-07-15', 'day3', null, { tDayKelvin: 307.8, suhiDayKelvin: 5.2 /* 307.8 - 302.6 */, status: 'no night pair' }),
    derivedRow('old-town', '2024-07-16', null, 'night3', { tNightKelvin: 295.5, suhiNightKelvin: 2.75 /* 295.5 - 292.75 */, status: 'no day pass' }),
    derivedRow('old-town', '2024-07-16', null, 'night2', { tNightKelvin: 294.5, suhiNightKelvin: 2.25 /* 294.5 - 292.25 */, status: 'no day pass' }),
    derivedRow('old-town', '2025-07-20', 'day4', null, { tDayKelvin: 308.5, suhiDayKelvin: 5.5 /* 308.5 - 303.0 */, status: 'no night pair' }),
  ];
  const derivedCount = () => store.query<{ n: number }>('SELECT count(*) AS n FROM derived_metrics').then((r) => r[0].n);

  it('upserts derived metrics by (date, district, day scene or, without one, night scene)', async () => {
    const rows = cityRows();
    // First write with two values the second write corrects: one row keyed by its
    // day scene, one night-only row keyed by its night scene.
    const first = rows.map((r) => ({ ...r }));
    const pick = (list: DerivedInput[], districtId: string, day: SceneKey | null, night: SceneKey | null) =>
      list.find((r) => r.districtId === districtId && r.daySceneId === (day && ids[day]) && r.nightSceneId === (night && ids[night])) as DerivedInput;
    pick(first, 'harbour', 'day2', 'night1').suhiDayKelvin = 7.9;
    pick(first, 'harbour', null, 'night2').suhiNightKelvin = 3.5;
    expect(await replaceDerived(store, first)).toBe(12);
    expect(await derivedCount()).toBe(12);
    // Second write: same keys, so still 12 rows, with the new values.
    expect(await replaceDerived(store, rows)).toBe(12);
    expect(await derivedCount()).toBe(12);
    const list = await listDerived(store);
    // Order: district (byte order), date, day scene, then night scene; day_scene_id
    // NULL sorts after every id (PostgreSQL: NULLS LAST is the default for ASC).
    expect(list.map((r) => [r.districtId, r.obsDate, r.daySceneId, r.nightSceneId, r.suhiDayKelvin, r.suhiNightKelvin, r.status])).toEqual([
      ['harbour', '2024-07-14', ids.day1, ids.night1, 7.3, 4.5, 'ok'],
      ['harbour', '2024-07-14', ids.day2, ids.night1, 7.5, 4.5, 'ok'],
      ['harbour', '2024-07-15', ids.day3, null, 7.0, null, 'no night pair'],
      ['harbour', '2024-07-16', null, ids.night2, null, 3.75, 'no day pass'],
      ['harbour', '2024-07-16', null, ids.night3, null, 4.25, 'no day pass'],
      ['harbour', '2025-07-20', ids.day4, null, 8.0, null, 'no night pair'],
      ['old-town', '2024-07-14', ids.day1, ids.night1, 5.1, 3.25, 'no albedo'],
      ['old-town', '2024-07-14', ids.day2, ids.night1, 4.5, 3.25, 'ok'],
      ['old-town', '2024-07-15', ids.day3, null, 5.2, null, 'no night pair'],
      ['old-town', '2024-07-16', null, ids.night2, null, 2.25, 'no day pass'],
      ['old-town', '2024-07-16', null, ids.night3, null, 2.75, 'no day pass'],
      ['old-town', '2025-07-20', ids.day4, null, 5.5, null, 'no night pair'],
    ]);
    // Every column of a night-only row comes back as written.
    expect(list[3]).toEqual({ ...pick(rows, 'harbour', null, 'night2'), reason: null });
    expect(list[3].tDayKelvin).toBeNull();

    // Writing the same rows again changes nothing: idempotent, night-only rows included
    // (a plain unique key on day_scene_id would add them again, NULLs being distinct).
    expect(await replaceDerived(store, rows)).toBe(12);
    expect(await listDerived(store)).toEqual(list);
    expect(await derivedCount()).toBe(12);
    expect(await listDerived(store, { districtId: 'old-town' })).toEqual(list.slice(6));

    // A row with neither a day nor a night scene is refused by the CHECK of 002
    // (SQLSTATE 23514 check_violation, PostgreSQL manual Appendix A), and the
    // statement's other rows are rolled back with it.
    const orphan = derivedRow('harbour', '2024-07-17', null, null, { status: 'no scene' });
    const changed = { ...rows[0], suhiDayKelvin: 99 };
    const err = await replaceDerived(store, [changed, orphan]).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(ServiceError);
    expect((err as Error).message).toMatch(/derived_metrics_has_scene.*SQLSTATE 23514/);
    expect(await listDerived(store)).toEqual(list);
    // Deleting a night scene (inside a transaction that is then rolled back): the
    // night-only rows keyed by it go (trigger of 002), and a day row paired with it
    // keeps its day values with night_scene_id set to NULL (ON DELETE SET NULL).
    const rollback = new Error('rollback');
    await store.transaction(async (tx) => {
      await tx.query('DELETE FROM scenes WHERE id = $1', [ids.night2]);
      const left = await tx.query<{ n: number }>('SELECT count(*) AS n FROM derived_metrics WHERE day_scene_id IS NULL AND night_scene_id IS NULL');
      expect(left[0].n).toBe(0);
      const gone = await tx.query<{ n: number }>('SELECT count(*) AS n FROM derived_metrics WHERE night_scene_id = $1', [ids.night2]);
      expect(gone[0].n).toBe(0);
      const all = await tx.query<{ n: number }>('SELECT count(*) AS n FROM derived_metrics');
      expect(all[0].n).toBe(12 - list.filter((r) => r.nightSceneId === ids.night2 && r.daySceneId === null).length);
      throw rollback;
    }).catch((e: unknown) => { if (e !== rollback) throw e; });
    expect(await listDerived(store)).toEqual(list);
    out.derived = stable(list.map((r) => ({
      ...r,
      daySceneId: r.daySceneId === null ? null : 'ID',
      nightSceneId: r.nightSceneId === null ? null : 'ID',
      runId: 'ID',
    })));
  });

  // Expected rows of the per-date table, without a valid-fraction filter.
  // Means are over that date's derived rows (avg ignores NULLs); counts are distinct scenes with a value.
  const district = (id: string, name: string) => ({ district_id: id, district_name: name, role: 'district' });
  const H = district('harbour', 'Harbour');
  const O = district('old-town', 'Old Town');
  const R = { district_id: 'rural-ring', district_name: 'Rural ring', role: 'rural' };
  const DATE_ROWS = {
    h14: {
      ...H, obs_date: '2024-07-14',
      lst_day_k: near(311.2), // (310.4 + 312.0) / 2
      lst_night_k: 295.5, // (295.5 + 295.5) / 2: night1 is paired with both day passes
      suhi_day_k: near(7.4), // (7.3 + 7.5) / 2
      suhi_night_k: 4.5,
      ati_per_k: near((0.85 / 14.9 + 0.85 / 16.5) / 2), // 0.0542810657
      day_scenes: 2, night_scenes: 1, // night1 counted once
    },
    // 15 July: no night pair, so night columns and ATI are NULL (avg of no values).
    h15: { ...H, obs_date: '2024-07-15', lst_day_k: 309.6, lst_night_k: null, suhi_day_k: 7.0, suhi_night_k: null, ati_per_k: null, day_scenes: 1, night_scenes: 0 },
    // 16 July: two night-only rows.
    h16: {
      ...H, obs_date: '2024-07-16', lst_day_k: null,
      lst_night_k: 296.5, // (296.0 + 297.0) / 2
      suhi_day_k: null,
      suhi_night_k: 4.0, // (3.75 + 4.25) / 2
      ati_per_k: null, day_scenes: 0, night_scenes: 2,
    },
    h25: { ...H, obs_date: '2025-07-20', lst_day_k: 311.0, lst_night_k: null, suhi_day_k: 8.0, suhi_night_k: null, ati_per_k: null, day_scenes: 1, night_scenes: 0 },
    o14: {
      ...O, obs_date: '2024-07-14',
      lst_day_k: near(308.6), // (308.2 + 309.0) / 2
      lst_night_k: 294.25,
      suhi_day_k: near(4.8), // (5.1 + 4.5) / 2
      suhi_night_k: 3.25,
      ati_per_k: near(0.8 / 14.75), // only day2's row has an albedo
      day_scenes: 2, night_scenes: 1,
    },
    o15: { ...O, obs_date: '2024-07-15', lst_day_k: 307.8, lst_night_k: null, suhi_day_k: 5.2, suhi_night_k: null, ati_per_k: null, day_scenes: 1, night_scenes: 0 },
    o16: {
      ...O, obs_date: '2024-07-16', lst_day_k: null,
      lst_night_k: 295.0, // (294.5 + 295.5) / 2
      suhi_day_k: null,
      suhi_night_k: 2.5, // (2.25 + 2.75) / 2
      ati_per_k: null, day_scenes: 0, night_scenes: 2,
    },
    o25: { ...O, obs_date: '2025-07-20', lst_day_k: 308.5, lst_night_k: null, suhi_day_k: 5.5, suhi_night_k: null, ati_per_k: null, day_scenes: 1, night_scenes: 0 },
    // The rural reference's own rows: SUHI 0 by definition; 14 July from day1 only
    // (no rural row for day2 was written, so its zonal 304.5 does not count).
    r14: { ...R, obs_date: '2024-07-14', lst_day_k: 303.1, lst_night_k: 291.0, suhi_day_k: 0, suhi_night_k: 0, ati_per_k: null, day_scenes: 1, night_scenes: 1 },
    r25: { ...R, obs_date: '2025-07-20', lst_day_k: 303.0, lst_night_k: null, suhi_day_k: 0, suhi_night_k: null, ati_per_k: null, day_scenes: 1, night_scenes: 0 },
  };
  const ruralRows = (): DerivedInput[] => [
    derivedRow('rural-ring', '2025-07-20', 'day4', null, { tDayKelvin: 303.0, suhiDayKelvin: 0, status: 'no night pair' }),
    derivedRow('rural-ring', '2024-07-14', 'day1', 'night1', { tDayKelvin: 303.1, tNightKelvin: 291.0, suhiDayKelvin: 0, suhiNightKelvin: 0, status: 'no albedo' }),
  ];

  it('answers the district table per date from derived_metrics alone', async () => {
    // rural-ring has zonal statistics of every scene but no derived rows yet: no rural rows.
    const zonalRural = await store.query<{ n: number }>(`SELECT count(*) AS n FROM zonal_stats WHERE district_id = 'rural-ring'`);
    expect(zonalRural[0].n).toBe(7);
    const all = await districtTableByDate(store);
    // Order: role ('district' before 'rural'), district id in byte order, then date.
    expect(all).toEqual([DATE_ROWS.h14, DATE_ROWS.h15, DATE_ROWS.h16, DATE_ROWS.h25, DATE_ROWS.o14, DATE_ROWS.o15, DATE_ROWS.o16, DATE_ROWS.o25]);
    // minValidFraction 0 keeps every pass: 0 <= any fraction.
    expect(await districtTableByDate(store, { minValidFraction: 0 })).toEqual(all);

    // With derived rows for the rural district, its rows appear, after every district.
    await replaceDerived(store, ruralRows());
    const withRural = await districtTableByDate(store);
    expect(withRural).toEqual([...all, DATE_ROWS.r14, DATE_ROWS.r25]);
    out.tableDate = withRural;

    // Valid-fraction filter 0.5 (2024 only). Harbour (0.9) and rural-ring (0.95) keep every pass.
    // old-town, 14 July: day2 (242/968 = 0.25) drops its day values and its ATI →
    // day 308.2 and SUHI 5.1 from day1 alone, ATI NULL (day1's row has none); night1 (0.8) stays.
    // 15 July: day3 (290/968 ≈ 0.30) drops → a row of NULLs. 16 July: night2 (387/968 ≈ 0.40)
    // drops → night3 alone: 295.5 and SUHI 2.75.
    const strict = await districtTableByDate(store, { year: 2024, minValidFraction: 0.5 });
    expect(strict).toEqual([
      DATE_ROWS.h14, DATE_ROWS.h15, DATE_ROWS.h16,
      { ...O, obs_date: '2024-07-14', lst_day_k: 308.2, lst_night_k: 294.25, suhi_day_k: 5.1, suhi_night_k: 3.25, ati_per_k: null, day_scenes: 1, night_scenes: 1 },
      { ...O, obs_date: '2024-07-15', lst_day_k: null, lst_night_k: null, suhi_day_k: null, suhi_night_k: null, ati_per_k: null, day_scenes: 0, night_scenes: 0 },
      { ...O, obs_date: '2024-07-16', lst_day_k: null, lst_night_k: 295.5, suhi_day_k: null, suhi_night_k: 2.75, ati_per_k: null, day_scenes: 0, night_scenes: 1 },
      DATE_ROWS.r14,
    ]);
    // The minimum is inclusive: at exactly 0.25 (= 242/968) day2 counts again, and day3
    // (≈ 0.30) and night2 (≈ 0.40) too, so 2024 reads as without a filter.
    const atQuarter = await districtTableByDate(store, { year: 2024, minValidFraction: 0.25 });
    expect(atQuarter).toEqual([DATE_ROWS.h14, DATE_ROWS.h15, DATE_ROWS.h16, DATE_ROWS.o14, DATE_ROWS.o15, DATE_ROWS.o16, DATE_ROWS.r14]);
    expect(strict.every((r) => r.obs_date.startsWith('2024-'))).toBe(true);
    out.tableDateStrict = strict;
  });

  // Expected rows of the per-year table: means over the dates that have the value
  // (each date weighs the same); counts are sums of the dates' counts; `dates` counts
  // the dates with any value.
  const YEAR_ROWS = {
    h24: {
      ...H, year: 2024, dates: 3,
      lst_day_k: near(310.4), // (311.2 + 309.6) / 2 — not the mean of the three passes, 310.667
      lst_night_k: 296.0, // (295.5 + 296.5) / 2
      suhi_day_k: near(7.2), // (7.4 + 7.0) / 2
      suhi_night_k: 4.25, // (4.5 + 4.0) / 2
      ati_per_k: near((0.85 / 14.9 + 0.85 / 16.5) / 2), // 14 July only
      day_scenes: 3, // 2 + 1 + 0
      night_scenes: 3, // 1 + 0 + 2
    },
    h25: { ...H, year: 2025, dates: 1, lst_day_k: 311.0, lst_night_k: null, suhi_day_k: 8.0, suhi_night_k: null, ati_per_k: null, day_scenes: 1, night_scenes: 0 },
    o24: {
      ...O, year: 2024, dates: 3,
      lst_day_k: near(308.2), // (308.6 + 307.8) / 2
      lst_night_k: 294.625, // (294.25 + 295.0) / 2
      suhi_day_k: near(5.0), // (4.8 + 5.2) / 2
      suhi_night_k: 2.875, // (3.25 + 2.5) / 2
      ati_per_k: near(0.8 / 14.75),
      day_scenes: 3, night_scenes: 3,
    },
    o25: { ...O, year: 2025, dates: 1, lst_day_k: 308.5, lst_night_k: null, suhi_day_k: 5.5, suhi_night_k: null, ati_per_k: null, day_scenes: 1, night_scenes: 0 },
    r24: { ...R, year: 2024, dates: 1, lst_day_k: 303.1, lst_night_k: 291.0, suhi_day_k: 0, suhi_night_k: 0, ati_per_k: null, day_scenes: 1, night_scenes: 1 },
    r25: { ...R, year: 2025, dates: 1, lst_day_k: 303.0, lst_night_k: null, suhi_day_k: 0, suhi_night_k: null, ati_per_k: null, day_scenes: 1, night_scenes: 0 },
  };

  /** A per-year row recomputed here from per-date rows: means of the non-NULL date values. */
  function yearFromDates(dates: Array<Record<string, unknown>>): Record<string, unknown> {
    const mean = (key: string) => {
      const vals = dates.map((d) => d[key]).filter((v): v is number => v !== null);
      return vals.length ? vals.reduce((a, b) => a + b, 0) / vals.length : null;
    };
    const keys = ['lst_day_k', 'lst_night_k', 'suhi_day_k', 'suhi_night_k', 'ati_per_k'];
    return {
      dates: dates.filter((d) => keys.some((k) => d[k] !== null)).length,
      ...Object.fromEntries(keys.map((k) => [k, mean(k)])),
      day_scenes: dates.reduce((a, d) => a + (d.day_scenes as number), 0),
      night_scenes: dates.reduce((a, d) => a + (d.night_scenes as number), 0),
    };
  }

  function expectYearMatchesDates(years: Array<Record<string, unknown>>, dates: Array<Record<string, unknown>>): void {
    for (const y of years) {
      const ds = dates.filter((d) => d.district_id === y.district_id && String(d.obs_date).startsWith(`${y.year}-`));
      const want = yearFromDates(ds);
      for (const [key, value] of Object.entries(want)) {
        if (typeof value === 'number' && key.endsWith('_k')) expect(y[key], `${y.district_id} ${y.year} ${key}`).toBeCloseTo(value, 9);
        else expect(y[key], `${y.district_id} ${y.year} ${key}`).toBe(value);
      }
    }
  }

  it('answers the district table per year as means over dates', async () => {
    const years = await districtTableByYear(store);
    expect(years).toEqual([YEAR_ROWS.h24, YEAR_ROWS.h25, YEAR_ROWS.o24, YEAR_ROWS.o25, YEAR_ROWS.r24, YEAR_ROWS.r25]);
    const only2025 = await districtTableByYear(store, { year: 2025 });
    expect(only2025.map((r) => [r.district_id, r.year, r.lst_day_k, r.dates])).toEqual([
      ['harbour', 2025, 311.0, 1],
      ['old-town', 2025, 308.5, 1],
      ['rural-ring', 2025, 303.0, 1],
    ]);
    // Filter 0.5: old-town's dates from the per-date check above — 14 July (308.2 / 294.25,
    // SUHI 5.1 / 3.25), 15 July (nothing left, so not a date with a value), 16 July (295.5, 2.75).
    const strict = await districtTableByYear(store, { year: 2024, minValidFraction: 0.5 });
    expect(strict).toEqual([
      YEAR_ROWS.h24,
      {
        ...O, year: 2024,
        dates: 2, // 14 and 16 July
        lst_day_k: 308.2,
        lst_night_k: 294.875, // (294.25 + 295.5) / 2
        suhi_day_k: 5.1,
        suhi_night_k: 3.0, // (3.25 + 2.75) / 2
        ati_per_k: null,
        day_scenes: 1, // 1 + 0 + 0
        night_scenes: 2, // 1 + 0 + 1
      },
      YEAR_ROWS.r24,
    ]);
    // The year query's "daily" part is the date query: recompute from it, with and without the filter.
    expectYearMatchesDates(years, await districtTableByDate(store));
    expectYearMatchesDates(strict, await districtTableByDate(store, { year: 2024, minValidFraction: 0.5 }));
    out.tableYear = years;
    out.tableYearStrict = strict;
  });

  it('orders both tables by role, then district id in byte order, then date or year', async () => {
    // 'Quay' sorts first in byte order ('Q' 0x51 < 'h' 0x68) but between 'old-town' and
    // 'rural-ring' under a linguistic collation (case is a third-level difference, Unicode
    // Technical Standard #10); the server database is created with ICU 'en' to tell them apart.
    // 'vineyard' sorts after 'rural-ring' by id, so it coming first shows that role sorts first.
    await upsertDistricts(store, [
      { id: 'vineyard', name: 'Vineyard', geometry: square(10.02, 45.0, 0.01), areaSquareMetres: 871_000 },
      { id: 'Quay', name: 'Quay', geometry: square(10.03, 45.0, 0.01), areaSquareMetres: 870_500 },
    ]);
    await replaceDerived(store, [
      derivedRow('vineyard', '2024-07-15', 'day3', null, { tDayKelvin: 305.4, suhiDayKelvin: 2.8 /* 305.4 - 302.6 */, status: 'no night pair' }),
      derivedRow('Quay', '2024-07-14', 'day1', 'night1', { tDayKelvin: 309.9, tNightKelvin: 296.75, suhiDayKelvin: 6.8 /* 309.9 - 303.1 */, suhiNightKelvin: 5.75 /* 296.75 - 291.0 */, status: 'no albedo' }),
    ]);
    const dates = await districtTableByDate(store);
    expect(dates.map((r) => [r.role, r.district_id, r.obs_date])).toEqual([
      ['district', 'Quay', '2024-07-14'],
      ['district', 'harbour', '2024-07-14'],
      ['district', 'harbour', '2024-07-15'],
      ['district', 'harbour', '2024-07-16'],
      ['district', 'harbour', '2025-07-20'],
      ['district', 'old-town', '2024-07-14'],
      ['district', 'old-town', '2024-07-15'],
      ['district', 'old-town', '2024-07-16'],
      ['district', 'old-town', '2025-07-20'],
      ['district', 'vineyard', '2024-07-15'],
      ['rural', 'rural-ring', '2024-07-14'],
      ['rural', 'rural-ring', '2025-07-20'],
    ]);
    expect(dates[0]).toEqual({
      district_id: 'Quay', district_name: 'Quay', role: 'district', obs_date: '2024-07-14',
      lst_day_k: 309.9, lst_night_k: 296.75, suhi_day_k: 6.8, suhi_night_k: 5.75, ati_per_k: null, day_scenes: 1, night_scenes: 1,
    });
    const years = await districtTableByYear(store);
    expect(years.map((r) => [r.role, r.district_id, r.year])).toEqual([
      ['district', 'Quay', 2024],
      ['district', 'harbour', 2024],
      ['district', 'harbour', 2025],
      ['district', 'old-town', 2024],
      ['district', 'old-town', 2025],
      ['district', 'vineyard', 2024],
      ['rural', 'rural-ring', 2024],
      ['rural', 'rural-ring', 2025],
    ]);
    out.tableOrder = dates;
    out.tableYearOrder = years;
  });

  it('stores a processed scene with its statistics in one statement, as registering then replacing does', async () => {
    const twin = lstScene('x-2024-07-17-twin', '2024-07-17T10:30:00Z', 'day');
    const extra = lstScene('x-2024-07-17', '2024-07-17T10:30:00Z', 'day');
    const rows = [zonal('harbour', 311.5, 0.9), zonal('old-town', 308.75, 0.8), zonal('rural-ring', 303.25, 0.95)];
    // the long way: register, then replace the statistics (which marks the scene processed)
    const twinId = await registerScene(store, { ...twin, runId });
    await replaceZonalStats(store, twinId, rows, { runId });
    // an earlier failure of the same path, recorded before its bytes could be hashed, gives way
    await markSceneFailed(store, { path: extra.path, error: 'permission denied' });
    expect(await storedSceneState(store, extra.contentHash, 'centre')).toBeNull();
    expect([...await knownContentHashes(store, [extra.contentHash, SCENES.day1.contentHash])]).toEqual([SCENES.day1.contentHash]);

    const id = await storeProcessedScene(store, { ...extra, runId }, rows, { runId, warnings: ['metadata block unreadable'] });
    const strip = (z: ZonalStatsInput & { sceneId: number }) => ({ ...z, sceneId: 'ID' });
    expect((await zonalStatsForScenes(store, [id])).map(strip)).toEqual((await zonalStatsForScenes(store, [twinId])).map(strip));
    const { status, error, runId: sceneRun, processedAt, kind, acquiredAt } = (await findSceneByHash(store, extra.contentHash))!;
    expect({ status, error, sceneRun, kind, acquiredAt }).toEqual({ status: 'processed', error: null, sceneRun: runId, kind: 'lst', acquiredAt: '2024-07-17T10:30:00.000Z' });
    expect(processedAt).toMatch(/Z$/);
    const warningsOf = async (sceneId: number) => (await store.query<{ w: string[] }>('SELECT warnings AS w FROM scenes WHERE id = $1', [sceneId]))[0].w;
    expect(await warningsOf(id)).toEqual(['metadata block unreadable']);
    expect((await failures(store)).map((f) => f.path)).not.toContain(extra.path);
    expect(await knownContentHashes(store, [extra.contentHash])).toEqual(new Set([extra.contentHash]));

    // Stored again from another path with one district fewer: same scene, its rows replaced, no warnings left.
    const moved = { ...extra, path: '/archive/velmora/moved/x-2024-07-17.tif', runId };
    expect(await storeProcessedScene(store, moved, rows.slice(0, 2), { runId })).toBe(id);
    expect((await zonalStatsForScenes(store, [id])).map((z) => [z.districtId, z.meanKelvin])).toEqual([['harbour', 311.5], ['old-town', 308.75]]);
    expect((await findSceneByHash(store, extra.contentHash))!.path).toBe(moved.path);
    expect(await warningsOf(id)).toEqual([]);
    // what a scene job reads before computing: the districts with current statistics under the rule
    expect(await storedSceneState(store, extra.contentHash, 'centre')).toEqual({ id, status: 'processed', districts: ['harbour', 'old-town'], lstInputsFingerprint: null });
    expect((await storedSceneState(store, extra.contentHash, 'fraction'))!.districts).toEqual([]);

    // A row the database refuses (unknown district) changes nothing: not the path, not the rows.
    const before = await zonalStatsForScenes(store, [id]);
    await expect(storeProcessedScene(store, { ...moved, path: '/elsewhere.tif' }, [zonal('harbour', 1, 1), zonal('nowhere', 2, 1)], { runId }))
      .rejects.toBeInstanceOf(ServiceError);
    expect(await zonalStatsForScenes(store, [id])).toEqual(before);
    expect((await findSceneByHash(store, extra.contentHash))!.path).toBe(moved.path);
    // A NaN never reaches the database.
    await expect(storeProcessedScene(store, moved, [zonal('harbour', Number.NaN, 1)], { runId })).rejects.toThrow(/meanKelvin.*finite/);

    // leave the store as the tests before this one left it
    await store.query('DELETE FROM scenes WHERE id = ANY($1::bigint[])', [[id, twinId]]);
  });

  it('stores a scene with more rows than one statement takes all at once or not at all', async () => {
    const big = lstScene('x-2024-07-18-big', '2024-07-18T10:30:00Z', 'day');
    // Rows for districts the store does not have: the foreign key refuses the write (PostgreSQL
    // manual, "Foreign Keys"); the registration before it, in the same transaction, is rolled back with it.
    const rows = Array.from({ length: BATCH_ROWS + 1 }, (_, i) => zonal(`unknown-${i}`, 300, 1));
    const refused = await storeProcessedScene(store, big, rows, { warnings: ['w'] }).catch((e: unknown) => e);
    expect(refused).toBeInstanceOf(ServiceError);
    expect((refused as Error).message).toMatch(/zonal_stats_district_id_fkey/);
    expect(await findSceneByHash(store, big.contentHash)).toBeNull();
  });

  it('reads named queries from sql/queries and rejects unknown names', () => {
    // Both tables read the one per-date definition (district_daily() of migration 003), through
    // its kept summaries by day and by month (migration 006), district by district (migration 008),
    // never the tables underneath.
    expect(namedQuery('district_table_date')).toMatch(/FROM district_days\(d\.id, \$2::double precision, \$1::integer\)/);
    expect(namedQuery('district_table_year')).toMatch(/FROM district_months\(d\.id, \$2::double precision, \$1::integer\)/);
    for (const name of ['district_table_date', 'district_table_year', 'district_series']) {
      expect(namedQuery(name)).not.toMatch(/FROM zonal_stats|FROM derived_metrics|_summary/);
    }
    expect(() => namedQuery('../etc/passwd')).toThrow(/lower-case/);
    expect(() => namedQuery('no_such_query')).toThrow(/no named query "no_such_query"/);
  });
}

describe('store on PGlite (in memory)', () => {
  let shared: Store | undefined;
  defineSuite(
    'pglite',
    async () => (shared = await openStore({ memory: true })),
    // An in-memory engine cannot be reopened; migrate() on the same instance checks "applies none".
    async () => shared as Store,
  );

  it('keeps the per-scene writes prepared in the engine, also across a write that failed', async () => {
    const store = await openStore({ memory: true });
    try {
      await upsertDistricts(store, [DISTRICTS[0]]);
      const scene = lstScene('prepared-embedded', '2024-08-01T10:30:00Z', 'day');
      const id = await storeProcessedScene(store, scene, [zonal('harbour', 311.5, 0.9)]);
      // The same text again: the same statement, executed with new values (a null among them).
      expect(await storeProcessedScene(store, scene, [{ ...zonal('harbour', 312.25, 0.9), p10Kelvin: null }])).toBe(id);
      const stored = async () => (await zonalStatsForScenes(store, [id])).map((z) => [z.districtId, z.meanKelvin, z.p10Kelvin]);
      expect(await stored()).toEqual([['harbour', 312.25, null]]);
      // An unknown district: the foreign key refuses the execution; the statement stays prepared
      // and the engine takes the next statement, prepared or not.
      await expect(storeProcessedScene(store, scene, [zonal('nowhere', 1, 1)])).rejects.toThrow(/zonal_stats_district_id_fkey/);
      expect(await storeProcessedScene(store, scene, [zonal('harbour', 313, 0.9)])).toBe(id);
      expect(typeof id).toBe('number');
      // Values go in and rows come out as the unprepared path takes and gives them.
      const sql = 'SELECT $1::bigint AS id, $2::float8[] AS xs, $3::timestamptz AS t, $4::jsonb AS j, $5::text AS none';
      const params = [7, [1.5, null], '2024-08-01T10:30:00Z', JSON.stringify(['x']), null];
      expect(await store.query(sql, params, { prepared: true })).toEqual(await store.query(sql, params));
      // pg_prepared_statements lists the session's prepared statements (PostgreSQL manual, "pg_prepared_statements").
      const prepared = await store.query<{ head: string }>(
        `SELECT left(regexp_replace(statement, '\\s+', ' ', 'g'), 20) AS head FROM pg_prepared_statements ORDER BY 1`,
      );
      expect(prepared.map((p) => p.head)).toEqual(['SELECT $1::bigint AS', 'WITH stale AS (DELET']);
      expect(await stored()).toEqual([['harbour', 313, 311.5]]);
    } finally {
      await store.close();
    }
  });
});

describe.skipIf(!pgAvailable)('store on the PostgreSQL server', () => {
  const dbName = `heatledger_test_${crypto.randomBytes(6).toString('hex')}`;
  const adminUrl = (() => {
    const u = new URL(testDatabaseUrl);
    u.pathname = '/postgres';
    return u.toString();
  })();
  const url = (() => {
    const u = new URL(testDatabaseUrl);
    u.pathname = `/${dbName}`;
    return u.toString();
  })();

  async function admin(sql: string): Promise<void> {
    const client = new pg.Client({ connectionString: adminUrl });
    await client.connect();
    try {
      await client.query(sql);
    } finally {
      await client.end();
    }
  }

  beforeAll(async () => {
    // A linguistic collation (ICU 'en'), as a server created with a national locale
    // would have: the queries' COLLATE "C" must still give byte order.
    await admin(`CREATE DATABASE ${dbName} TEMPLATE template0 LOCALE_PROVIDER icu ICU_LOCALE 'en' LOCALE 'C.UTF-8'`);
  });
  afterAll(async () => {
    await admin(`DROP DATABASE IF EXISTS ${dbName} WITH (FORCE)`);
  });

  it('migrates exactly once when two processes open a fresh database at the same moment', async () => {
    const { openPgStore } = await import('../../workers/store/pg.js');
    const [a, b] = await Promise.all([openPgStore(url), openPgStore(url)]);
    try {
      const results = await Promise.all([migrate(a), migrate(b)]);
      // One process applies both migrations under the advisory lock; the other finds none left.
      expect(results.map((r) => r.applied).sort((x, y) => x.length - y.length)).toEqual([[], ['001_init', '002_night_only_rows', '003_district_daily', '004_run_states', '005_thermal_scenes', '006_district_summaries', '007_failure_kinds', '008_district_reads', '009_scene_listing_order']]);
    } finally {
      await Promise.all([a.close(), b.close()]);
    }
  });

  it('says so plainly when the database does not exist', async () => {
    const u = new URL(testDatabaseUrl);
    u.pathname = `/${dbName}_missing`;
    const err = await openStore({ databaseUrl: u.toString() }).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(ServiceError);
    // SQLSTATE 3D000 invalid_catalog_name (PostgreSQL manual, Appendix A).
    expect((err as Error).message).toMatch(new RegExp(`refused the connection: database "${dbName}_missing" does not exist \\(SQLSTATE 3D000\\)`));
  });

  // Nested, so that its beforeAll (which opens and so migrates) runs after the race above.
  describe('suite', () => {
    defineSuite('pg', () => openStore({ databaseUrl: url }), () => openStore({ databaseUrl: url }));
  });

  it('opens a store whose schema is up to date on one connection (the migrations check takes no second one)', async () => {
    const store = await openStore({ databaseUrl: url });
    try {
      // Backends of the test database other than the one asking (pg_stat_activity, PostgreSQL manual):
      // the pool keeps the connection the open used, idle, and has opened no other.
      const sessions = await store.query<{ n: number }>(
        'SELECT count(*)::int AS n FROM pg_stat_activity WHERE datname = current_database() AND pid <> pg_backend_pid()',
      );
      expect(sessions[0].n).toBe(0);
      const [{ n }] = await store.query<{ n: number }>('SELECT count(*)::int AS n FROM schema_migrations');
      expect(n).toBe(9);
    } finally {
      await store.close();
    }
  });

  it('keeps the per-scene writes prepared on a connection, also across a write that failed', async () => {
    const store = await openStore({ databaseUrl: url });
    try {
      // One transaction: one connection, whose prepared statements the
      // pg_prepared_statements view lists (PostgreSQL manual, "pg_prepared_statements").
      const stored = await store.transaction(async (tx) => {
        await upsertDistricts(tx, [DISTRICTS[0]]);
        const { id } = await registerSceneReporting(tx, lstScene('prepared-1', '2024-08-01T10:30:00Z', 'day'));
        expect((await registerSceneReporting(tx, lstScene('prepared-1', '2024-08-01T10:30:00Z', 'day'))).id).toBe(id);
        expect(await replaceZonalStats(tx, id, [zonal('harbour', 311.5, 0.9)])).toBe(1);
        // An unknown district: the foreign key refuses the prepared statement's execution.
        await tx.exec('SAVEPOINT before_unknown');
        await expect(replaceZonalStats(tx, id, [zonal('nowhere', 1, 1)])).rejects.toThrow(/zonal_stats_district_id_fkey/);
        await tx.exec('ROLLBACK TO SAVEPOINT before_unknown');
        expect(await replaceZonalStats(tx, id, [zonal('harbour', 312.25, 0.9)])).toBe(1);
        const prepared = await tx.query<{ head: string }>(
          `SELECT left(regexp_replace(statement, '\\s+', ' ', 'g'), 20) AS head FROM pg_prepared_statements ORDER BY 1`,
        );
        expect(prepared.map((p) => p.head)).toEqual(['WITH prev AS (SELECT', 'WITH up AS ( INSERT ']);
        return zonalStatsForScenes(tx, [id]);
      });
      expect(stored.map((z) => [z.districtId, z.meanKelvin])).toEqual([['harbour', 312.25]]);
    } finally {
      await store.close();
    }
  });
});

describe.skipIf(!pgAvailable)('both stores return the same values', () => {
  for (const key of [
    'types', 'districts', 'run', 'scene', 'failures', 'zonal', 'derived',
    'tableDate', 'tableDateStrict', 'tableYear', 'tableYearStrict', 'tableOrder', 'tableYearOrder',
  ]) {
    it(`for ${key}`, () => {
      expect(captured.pglite[key]).toBeDefined();
      expect(captured.pg[key]).toEqual(captured.pglite[key]);
    });
  }
});

describe('an unreachable server', () => {
  it('gives a ServiceError that says where and why', async () => {
    const err = await openStore({ databaseUrl: 'postgres://postgres@127.0.0.1:1/heatledger' }).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(ServiceError);
    expect((err as Error).message).toBe('cannot reach PostgreSQL at 127.0.0.1:1: ECONNREFUSED');
  });
});
