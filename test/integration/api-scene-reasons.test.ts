/**
 * /api/scenes: each district's missing_reason is about that scene alone. One day pass and
 * its night pair, derived by the derive step's own code (deriveMetrics) under a run that
 * stored a minimum valid fraction of 0.3 (not the default 0.5), so the stored derived row of
 * a district cloudy at night carries "night: valid fraction 0.26 below 0.3" for the pair —
 * a reason that belongs to the night pass, not to the clear day pass.
 *
 * The rule checked: a pass gives a district no value when the district lies outside it,
 * when none of its pixels is valid, or when the valid share is below the minimum the run
 * used (common practice, no source). Inputs are invented.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { FastifyInstance } from 'fastify';
import { buildApp } from '../../api/app.js';
import { deriveMetrics } from '../../workers/core/derive/metrics.js';
import { openStore, type Store } from '../../workers/store/store.js';
import { finishRun, registerScene, replaceDerived, replaceZonalStats, startRun, upsertDistricts } from '../../workers/store/index.js';

let store: Store;
let app: FastifyInstance;
let daySceneId: number;
let nightSceneId: number;

const CELL = 0.01;
const square = (col: number) => {
  const x = -35.6 + col * CELL, y = 44.2;
  return [[[[x, y], [x + CELL, y], [x + CELL, y + CELL], [x, y + CELL], [x, y]]]];
};

/** A zonal row of `pixels` pixels, `valid` of them valid (the rest nodata), mean `mean` K. */
function zonal(districtId: string, pixels: number, valid: number, mean: number, runId: number) {
  const has = valid > 0;
  return {
    districtId, pixels, valid, validFraction: pixels > 0 ? valid / pixels : null,
    meanKelvin: has ? mean : null, stdKelvin: has ? 1 : null, minKelvin: has ? mean - 1 : null, maxKelvin: has ? mean + 1 : null,
    medianKelvin: has ? mean : null, p10Kelvin: has ? mean - 1 : null, p90Kelvin: has ? mean + 1 : null,
    nodataCount: pixels - valid, maskedCount: 0, implausibleCount: 0, coverageRule: 'centre', runId,
  };
}

beforeAll(async () => {
  store = await openStore({ memory: true });
  await upsertDistricts(store, [
    ...['d1', 'd2', 'd3', 'd4'].map((id, i) => ({ id, name: `Ward ${id}`, geometry: square(i), areaSquareMetres: 8.9e5, properties: { albedo: 0.15 } })),
    { id: 'rural', name: 'rural reference', role: 'rural' as const, geometry: square(8), areaSquareMetres: 5e7 },
  ]);
  const minValidFraction = 0.3;
  const runId = await startRun(store, { softwareVersion: 'test', mode: 'embedded', parameters: { minValidFraction } });
  const base = { kind: 'lst' as const, epsg: 32625, crsDefinition: null, width: 10, height: 10, pixelSizeMetres: 100, scale: 1, offset: 0, nodata: null, sensor: 'invented-tir' };
  const dayAt = '2024-07-04T11:40:00.000Z', nightAt = '2024-07-04T23:10:00.000Z';
  daySceneId = await registerScene(store, { ...base, path: '/archive/2024/day-07-04.tif', contentHash: '1'.repeat(64), acquiredAt: dayAt, pass: 'day' });
  nightSceneId = await registerScene(store, { ...base, path: '/archive/2024/night-07-04.tif', contentHash: '2'.repeat(64), acquiredAt: nightAt, pass: 'night' });
  // day: every district clear except d3, which lies outside the day scene (no pixel)
  const day = [zonal('d1', 100, 100, 310, runId), zonal('d2', 100, 100, 311, runId), zonal('d3', 0, 0, 0, runId), zonal('d4', 100, 100, 312, runId), zonal('rural', 100, 100, 305, runId)];
  // night: d1 cloudy (26 of 100 valid), d2 40 of 100 (above the run's 0.3, below the default 0.5), d4 all nodata
  const night = [zonal('d1', 100, 26, 294, runId), zonal('d2', 100, 40, 295, runId), zonal('d3', 100, 100, 296, runId), zonal('d4', 100, 0, 0, runId), zonal('rural', 100, 100, 290, runId)];
  await replaceZonalStats(store, daySceneId, day, { runId });
  await replaceZonalStats(store, nightSceneId, night, { runId });
  const rows = deriveMetrics({
    scenes: [{ id: daySceneId, acquiredAt: dayAt, kind: 'lst', pass: 'day' }, { id: nightSceneId, acquiredAt: nightAt, kind: 'lst', pass: 'night' }],
    stats: [...day.map((z) => ({ sceneId: daySceneId, districtId: z.districtId, mean: z.meanKelvin, validFraction: z.validFraction })),
      ...night.map((z) => ({ sceneId: nightSceneId, districtId: z.districtId, mean: z.meanKelvin, validFraction: z.validFraction }))],
    districts: ['d1', 'd2', 'd3', 'd4', 'rural'].map((id) => ({ id, albedoProperty: 0.15 })),
    ruralId: 'rural',
    options: { minValidFraction },
  });
  await replaceDerived(store, rows.map((r) => ({ ...r, status: r.status === 'ok' ? 'ok' : 'partial', reason: r.status === 'ok' ? null : r.status, runId })));
  await finishRun(store, runId, { status: 'succeeded' });
  app = buildApp(store, { logLevel: 'silent', dataRoot: '/archive' });
}, 120_000);

afterAll(async () => {
  await app?.close();
  await store?.close();
});

type SceneJson = { id: number; pass: string; districts: { district: string; valid_fraction: number | null; missing_reason: string | null }[] };
const reasons = (s: SceneJson) => Object.fromEntries(s.districts.map((d) => [d.district, d.missing_reason]));

describe('per-district reasons in /api/scenes', () => {
  it('the stored derived rows of the pair carry the night pass\'s reasons (the situation checked)', async () => {
    const stored = await store.query<{ district_id: string; reason: string | null }>('SELECT district_id, reason FROM derived_metrics ORDER BY district_id');
    expect(stored.find((r) => r.district_id === 'd1')?.reason).toMatch(/night: valid fraction 0\.26 below 0\.3/);
  });
  it('a clear day pass shows no reason for a district that was cloudy in the night pass; only its own: outside the scene', async () => {
    const r = await app.inject({ method: 'GET', url: '/api/scenes?pass=day' });
    expect(r.statusCode).toBe(200);
    const [day] = r.json().rows as SceneJson[];
    expect(day.id).toBe(daySceneId);
    expect(reasons(day)).toEqual({
      d1: null, d2: null, d4: null, rural: null,
      d3: 'outside the scene (no pixel of the scene falls in the district)',
    });
    expect(day.districts.find((d) => d.district === 'd1')?.valid_fraction).toBe(1);
  });
  it('the night pass names its own valid fraction against the run\'s minimum (0.3), and its pixels with none valid', async () => {
    const night = (await app.inject({ method: 'GET', url: `/api/scenes/${nightSceneId}` })).json() as SceneJson;
    expect(reasons(night)).toEqual({
      d1: 'valid fraction 0.26 below 0.3',
      d2: null, // 0.40 is at or above the run's 0.3 (it would be below the default 0.5)
      d3: null, rural: null,
      d4: 'no valid pixels (nodata 100, masked 0, implausible 0 of 100)',
    });
  });
});
