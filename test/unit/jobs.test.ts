import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { writeGeoTiff } from '../../workers/core/raster/write.js';
import { ingest } from '../../workers/jobs/ingest.js';
import { hashFile } from '../../workers/core/hash.js';
import { ruralRing, parseDistricts } from '../../workers/core/districts/index.js';
import { buildFlow } from '../../workers/run/flow.js';
import { subtractWater } from '../../workers/run/pipeline.js';
import type { JobContext } from '../../workers/queue/types.js';
import type { PipelineRepo } from '../../workers/store/pipeline-repo.js';

let dir: string;
beforeAll(async () => { dir = await mkdtemp(join(tmpdir(), 'heatledger-jobs-')); });
afterAll(async () => { await rm(dir, { recursive: true, force: true }); });

/** A repository that records what ingest asks of it. */
function fakeRepo() {
  const calls: { method: string; args: unknown[] }[] = [];
  const repo = {
    findSceneByHash: async (...args: unknown[]) => { calls.push({ method: 'findSceneByHash', args }); return null; },
    registerSceneReporting: async (...args: unknown[]) => { calls.push({ method: 'registerScene', args }); return { id: 7, previousStatus: null }; },
    markSceneFailed: async (...args: unknown[]) => { calls.push({ method: 'markSceneFailed', args }); return 8; },
  } as unknown as PipelineRepo;
  const ctx: JobContext<PipelineRepo> = { jobId: 'j', name: 'ingest', childrenValues: {}, failedChildren: [], repo, log: () => undefined, attempt: 1 };
  return { calls, ctx };
}

async function scene(name: string, metadata: Record<string, string>, dateTime?: string): Promise<string> {
  const path = join(dir, name);
  const data = new Uint16Array(32 * 32).fill(44000);
  // UTM 25N over open ocean, 100 m pixels (invented place)
  await writeGeoTiff(path, {
    width: 32, height: 32, data, epsg: 32625,
    transform: { a: 100, b: 0, c: 300000, d: 0, e: -100, f: 4900000 },
    nodata: 0, scale: 0.00341802, offset: 149, metadata, dateTime,
    layout: { tiled: true, tileWidth: 16, tileHeight: 16 }, compression: 'deflate', predictor: 2,
  });
  return path;
}

describe('ingest processor', () => {
  it('registers a scene with its UTC time, day pass and timing rating from the sun at the scene centre', async () => {
    const path = await scene('day.tif', { ACQUISITION_TIME: '2024-07-14T15:52:00Z', KIND: 'lst' });
    const { calls, ctx } = fakeRepo();
    const r = await ingest({ path, contentHash: await hashFile(path), runId: 1 }, ctx);
    expect(r).toMatchObject({ sceneId: 7, kind: 'lst', pass: 'day', acquiredAt: '2024-07-14T15:52:00Z', alreadyStored: false });
    const reg = calls.find((c) => c.method === 'registerScene')!.args[0] as Record<string, unknown>;
    // 13:30 local solar time at about 35.6 W in July: near solar noon (SPA; derived)
    expect(reg).toMatchObject({ kind: 'lst', pass: 'day', timingRating: 'midday', epsg: 32625, width: 32, height: 32, scale: 0.00341802, offset: 149, nodata: 0, pixelSizeMetres: 100 });
  });
  it('takes the TIFF DateTime tag as UTC when there is no metadata item', async () => {
    const path = await scene('tagonly.tif', {}, '2024:07:15 03:52:00');
    const { ctx } = fakeRepo();
    const r = await ingest({ path, contentHash: await hashFile(path), runId: 1 }, ctx);
    expect(r).toMatchObject({ acquiredAt: '2024-07-15T03:52:00Z', pass: 'night' });
  });
  it('refuses an LST scene with no time anywhere, records it as failed with the reason, names the file', async () => {
    const path = await scene('notime.tif', {});
    const { calls, ctx } = fakeRepo();
    const hash = await hashFile(path);
    const err = await ingest({ path, contentHash: hash, runId: 3 }, ctx).catch((e: unknown) => e as Error);
    expect((err as Error).name).toBe('InputError');
    expect((err as Error).message).toMatch(/notime\.tif: has no acquisition time.*--manifest/);
    const failed = calls.find((c) => c.method === 'markSceneFailed')!.args[0] as Record<string, unknown>;
    expect(failed).toMatchObject({ contentHash: hash, path, runId: 3 });
    expect(calls.some((c) => c.method === 'registerScene')).toBe(false);
  });
  it('lets a manifest give the time and the kind', async () => {
    const path = await scene('manifest.tif', {});
    const { ctx } = fakeRepo();
    const r = await ingest({ path, contentHash: await hashFile(path), runId: 1, manifest: { path, kind: 'lst', acquiredAt: '2024-07-15T03:52:00Z' } }, ctx);
    expect(r).toMatchObject({ pass: 'night', acquiredAt: '2024-07-15T03:52:00Z' });
  });
  it('records a truncated file as failed', async () => {
    const good = await scene('whole.tif', { ACQUISITION_TIME: '2024-07-14T15:52:00Z' });
    const { readFile } = await import('node:fs/promises');
    const bytes = await readFile(good);
    const path = join(dir, 'cut.tif');
    await writeFile(path, bytes.subarray(0, Math.floor(bytes.length / 2)));
    const { calls, ctx } = fakeRepo();
    const err = await ingest({ path, contentHash: await hashFile(path), runId: 1 }, ctx).catch((e: unknown) => e as Error);
    expect((err as Error).name).toBe('InputError');
    expect((err as Error).message).toContain('cut.tif');
    expect(calls.map((c) => c.method)).toContain('markSceneFailed');
  });
});

describe('rural ring without water', () => {
  it('cuts the water polygons out of the ring (area drops by the water area inside the ring)', async () => {
    // A 0.1 x 0.1 degree city at the equator and a water square 0.05 x 0.05 degrees lying inside the 2-10 km ring.
    const city = parseDistricts(JSON.stringify({ type: 'FeatureCollection', features: [{ type: 'Feature', properties: { id: 'c' },
      geometry: { type: 'Polygon', coordinates: [[[0, 0], [0.1, 0], [0.1, 0.1], [0, 0.1], [0, 0]]] } }] }), 'city.geojson');
    const ring = ruralRing(city, 2000, 10000);
    const waterPath = join(dir, 'water.geojson');
    // x from 0.13 to 0.18 degrees: 3.3 km to 8.9 km east of the city, inside the ring
    await writeFile(waterPath, JSON.stringify({ type: 'FeatureCollection', features: [{ type: 'Feature', properties: {},
      geometry: { type: 'Polygon', coordinates: [[[0.13, 0.02], [0.18, 0.02], [0.18, 0.07], [0.13, 0.07], [0.13, 0.02]]] } }] }));
    const water = parseDistricts(await (await import('node:fs/promises')).readFile(waterPath, 'utf8').then((t) => JSON.parse(t)).then((j) => {
      j.features[0].properties.id = 'w';
      return JSON.stringify(j);
    }), 'water.geojson');
    const cut = await subtractWater(ring, waterPath);
    // ellipsoidal areas of the pieces (districts module); the difference must be the water square's area
    expect(ring.areaSquareMetres - cut.areaSquareMetres).toBeCloseTo(water[0].areaSquareMetres, -3);
    expect(cut.id).toBe('rural');
  });
});

describe('job tree', () => {
  const files = [
    { path: '/a/day.tif', contentHash: 'a'.repeat(64), manifest: { path: '/a/day.tif', qa: '/a/day_qa.tif' } },
    { path: '/a/night.tif', contentHash: 'b'.repeat(64) },
  ];
  const args = {
    identity: 'db1', runId: 4, files, targetIds: ['d1', 'rural'], params: { coverageRule: 'centre' },
    zonal: { coverage: 'centre' as const, plausibleKelvin: [170, 360] as [number, number] },
    derive: { districtIds: ['d1'], ruralId: 'rural', options: { pairingWindowHours: 18, albedoWindowDays: 32, minValidFraction: 0.5, minDifferenceKelvin: 0.5 }, albedoProperties: {} },
    qaMaskBits: 24,
  };
  it('is derive <- zonal per scene <- ingest, with the QA raster and bits on the scene that has one', () => {
    const root = buildFlow(args);
    expect(root.name).toBe('derive');
    expect(root.children!.map((c) => c.name)).toEqual(['zonal', 'zonal']);
    expect(root.children!.map((c) => c.children![0].name)).toEqual(['ingest', 'ingest']);
    expect((root.children![0].data as { qa?: unknown }).qa).toEqual({ path: '/a/day_qa.tif', maskBits: 24 });
    expect((root.children![1].data as { qa?: unknown }).qa).toBeUndefined();
  });
  it('derives ids from content and parameters: same inputs give the same ids, another database or parameter other ids', () => {
    const a = buildFlow(args);
    expect(buildFlow(args).id).toBe(a.id);
    expect(buildFlow({ ...args, runId: 9 }).id).toBe(a.id); // the run number is not content
    expect(buildFlow({ ...args, identity: 'db2' }).id).not.toBe(a.id);
    expect(buildFlow({ ...args, params: { coverageRule: 'fraction' } }).children![0].id).not.toBe(a.children![0].id);
    expect(buildFlow({ ...args, params: { coverageRule: 'fraction' } }).children![0].children![0].id).toBe(a.children![0].children![0].id);
  });
});

describe('progress in scenes', () => {
  it('counts a scene once: done when its zonal job is, failed when its ingest or zonal job failed', async () => {
    const { sceneProgress } = await import('../../workers/commands/ingest.js');
    const { NamedIdSet, progressOf, totalsByName } = await import('../../workers/queue/progress.js');
    const names: Record<string, string> = { i1: 'ingest', i2: 'ingest', i3: 'ingest', z1: 'zonal', z2: 'zonal', z3: 'zonal', d: 'derive' };
    const done = new NamedIdSet((id) => names[id]);
    const failed = new NamedIdSet((id) => names[id]);
    const totals = totalsByName(Object.values(names));
    done.add('i1'); done.add('z1'); // scene 1 processed
    failed.add('i2'); done.add('z2'); // scene 2: ingest failed, its zonal job completed as a skip
    done.add('i3'); // scene 3 still running
    done.add('i3'); // adding twice counts once
    const p = progressOf(done, failed, totals, 1);
    expect(p).toMatchObject({ done: 4, failed: 1, total: 7, running: 1 });
    expect(p.byName).toEqual({ ingest: { done: 2, failed: 1, total: 3 }, zonal: { done: 2, failed: 0, total: 3 }, derive: { done: 0, failed: 0, total: 1 } });
    expect(sceneProgress(p)).toEqual({ done: 1, failed: 1, total: 3 });
    failed.delete('i2');
    expect(progressOf(done, failed, totals, 0).byName!.ingest.failed).toBe(0);
  });
});

describe('zonal processor in a long-lived worker', () => {
  it('uses the districts of the run at hand, not geometry cached from an earlier run', async () => {
    const { zonal } = await import('../../workers/jobs/zonal.js');
    const { crsDefinitionForEpsg, makeTransformer } = await import('../../workers/core/crs/index.js');
    const path = join(dir, 'halves.tif');
    // left half DN 40000, right half DN 50000 (x 0.00341802 + 149 K: 285.72 K and 319.90 K)
    const data = new Uint16Array(32 * 32).map((_, i) => (i % 32 < 16 ? 40000 : 50000));
    await writeGeoTiff(path, {
      width: 32, height: 32, data, epsg: 32625, transform: { a: 100, b: 0, c: 300000, d: 0, e: -100, f: 4900000 },
      nodata: 0, scale: 0.00341802, offset: 149, layout: { tiled: true, tileWidth: 16, tileHeight: 16 }, compression: 'deflate', predictor: 2,
    });
    const toLonLat = makeTransformer(crsDefinitionForEpsg(32625), crsDefinitionForEpsg(4326));
    const box = (x0: number, x1: number) => ({ type: 'Polygon', coordinates: [[[x0, 4897000], [x1, 4897000], [x1, 4899500], [x0, 4899500], [x0, 4897000]].map(([x, y]) => toLonLat(x, y))] });
    let geometry = box(300200, 301400); // inside the left half
    const written: { rows: { districtId: string; meanKelvin: number | null }[] }[] = [];
    const repo = {
      listDistricts: async () => [{ id: 'd', geometry }],
      replaceZonalStats: async (_id: number, rows: { districtId: string; meanKelvin: number | null }[]) => { written.push({ rows }); return rows.length; },
      markSceneFailed: async () => 0,
    } as unknown as PipelineRepo;
    const ctx = (id: string): JobContext<PipelineRepo> => ({ jobId: id, name: 'zonal', childrenValues: { i: { sceneId: 1, kind: 'lst', pass: 'day', acquiredAt: null, alreadyStored: false } }, failedChildren: [], repo, log: () => undefined, attempt: 1 });
    const base = { runId: 1, contentHash: 'c'.repeat(64), path, targetIds: ['d'], coverage: 'centre' as const, plausibleKelvin: [170, 360] as [number, number] };
    await zonal({ ...base, targetsKey: 'run-1' }, ctx('z1'));
    geometry = box(301800, 303000); // the district redrawn inside the right half
    await zonal({ ...base, targetsKey: 'run-2' }, ctx('z2'));
    // DN * 0.00341802 + 149 (Landsat C2 ST scaling): 40000 -> 285.7208 K, 50000 -> 319.901 K (derived)
    expect(written[0].rows[0].meanKelvin).toBeCloseTo(40000 * 0.00341802 + 149, 9);
    expect(written[1].rows[0].meanKelvin).toBeCloseTo(50000 * 0.00341802 + 149, 9);
  });
});
