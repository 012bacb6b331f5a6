/**
 * The same answers from the embedded engine (PGlite) and the PostgreSQL
 * server: both stores seeded with the same invented grid (test/support/api-store.ts),
 * every read route asked the same questions, the bodies compared whole (the
 * store kind of /api/health aside). Two night passes delivered as thermal DN are
 * among the scenes, so the thermal fields of the scene listing and of /api/status
 * are compared too. Injection strings on the server leave its
 * tables as they were, as on the embedded engine (api-security.test.ts).
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { FastifyInstance } from 'fastify';
import { buildApp } from '../../api/app.js';
import { openStore, type Store } from '../../workers/store/store.js';
import { createTempDatabase, type TempDatabase } from '../support/pipeline-harness.js';
import { serviceAvailable } from '../support/services.js';
import { addThermalPasses, seedApiStore } from '../support/api-store.js';

const serverUp = await serviceAvailable('postgres', 'api-stores');

const URLS = [
  '/api/health',
  '/api/districts', '/api/districts?year=2017&season=summer&metric=ati', '/api/districts?format=csv&metric=lst_night', '/api/districts?limit=3',
  '/api/districts/b1', '/api/districts/rural',
  '/api/districts/a3/series?metric=suhi_day&season=summer&dates=true', '/api/districts/c1/series?metric=ati&from=2016&to=2021&alpha=0.1',
  '/api/trends', '/api/trends?metric=lst_day&season=summer&serial_correction=hamed-rao', '/api/trends?metric=ati&alpha=0.01&limit=4',
  '/api/rankings?year=2021&metric=suhi_day', '/api/rankings?metric=ati&order=asc&season=summer',
  '/api/hotspots', '/api/hotspots?year=2018&metric=lst_day&fdr=true',
  '/api/scenes?limit=10', '/api/scenes?pass=day&from=2019-01-01&to=2019-12-31', '/api/scenes?state=failed', '/api/scenes?kind=thermal',
  '/api/table?level=year', '/api/table?level=date&year=2016&format=csv',
  '/api/status',
];

let tmp: string;
let lite: Store;
let server: Store | null = null;
let db: TempDatabase | null = null;
let liteApp: FastifyInstance;
let serverApp: FastifyInstance | null = null;
let thermalIds: number[] = [];

beforeAll(async () => {
  tmp = mkdtempSync(path.join(tmpdir(), 'heatledger-api-stores-'));
  lite = await openStore({ memory: true });
  await seedApiStore(lite, path.join(tmp, 'archive'));
  thermalIds = (await addThermalPasses(lite, path.join(tmp, 'archive'))).map((t) => t.id);
  liteApp = buildApp(lite, { logLevel: 'silent', readsPerMinute: 1e6 });
  if (serverUp) {
    db = await createTempDatabase('apistores');
    server = await openStore({ databaseUrl: db.url });
    await seedApiStore(server, path.join(tmp, 'archive'));
    await addThermalPasses(server, path.join(tmp, 'archive'));
    serverApp = buildApp(server, { logLevel: 'silent', readsPerMinute: 1e6 });
  }
}, 600_000);
afterAll(async () => {
  await liteApp?.close();
  await serverApp?.close();
  await lite?.close();
  await server?.close();
  await db?.drop();
  if (tmp) rmSync(tmp, { recursive: true, force: true });
});

describe.skipIf(!serverUp)('PGlite and the PostgreSQL server', () => {
  it('give the same body for every route', async () => {
    // the same seeding gives the same ids on both stores
    expect(thermalIds).toHaveLength(2);
    for (const url of [...URLS, ...thermalIds.map((id) => `/api/scenes/${id}`)]) {
      const a = await liteApp.inject({ method: 'GET', url });
      const b = await serverApp!.inject({ method: 'GET', url });
      expect(a.statusCode, url).toBe(200);
      expect(b.statusCode, url).toBe(200);
      expect(b.headers['content-type'], url).toBe(a.headers['content-type']);
      if (url === '/api/health') {
        expect({ ...b.json(), store: 'x' }).toEqual({ ...a.json(), store: 'x' });
        expect([a.json().store, b.json().store]).toEqual(['pglite', 'pg']);
      } else if (url === '/api/status') {
        // the time each failure was stored differs between the two seedings
        const drop = (x: { failures: { ingested_at?: string }[] }) => ({ ...x, failures: x.failures.map(({ ingested_at: _t, ...f }) => f) });
        expect(drop(b.json())).toEqual(drop(a.json()));
      } else {
        expect(b.body, url).toBe(a.body);
      }
    }
  });
  it('leave the server\'s tables unchanged under injection strings', async () => {
    const digest = async () => (await server!.query<{ t: string; n: number }>(
      `SELECT 'scenes' AS t, count(*) AS n FROM scenes UNION ALL SELECT 'districts', count(*) FROM districts UNION ALL SELECT 'derived', count(*) FROM derived_metrics UNION ALL SELECT 'zonal', count(*) FROM zonal_stats ORDER BY 1`,
    )).map((r) => `${r.t}:${r.n}`);
    const before = await digest();
    for (const s of ["' OR 1=1--", '1;DROP TABLE scenes', '\u2019; DROP TABLE districts; --']) {
      for (const url of [`/api/districts/${encodeURIComponent(s)}`, `/api/districts?year=${encodeURIComponent(s)}`, `/api/scenes?from=${encodeURIComponent(s)}`, `/api/trends?metric=${encodeURIComponent(s)}`, `/api/scenes?cursor=${encodeURIComponent(s)}`]) {
        const r = await serverApp!.inject({ method: 'GET', url });
        expect([400, 404], url).toContain(r.statusCode);
      }
    }
    expect(await digest()).toEqual(before);
  });
});
