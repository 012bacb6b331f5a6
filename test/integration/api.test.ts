import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { FastifyInstance } from 'fastify';
import { buildApp, CAUTION } from '../../api/app.js';
import { openStore, type Store } from '../../workers/store/store.js';
import { registerScene, replaceDerived, replaceZonalStats, upsertDistricts } from '../../workers/store/repo.js';

const sq = (x: number, y: number) => [[[[x, y], [x + 0.01, y], [x + 0.01, y + 0.01], [x, y + 0.01], [x, y]]]];
let store: Store;
let app: FastifyInstance;

beforeAll(async () => {
  store = await openStore({ memory: true });
  await upsertDistricts(store, [
    { id: 'core', name: 'Core', geometry: sq(-35.6, 44.2), areaSquareMetres: 1e6 },
    { id: 'park', name: 'Park', geometry: sq(-35.58, 44.2), areaSquareMetres: 1e6 },
    { id: 'rural', name: 'rural reference', role: 'rural', geometry: sq(-35.7, 44.1), areaSquareMetres: 5e7 },
  ]);
  const base = { path: '/x.tif', kind: 'lst' as const, epsg: 32625, crsDefinition: null, width: 10, height: 10, pixelSizeMetres: 100, scale: 1, offset: 0, nodata: null };
  const day = await registerScene(store, { ...base, contentHash: 'a'.repeat(64), acquiredAt: '2024-07-14T15:52:00Z', pass: 'day' });
  const night = await registerScene(store, { ...base, contentHash: 'b'.repeat(64), acquiredAt: '2024-07-15T03:52:00Z', pass: 'night' });
  const z = (districtId: string, mean: number) => ({ districtId, pixels: 10, valid: 10, validFraction: 1, meanKelvin: mean, stdKelvin: 1, minKelvin: mean - 1, maxKelvin: mean + 1, medianKelvin: mean, p10Kelvin: mean - 1, p90Kelvin: mean + 1, nodataCount: 0, maskedCount: 0, implausibleCount: 0, coverageRule: 'centre' });
  await replaceZonalStats(store, day, [z('core', 315), z('park', 304), z('rural', 305)]);
  await replaceZonalStats(store, night, [z('core', 293), z('park', 288), z('rural', 289)]);
  const d = (districtId: string, tDay: number, tNight: number, albedo: number) => ({
    obsDate: '2024-07-14', districtId, daySceneId: day, nightSceneId: night, albedoSceneId: null, albedoSource: 'property' as const,
    tDayKelvin: tDay, tNightKelvin: tNight, albedo, atiPerKelvin: (1 - albedo) / (tDay - tNight), // Price 1977
    suhiDayKelvin: tDay - 305, suhiNightKelvin: tNight - 289, status: 'ok',
  });
  await replaceDerived(store, [d('core', 315, 293, 0.12), d('park', 304, 288, 0.18)]);
  app = buildApp(store);
});
afterAll(async () => {
  await app?.close();
  await store?.close();
});

describe('HTTP API', () => {
  it('answers health with the store kind', async () => {
    const r = await app.inject({ method: 'GET', url: '/api/health' });
    expect(r.statusCode).toBe(200);
    expect(r.json()).toEqual({ ok: true, store: 'pglite' });
  });
  it('serves the district table as JSON with units and the caution', async () => {
    const r = await app.inject({ method: 'GET', url: '/api/table?level=date' });
    expect(r.statusCode).toBe(200);
    const body = r.json();
    expect(body.units).toEqual({ lst: 'K', suhi: 'K', ati: '1/K' });
    expect(body.caution).toBe(CAUTION);
    const core = body.rows.find((x: { district: string }) => x.district === 'core');
    // hand arithmetic: SUHI day 315 - 305 = 10 K, night 293 - 289 = 4 K; ATI (1 - 0.12) / 22
    expect(core).toMatchObject({ date: '2024-07-14', lst_day: 315, lst_night: 293, suhi_day: 10, suhi_night: 4, day_scenes: 1, night_scenes: 1 });
    expect(core.ati).toBeCloseTo(0.88 / 22, 12);
  });
  it('serves CSV with the table header', async () => {
    const r = await app.inject({ method: 'GET', url: '/api/table?level=year&format=csv' });
    expect(r.statusCode).toBe(200);
    expect(r.headers['content-type']).toMatch(/text\/csv/);
    const lines = r.body.trim().split('\n');
    expect(lines[0]).toBe('district,name,year,dates,lst_day,lst_night,suhi_day,suhi_night,ati,day_scenes,night_scenes');
    expect(lines[1]).toMatch(/^core,Core,2024,1,315,293,10,4,/);
  });
  it('refuses a bad query with 400 and a message, not a stack trace', async () => {
    for (const url of ['/api/table?level=week', '/api/table?year=abc', '/api/table?unknown=1']) {
      const r = await app.inject({ method: 'GET', url });
      expect(r.statusCode).toBe(400);
      expect(r.json().error).toMatch(/querystring/);
      expect(r.body).not.toMatch(/\bat \S+:\d+/);
    }
  });
  it('renders the page with the latest year, the districts and the caution', async () => {
    const r = await app.inject({ method: 'GET', url: '/' });
    expect(r.statusCode).toBe(200);
    expect(r.body).toContain('District surface heat, 2024');
    expect(r.body).toContain('<td>Core</td>');
    expect(r.body).toContain('not air temperature');
    expect(r.body).not.toContain('rural reference</td>');
  });
  it('lists districts and status', async () => {
    const d = await app.inject({ method: 'GET', url: '/api/districts' });
    expect(d.json().map((x: { id: string }) => x.id)).toEqual(['core', 'park', 'rural']);
    const s = await app.inject({ method: 'GET', url: '/api/status' });
    expect(s.json().scenes).toMatchObject({ processed: 2, failed: 0, total: 2 });
  });
});
