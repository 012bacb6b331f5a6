import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { writeGeoTiff } from '../../workers/core/raster/write.js';
import { scene as sceneJob, type SceneData } from '../../workers/jobs/scene.js';
import { crsDefinitionForEpsg, makeTransformer } from '../../workers/core/crs/index.js';
import { hashFile } from '../../workers/core/hash.js';
import { ruralRing, parseDistricts } from '../../workers/core/districts/index.js';
import { buildFlow } from '../../workers/run/flow.js';
import { subtractWater } from '../../workers/run/pipeline.js';
import type { JobContext } from '../../workers/queue/types.js';
import type { PipelineRepo } from '../../workers/store/pipeline-repo.js';

let dir: string;
beforeAll(async () => { dir = await mkdtemp(join(tmpdir(), 'heatledger-jobs-')); });
afterAll(async () => { await rm(dir, { recursive: true, force: true }); });

/** A district over the whole 32 x 32 test scene (UTM 25N, 100 m pixels), in lon/lat. */
const toLonLat = makeTransformer(crsDefinitionForEpsg(32625), crsDefinitionForEpsg(4326));
const box = (x0: number, x1: number, y0 = 4896800, y1 = 4900000) => ({ type: 'Polygon', coordinates: [[[x0, y0], [x1, y0], [x1, y1], [x0, y1], [x0, y0]].map(([x, y]) => toLonLat(x, y))] });

/** A repository that records what a scene job asks of it; `stored` answers the look-up for earlier results. */
function fakeRepo(stored: { id: number; status: string; districts: string[]; lstInputsFingerprint: string | null } | null = null) {
  const calls: { method: string; args: unknown[] }[] = [];
  const record = <T>(method: string, value: T) => async (...args: unknown[]) => { calls.push({ method, args }); return value; };
  const repo = {
    storedSceneState: record('storedSceneState', stored),
    storeProcessedScene: record('storeProcessedScene', 7),
    registerSceneReporting: record('registerSceneReporting', { id: 7, previousStatus: stored?.status ?? null }),
    setSceneWarnings: record('setSceneWarnings', undefined),
    markSceneFailed: record('markSceneFailed', 8),
    listDistricts: record('listDistricts', [{ id: 'd', geometry: box(300000, 303200) }]),
  } as unknown as PipelineRepo;
  const ctx: JobContext<PipelineRepo> = { jobId: 'j', name: 'scene', childrenValues: {}, failedChildren: [], repo, log: () => undefined, attempt: 1 };
  return { calls, ctx };
}

/**
 * The calls a job made, less the districts read: a process reads a targets key's
 * districts once and keeps them (the first test shows both), so whether a later
 * job reads them depends on what ran before it in this process.
 */
const writesOf = (calls: { method: string }[]) => calls.map((c) => c.method).filter((m) => m !== 'listDistricts');

/** A scene job's data for one file: the district `d`, pixel-centre rule, the usual plausible range. */
function sceneData(path: string, contentHash: string, more: Partial<SceneData> = {}): SceneData {
  return { path, contentHash, runId: 1, targetIds: ['d'], targetsKey: 'k', coverage: 'centre', plausibleKelvin: [170, 360], ...more };
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

describe('scene processor', () => {
  it('registers a scene with its UTC time, day pass and timing rating from the sun at the scene centre', async () => {
    const path = await scene('day.tif', { ACQUISITION_TIME: '2024-07-14T15:52:00Z', KIND: 'lst' });
    const { calls, ctx } = fakeRepo();
    // a targets key no other test uses: this process has not read its districts yet
    const r = await sceneJob(sceneData(path, await hashFile(path), { targetsKey: 'first-read' }), ctx);
    expect(r).toMatchObject({ sceneId: 7, kind: 'lst', pass: 'day', acquiredAt: '2024-07-14T15:52:00Z', alreadyStored: false, rows: 1 });
    // one write: the registration with the statistics (DN 44000 x 0.00341802 + 149 = 299.39288 K, Landsat C2 ST scaling; derived)
    expect(calls.map((c) => c.method)).toEqual(['storedSceneState', 'listDistricts', 'storeProcessedScene']);
    // the next scene of the same targets reads no districts: they are kept for the key
    const next = fakeRepo();
    await sceneJob(sceneData(path, await hashFile(path), { targetsKey: 'first-read' }), next.ctx);
    expect(next.calls.map((c) => c.method)).toEqual(['storedSceneState', 'storeProcessedScene']);
    const [reg, rows] = calls.find((c) => c.method === 'storeProcessedScene')!.args as [Record<string, unknown>, { districtId: string; meanKelvin: number; pixels: number }[]];
    expect(rows.map((z) => [z.districtId, z.pixels])).toEqual([['d', 1024]]);
    expect(rows[0].meanKelvin).toBeCloseTo(44000 * 0.00341802 + 149, 9);
    // 13:30 local solar time at about 35.6 W in July: near solar noon (SPA; derived)
    expect(reg).toMatchObject({ kind: 'lst', pass: 'day', timingRating: 'midday', epsg: 32625, width: 32, height: 32, scale: 0.00341802, offset: 149, nodata: 0, pixelSizeMetres: 100 });
  });
  it('takes the TIFF DateTime tag as UTC when there is no metadata item', async () => {
    const path = await scene('tagonly.tif', {}, '2024:07:15 03:52:00');
    const { ctx } = fakeRepo();
    const r = await sceneJob(sceneData(path, await hashFile(path)), ctx);
    expect(r).toMatchObject({ acquiredAt: '2024-07-15T03:52:00Z', pass: 'night' });
  });
  it('refuses an LST scene with no time anywhere, records it as failed with the reason, names the file', async () => {
    const path = await scene('notime.tif', {});
    const { calls, ctx } = fakeRepo();
    const hash = await hashFile(path);
    const err = await sceneJob(sceneData(path, hash, { runId: 3 }), ctx).catch((e: unknown) => e as Error);
    expect((err as Error).name).toBe('InputError');
    expect((err as Error).message).toMatch(/notime\.tif: has no acquisition time.*--manifest/);
    const failed = calls.find((c) => c.method === 'markSceneFailed')!.args[0] as Record<string, unknown>;
    expect(failed).toMatchObject({ contentHash: hash, path, runId: 3 });
    expect(calls.map((c) => c.method)).toEqual(['markSceneFailed']);
  });
  it('lets a manifest give the time and the kind', async () => {
    const path = await scene('manifest.tif', {});
    const { ctx } = fakeRepo();
    const r = await sceneJob(sceneData(path, await hashFile(path), { manifest: { path, kind: 'lst', acquiredAt: '2024-07-15T03:52:00Z' } }), ctx);
    expect(r).toMatchObject({ pass: 'night', acquiredAt: '2024-07-15T03:52:00Z' });
  });
  it('records a truncated file as failed', async () => {
    const good = await scene('whole.tif', { ACQUISITION_TIME: '2024-07-14T15:52:00Z' });
    const { readFile } = await import('node:fs/promises');
    const bytes = await readFile(good);
    const path = join(dir, 'cut.tif');
    await writeFile(path, bytes.subarray(0, Math.floor(bytes.length / 2)));
    const { calls, ctx } = fakeRepo();
    const err = await sceneJob(sceneData(path, await hashFile(path)), ctx).catch((e: unknown) => e as Error);
    expect((err as Error).name).toBe('InputError');
    expect((err as Error).message).toContain('cut.tif');
    expect(calls.map((c) => c.method)).toContain('markSceneFailed');
    expect(calls.map((c) => c.method)).not.toContain('storeProcessedScene');
  });
  it('computes nothing for a scene already processed for every district of the run, and takes its path and header as read now', async () => {
    const path = await scene('again.tif', { ACQUISITION_TIME: '2024-07-14T15:52:00Z' });
    const { calls, ctx } = fakeRepo({ id: 7, status: 'processed', districts: ['d'], lstInputsFingerprint: null });
    const r = await sceneJob(sceneData(path, await hashFile(path)), ctx);
    expect(r).toMatchObject({ sceneId: 7, alreadyStored: true, rows: 0, skipped: 'already processed' });
    expect(calls.map((c) => c.method)).toEqual(['storedSceneState', 'registerSceneReporting', 'setSceneWarnings']);
    expect((calls[1].args[0] as { path: string }).path).toBe(path);
    // a district of the run without current statistics: computed and stored again
    const again = fakeRepo({ id: 7, status: 'processed', districts: [], lstInputsFingerprint: null });
    await sceneJob(sceneData(path, await hashFile(path)), again.ctx);
    expect(writesOf(again.calls)).toEqual(['storedSceneState', 'storeProcessedScene']);
  });
  it('does not look for earlier results of a scene the store did not have when the run was built', async () => {
    const path = await scene('new.tif', { ACQUISITION_TIME: '2024-07-14T15:52:00Z' });
    const { calls, ctx } = fakeRepo({ id: 7, status: 'processed', districts: ['d'], lstInputsFingerprint: null });
    const r = await sceneJob(sceneData(path, await hashFile(path), { newToStore: true }), ctx);
    expect(r).toMatchObject({ alreadyStored: false, rows: 1 });
    expect(writesOf(calls)).toEqual(['storeProcessedScene']);
  });
  it('keeps what was read of a scene whose pixels cannot be decoded beside its failure', async () => {
    const good = await scene('tiles.tif', { ACQUISITION_TIME: '2024-07-14T15:52:00Z' });
    const { readFile } = await import('node:fs/promises');
    const bytes = Buffer.from(await readFile(good));
    const { openRaster } = await import('../../workers/core/raster/index.js');
    const r0 = await openRaster(good);
    // the first tile's stored bytes overwritten (its offset read from the reader's block layout): no longer a zlib stream
    const first = (r0 as unknown as { layout: { offsets: Float64Array } }).layout.offsets[0];
    await r0.close();
    expect(first).toBeGreaterThan(0);
    bytes.fill(0xff, first, first! + 8);
    const path = join(dir, 'badtile.tif');
    await writeFile(path, bytes);
    const { calls, ctx } = fakeRepo();
    // a targets key of its own: the district geometries are fetched afresh (not from an earlier test's cache)
    const err = await sceneJob(sceneData(path, await hashFile(path), { newToStore: true, targetsKey: 'badtile' }), ctx).catch((e: unknown) => e as Error);
    expect((err as Error).name).toBe('InputError');
    expect((err as Error).message).toContain('badtile.tif');
    expect(calls.map((c) => c.method)).toEqual(['listDistricts', 'registerSceneReporting', 'markSceneFailed']);
    expect(calls[1].args[0]).toMatchObject({ path, kind: 'lst', pass: 'day', width: 32 });
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
  it('is derive <- one scene job per file, with the QA raster and bits on the scene that has one', () => {
    const root = buildFlow(args);
    expect(root.name).toBe('derive');
    expect(root.children!.map((c) => c.name)).toEqual(['scene', 'scene']);
    expect(root.children!.every((c) => c.children === undefined)).toBe(true);
    expect((root.children![0].data as { qa?: unknown }).qa).toEqual({ path: '/a/day_qa.tif', maskBits: 24 });
    expect((root.children![1].data as { qa?: unknown }).qa).toBeUndefined();
  });
  it('marks the scenes the store did not have as new, without changing any job id', () => {
    const known = buildFlow({ ...args, knownHashes: new Set(['a'.repeat(64)]) });
    expect(known.children!.map((c) => (c.data as SceneData).newToStore)).toEqual([undefined, true]);
    expect(buildFlow(args).children!.map((c) => (c.data as SceneData).newToStore)).toEqual([undefined, undefined]);
    expect(known.id).toBe(buildFlow(args).id);
    expect(known.children!.map((c) => c.id)).toEqual(buildFlow(args).children!.map((c) => c.id));
  });
  it('derives ids from content and parameters: same inputs give the same ids, another database or parameter other ids', () => {
    const a = buildFlow(args);
    expect(buildFlow(args).id).toBe(a.id);
    expect(buildFlow({ ...args, runId: 9 }).id).toBe(a.id); // the run number is not content
    expect(buildFlow({ ...args, identity: 'db2' }).id).not.toBe(a.id);
    expect(buildFlow({ ...args, params: { coverageRule: 'fraction' } }).children![0].id).not.toBe(a.children![0].id);
    expect(buildFlow({ ...args, files: [files[1], files[0]] }).children!.map((c) => c.id)).toEqual([a.children![1].id, a.children![0].id]);
  });
});

describe('progress in scenes', () => {
  it('counts a scene once: done when its job is, failed when it failed', async () => {
    const { sceneProgress } = await import('../../workers/commands/ingest.js');
    const { NamedIdSet, progressOf, totalsByName } = await import('../../workers/queue/progress.js');
    const names: Record<string, string> = { s1: 'scene', s2: 'scene', s3: 'scene', d: 'derive' };
    const done = new NamedIdSet((id) => names[id]);
    const failed = new NamedIdSet((id) => names[id]);
    const totals = totalsByName(Object.values(names));
    done.add('s1'); // scene 1 processed
    failed.add('s2'); // scene 2 refused
    done.add('s1'); // adding twice counts once
    const p = progressOf(done, failed, totals, 1); // scene 3 still running
    expect(p).toMatchObject({ done: 1, failed: 1, total: 4, running: 1 });
    expect(p.byName).toEqual({ scene: { done: 1, failed: 1, total: 3 }, derive: { done: 0, failed: 0, total: 1 } });
    expect(sceneProgress(p)).toEqual({ done: 1, failed: 1, total: 3 });
    failed.delete('s2');
    expect(progressOf(done, failed, totals, 0).byName!.scene.failed).toBe(0);
  });
});


describe('scene processor in a long-lived worker', () => {
  it('uses the districts of the run at hand, not geometry cached from an earlier run', async () => {
    const path = join(dir, 'halves.tif');
    // left half DN 40000, right half DN 50000 (x 0.00341802 + 149 K: 285.72 K and 319.90 K)
    const data = new Uint16Array(32 * 32).map((_, i) => (i % 32 < 16 ? 40000 : 50000));
    await writeGeoTiff(path, {
      width: 32, height: 32, data, epsg: 32625, transform: { a: 100, b: 0, c: 300000, d: 0, e: -100, f: 4900000 },
      nodata: 0, scale: 0.00341802, offset: 149, layout: { tiled: true, tileWidth: 16, tileHeight: 16 }, compression: 'deflate', predictor: 2,
      metadata: { ACQUISITION_TIME: '2024-07-14T15:52:00Z' },
    });
    let geometry = box(300200, 301400, 4897000, 4899500); // inside the left half
    const written: { rows: { districtId: string; meanKelvin: number | null }[] }[] = [];
    const repo = {
      listDistricts: async () => [{ id: 'd', geometry }],
      storeProcessedScene: async (_scene: unknown, rows: { districtId: string; meanKelvin: number | null }[]) => { written.push({ rows }); return 1; },
      markSceneFailed: async () => 0,
    } as unknown as PipelineRepo;
    const ctx = (id: string): JobContext<PipelineRepo> => ({ jobId: id, name: 'scene', childrenValues: {}, failedChildren: [], repo, log: () => undefined, attempt: 1 });
    const contentHash = await hashFile(path);
    await sceneJob(sceneData(path, contentHash, { targetsKey: 'run-1', newToStore: true }), ctx('s1'));
    geometry = box(301800, 303000, 4897000, 4899500); // the district redrawn inside the right half
    await sceneJob(sceneData(path, contentHash, { targetsKey: 'run-2', newToStore: true }), ctx('s2'));
    // DN * 0.00341802 + 149 (Landsat C2 ST scaling): 40000 -> 285.7208 K, 50000 -> 319.901 K (derived)
    expect(written[0].rows[0].meanKelvin).toBeCloseTo(40000 * 0.00341802 + 149, 9);
    expect(written[1].rows[0].meanKelvin).toBeCloseTo(50000 * 0.00341802 + 149, 9);
  });
});
