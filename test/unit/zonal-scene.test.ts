import { readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, test } from 'vitest';
import { zonalScene, type ZonalSceneResult } from '../../workers/core/zonal/index.js';
import { fromGdal, intersectWindows, type Affine, type Window } from '../../workers/core/raster/affine.js';
import type { RasterBlock, RasterFile, RasterHeader, TypedArray } from '../../workers/core/raster/index.js';
import { isInputError } from '../../workers/core/errors.js';

const FIXTURES = join(dirname(fileURLToPath(import.meta.url)), '..', 'fixtures', 'coverage');
const load = (name: string) => JSON.parse(readFileSync(join(FIXTURES, `${name}.json`), 'utf8'));

/** In-memory RasterFile of the workers/core/raster contract: tiled, padded tiles (stride = tile width), counts decodes. */
class FakeRaster implements RasterFile {
  readonly header: RasterHeader;
  readonly decoded: string[] = [];
  windowReads: Window[] = [];
  constructor(private readonly pixels: TypedArray, h: Partial<RasterHeader> & Pick<RasterHeader, 'width' | 'height' | 'sampleFormat' | 'bitsPerSample' | 'transform'>) {
    this.header = {
      path: 'fake.tif', bands: 1, epsg: null, crsDefinition: null, nodata: null, scale: 1, offset: 0,
      acquiredAt: null, metadata: {}, blockWidth: 8, blockHeight: 8, tiled: true, compression: 1, predictor: 1,
      mask: null, alphaBand: null, warnings: [], ...h,
    };
  }
  async *blocks(window: Window, band = 0): AsyncIterable<RasterBlock> {
    if (band !== 0) throw new Error('one band');
    const { width, height, blockWidth: bw, blockHeight: bh } = this.header;
    const img = { colOff: 0, rowOff: 0, width, height };
    const w = intersectWindows(window, img);
    if (!w) return;
    for (let br = Math.floor(w.rowOff / bh); br * bh < w.rowOff + w.height; br++) {
      for (let bc = Math.floor(w.colOff / bw); bc * bw < w.colOff + w.width; bc++) {
        this.decoded.push(`${br},${bc}`);
        const valid = intersectWindows({ colOff: bc * bw, rowOff: br * bh, width: bw, height: bh }, img)!;
        const data = new (this.pixels.constructor as new (n: number) => TypedArray)(bw * bh);
        data.fill(77 as never); // padding that must never be read
        for (let r = 0; r < valid.height; r++) {
          for (let c = 0; c < valid.width; c++) data[r * bw + c] = this.pixels[(valid.rowOff + r) * width + valid.colOff + c];
        }
        yield { window: valid, data, stride: bw };
      }
    }
  }
  async readWindow(window: Window): Promise<TypedArray> {
    this.windowReads.push(window);
    const out = new (this.pixels.constructor as new (n: number) => TypedArray)(window.width * window.height);
    for (let r = 0; r < window.height; r++) {
      for (let c = 0; c < window.width; c++) out[r * window.width + c] = this.pixels[(window.rowOff + r) * this.header.width + window.colOff + c];
    }
    return out;
  }
  /** Validity flags of the whole image (1 = valid) standing for an internal mask; null = no mask. */
  maskValid: Uint8Array | null = null;
  async validMask(window: Window): Promise<Uint8Array | null> {
    if (this.maskValid === null) return null;
    const out = new Uint8Array(window.width * window.height);
    for (let r = 0; r < window.height; r++) {
      for (let c = 0; c < window.width; c++) out[r * window.width + c] = this.maskValid[(window.rowOff + r) * this.header.width + window.colOff + c];
    }
    return out;
  }
  async close(): Promise<void> {}
}

// Scene formulas mirrored from test/fixtures/make_coverage_fixtures.py (scene_a, scene_b).
function sceneA(width: number, height: number): { dn: Uint16Array; qa: Uint8Array } {
  const dn = new Uint16Array(width * height), qa = new Uint8Array(width * height);
  for (let r = 0; r < height; r++) {
    for (let c = 0; c < width; c++) {
      let v = 14000 + ((r * 131 + c * 71 + r * c * 7) % 1500);
      if ((r * 5 + c * 11) % 43 === 1) v = 18500;
      if ((r * 7 + c * 3) % 37 === 0) v = 0;
      dn[r * width + c] = v;
      qa[r * width + c] = ((r + 2 * c) % 7 === 0 ? 2 : 0) | ((r * c) % 13 === 3 ? 8 : 0);
    }
  }
  return { dn, qa };
}
function sceneB(width: number, height: number): Float32Array {
  const v = new Float32Array(width * height);
  for (let r = 0; r < height; r++) {
    for (let c = 0; c < width; c++) {
      let x = 290 + ((r * 37 + c * 53) % 400) / 20;
      if ((r * 3 + c) % 47 === 2) x = -9999;
      if ((r + c) % 31 === 0) x = NaN;
      v[r * width + c] = x;
    }
  }
  return v;
}

interface RefRow {
  id: string; rule: 'centre' | 'fraction'; scene: 'a' | 'b'; pixels: number; valid: number;
  nodata: number; masked: number; implausible: number; valid_fraction?: number;
  mean?: number; std?: number; min?: number; max?: number; p10?: number; median?: number; p90?: number;
}
const reference = load('zonal-reference') as { rows: RefRow[] };

function checkRow(got: ZonalSceneResult, want: RefRow, digits: number): void {
  expect(got.stats.pixels).toBe(want.pixels);
  expect(got.stats.valid).toBe(want.valid);
  expect(got.counts).toEqual({ nodata: want.nodata, masked: want.masked, implausible: want.implausible });
  if (want.pixels === 0) {
    expect(got.stats.validFraction).toBeNull();
    expect(got.stats.mean).toBeNull();
    return;
  }
  expect(got.stats.validFraction!).toBeCloseTo(want.valid_fraction!, 6);
  for (const k of ['mean', 'std', 'min', 'max', 'p10', 'median', 'p90'] as const) {
    expect(got.stats[k]!, `${want.id} ${want.rule} ${k}`).toBeCloseTo(want[k]!, digits);
  }
}

describe('zonalScene vs NumPy over GDAL masks / GEOS fractions (test/fixtures/coverage/zonal-reference.json)', () => {
  const names = ['irregular', 'hole', 'multipolygon', 'tiny-miss', 'tiny-hit'];
  const targets = names.map((id) => ({ id, geometry: load(id).geometry as number[][][][] }));
  const utm = fromGdal(load('hole').gdalTransform);
  // Far off the raster: 10 km east.
  targets.push({ id: 'offshore', geometry: [[[[510000, 4199000], [510300, 4199000], [510300, 4198700], [510000, 4199000]]]] });

  for (const rule of ['centre', 'fraction'] as const) {
    test(`scene A (UInt16, scale 0.02, nodata 0, QA bits + values), ${rule} rule`, async () => {
      const { dn, qa } = sceneA(30, 30);
      const raster = new FakeRaster(dn, { width: 30, height: 30, sampleFormat: 'uint', bitsPerSample: 16, transform: utm, nodata: 0, scale: 0.02 });
      const qaRaster = new FakeRaster(qa, { path: 'fake_qa.tif', width: 30, height: 30, sampleFormat: 'uint', bitsPerSample: 8, transform: utm });
      const rows = await zonalScene(raster, targets, { coverage: rule, qa: { raster: qaRaster, maskBits: 2, maskValues: [8] } });
      expect(rows.map((r) => r.id)).toEqual([...names, 'offshore']);
      for (const want of reference.rows.filter((r) => r.scene === 'a' && r.rule === rule)) {
        // centre: same cells, same arithmetic as numpy; fraction: Float32 weights vs GEOS doubles.
        checkRow(rows.find((r) => r.id === want.id)!, want, rule === 'centre' ? 9 : 5);
      }
      const off = rows.find((r) => r.id === 'offshore')!;
      expect(off.stats).toEqual({ pixels: 0, valid: 0, validFraction: null, mean: null, std: null, min: null, max: null, median: null, p10: null, p90: null });
      // The LST raster is read by blocks only; QA once per decoded block that a target meets.
      expect(raster.windowReads.length).toBe(0);
      expect(new Set(raster.decoded).size).toBe(raster.decoded.length);
      expect(qaRaster.windowReads.length).toBeLessThanOrEqual(raster.decoded.length);
    });

    test(`scene B (Float32 K, rotated grid, nodata -9999 and NaN), ${rule} rule`, async () => {
      const fx = load('rotated');
      const raster = new FakeRaster(sceneB(fx.width, fx.height), {
        width: fx.width, height: fx.height, sampleFormat: 'float', bitsPerSample: 32, transform: fromGdal(fx.gdalTransform), nodata: -9999,
      });
      const [row] = await zonalScene(raster, [{ id: 'rotated', geometry: fx.geometry }], { coverage: rule });
      checkRow(row, reference.rows.find((r) => r.scene === 'b' && r.rule === rule)!, rule === 'centre' ? 9 : 5);
    });
  }
});

describe('zonalScene from scene to scene (histogram buffers kept for the next scene)', () => {
  test('scene A after a scene of many DNs and after a scene that failed half-way still matches NumPy (test/fixtures/coverage/zonal-reference.json)', async () => {
    const names = ['irregular', 'hole', 'multipolygon', 'tiny-miss', 'tiny-hit'];
    const targets = names.map((id) => ({ id, geometry: load(id).geometry as number[][][][] }));
    const utm = fromGdal(load('hole').gdalTransform);
    const common = { width: 30, height: 30, sampleFormat: 'uint' as const, bitsPerSample: 16 as const, transform: utm };
    // every bin from 1 to 900 in use, in every target
    const busy = new Uint16Array(900).map((_, i) => 1 + ((i * 7919) % 900));
    await zonalScene(new FakeRaster(busy, common), targets, { coverage: 'centre' });
    // a scan that throws after its first block: its histograms hold counts and must not be used again
    class Failing extends FakeRaster {
      override async *blocks(window: Window, band = 0): AsyncIterable<RasterBlock> {
        for await (const b of super.blocks(window, band)) { yield b; throw new Error('read error half-way'); }
      }
    }
    await expect(zonalScene(new Failing(busy, common), targets, { coverage: 'centre' })).rejects.toThrow('half-way');
    const { dn, qa } = sceneA(30, 30);
    const raster = new FakeRaster(dn, { ...common, nodata: 0, scale: 0.02 });
    const qaRaster = new FakeRaster(qa, { path: 'fake_qa.tif', width: 30, height: 30, sampleFormat: 'uint', bitsPerSample: 8, transform: utm });
    for (let round = 0; round < 2; round++) {
      const rows = await zonalScene(raster, targets, { coverage: 'centre', qa: { raster: qaRaster, maskBits: 2, maskValues: [8] } });
      for (const want of reference.rows.filter((r) => r.scene === 'a' && r.rule === 'centre')) checkRow(rows.find((r) => r.id === want.id)!, want, 9);
    }
  });

  test('masks kept per geometry and grid: the same geometry on another grid gets its own mask (scene A shifted by one cell)', async () => {
    const names = ['irregular', 'hole', 'multipolygon'];
    const targets = names.map((id) => ({ id, geometry: load(id).geometry as number[][][][] }));
    const utm = fromGdal(load('hole').gdalTransform);
    const { dn } = sceneA(30, 30);
    const common = { width: 30, height: 30, sampleFormat: 'uint' as const, bitsPerSample: 16 as const, nodata: 0, scale: 0.02 };
    const on = await zonalScene(new FakeRaster(dn, { ...common, transform: utm }), targets, { coverage: 'centre' });
    // the grid moved one cell west: the same polygons cover other cells (derived from the centre rule)
    const shifted = { ...utm, c: utm.c - utm.a };
    const moved = await zonalScene(new FakeRaster(dn, { ...common, transform: shifted }), targets, { coverage: 'centre' });
    const fresh = await zonalScene(new FakeRaster(dn, { ...common, transform: shifted }), names.map((id) => ({ id, geometry: load(id).geometry as number[][][][] })), { coverage: 'centre' });
    expect(moved.map((r) => r.stats)).toEqual(fresh.map((r) => r.stats));
    expect(moved.map((r) => r.stats.mean)).not.toEqual(on.map((r) => r.stats.mean));
    // and back on the first grid, the first answer again
    const again = await zonalScene(new FakeRaster(dn, { ...common, transform: utm }), targets, { coverage: 'centre' });
    expect(again).toEqual(on);
  });
});

describe('zonalScene behaviour', () => {
  const grid: Affine = { a: 30, b: 0, c: 0, d: 0, e: -30, f: 0 };
  const rect = (c0: number, r0: number, c1: number, r1: number) => [[[[c0 * 30, -r0 * 30], [c1 * 30, -r0 * 30], [c1 * 30, -r1 * 30], [c0 * 30, -r1 * 30], [c0 * 30, -r0 * 30]]]];

  test('two cells 300 K and 310 K, coverage 1 and 0.5 with the second centre outside -> 303.333 / 300.0 K (derived from mean = sum c x / sum c and the centre rule)', async () => {
    const raster = new FakeRaster(Float32Array.of(300, 310), { width: 2, height: 1, sampleFormat: 'float', bitsPerSample: 32, transform: grid });
    // Both cells, minus a square hole of area 0.5 cell centred on the second cell's centre.
    const s = Math.sqrt(0.5) * 30, cx = 45, cy = -15;
    const hole = [[cx - s / 2, cy - s / 2], [cx + s / 2, cy - s / 2], [cx + s / 2, cy + s / 2], [cx - s / 2, cy + s / 2], [cx - s / 2, cy - s / 2]];
    const geometry = [[rect(0, 0, 2, 1)[0][0], hole]];
    const [frac] = await zonalScene(raster, [{ id: 'x', geometry }], { coverage: 'fraction' });
    expect(frac.stats.mean!).toBeCloseTo(303.3333333, 5);
    expect(frac.stats.pixels).toBe(2);
    const [centre] = await zonalScene(raster, [{ id: 'x', geometry }], { coverage: 'centre' });
    expect(centre.stats.mean).toBe(300);
    expect(centre.stats.pixels).toBe(1);
  });

  test('decodes only the blocks under the targets, each once', async () => {
    const n = 64;
    const raster = new FakeRaster(new Uint16Array(n * n).fill(15000), { width: n, height: n, sampleFormat: 'uint', bitsPerSample: 16, transform: grid, scale: 0.02 });
    // Two districts within block rows 1-2 and block columns 1-3 (8 x 8 blocks).
    const rows = await zonalScene(raster, [{ id: 'a', geometry: rect(9, 9, 15, 15) }, { id: 'b', geometry: rect(20, 17, 30, 23) }], { coverage: 'centre' });
    expect(rows.map((r) => r.stats.pixels)).toEqual([36, 60]);
    expect(rows[0].stats.mean).toBe(300);
    expect(rows[0].stats.std).toBe(0);
    // Union window cols 9..29, rows 9..22 -> block cols 1..3, block rows 1..2.
    expect(raster.decoded.sort()).toEqual(['1,1', '1,2', '1,3', '2,1', '2,2', '2,3']);
  });

  test('integer (Int16) and float (Float32) rasters of the same DNs agree, negative scale', async () => {
    const w = 40, h = 30;
    const ints = new Int16Array(w * h), floats = new Float32Array(w * h);
    for (let i = 0; i < w * h; i++) { ints[i] = ((i * 7919) % 3000) - 1500; floats[i] = ints[i]; }
    const common = { width: w, height: h, transform: grid, scale: -0.01, offset: 300, nodata: -1500 };
    const ri = new FakeRaster(ints, { ...common, sampleFormat: 'int', bitsPerSample: 16 });
    const rf = new FakeRaster(floats, { ...common, sampleFormat: 'float', bitsPerSample: 32 });
    const targets = [{ id: 't', geometry: [[[[25, -20], [1100, -70], [900, -850], [40, -600], [25, -20]]]] }];
    for (const coverage of ['centre', 'fraction'] as const) {
      const [a] = await zonalScene(ri, targets, { coverage });
      const [b] = await zonalScene(rf, targets, { coverage });
      expect(a.counts).toEqual(b.counts);
      expect(a.stats.valid).toBe(b.stats.valid);
      expect(a.stats.mean!).toBeCloseTo(b.stats.mean!, 9);
      expect(a.stats.std!).toBeCloseTo(b.stats.std!, 9);
      expect([a.stats.min, a.stats.max]).toEqual([b.stats.min, b.stats.max]);
      if (coverage === 'centre') expect([a.stats.p10, a.stats.median, a.stats.p90]).toEqual([b.stats.p10, b.stats.median, b.stats.p90]);
      else expect(a.stats.median!).toBeCloseTo(b.stats.median!, 9);
    }
  });

  test('plausibility window: default rejects 370 K, null keeps it', async () => {
    const raster = new FakeRaster(Uint16Array.of(15000, 18500, 15000, 15500), { width: 2, height: 2, sampleFormat: 'uint', bitsPerSample: 16, transform: grid, scale: 0.02 });
    const t = [{ id: 'all', geometry: rect(0, 0, 2, 2) }];
    const [d] = await zonalScene(raster, t, { coverage: 'centre' });
    expect(d.counts.implausible).toBe(1);
    expect(d.stats.max).toBe(310);
    expect(d.stats.validFraction).toBe(0.75);
    const [k] = await zonalScene(raster, t, { coverage: 'centre', plausibleKelvin: null });
    expect(k.counts.implausible).toBe(0);
    expect(k.stats.max).toBe(370);
    const [n] = await zonalScene(raster, t, { coverage: 'centre', plausibleKelvin: [305, 320] });
    expect(n.stats.valid).toBe(1);
  });

  test('float32 nodata matches after float32 rounding', async () => {
    const nodata = -3.4028234663852886e38;
    const raster = new FakeRaster(Float32Array.of(nodata, 300, 301, NaN), { width: 2, height: 2, sampleFormat: 'float', bitsPerSample: 32, transform: grid, nodata });
    const [r] = await zonalScene(raster, [{ id: 'x', geometry: rect(0, 0, 2, 2) }], { coverage: 'centre' });
    expect(r.counts.nodata).toBe(2);
    expect(r.stats.mean).toBe(300.5);
  });

  async function inputError(p: Promise<unknown>): Promise<Error> {
    let err: unknown;
    try { await p; } catch (e) { err = e; }
    expect(isInputError(err), String(err)).toBe(true);
    return err as Error;
  }

  test('bad requests raise InputError naming the file or target', async () => {
    const raster = new FakeRaster(new Uint16Array(16), { width: 4, height: 4, sampleFormat: 'uint', bitsPerSample: 16, transform: grid });
    const t = [{ id: 'x', geometry: rect(0, 0, 2, 2) }];
    const shifted = new FakeRaster(new Uint8Array(16), { path: 'qa_shifted.tif', width: 4, height: 4, sampleFormat: 'uint', bitsPerSample: 8, transform: { ...grid, c: 15 } });
    expect((await inputError(zonalScene(raster, t, { coverage: 'centre', qa: { raster: shifted, maskBits: 1 } }))).message).toContain('qa_shifted.tif');
    const small = new FakeRaster(new Uint8Array(9), { path: 'qa_small.tif', width: 3, height: 3, sampleFormat: 'uint', bitsPerSample: 8, transform: grid });
    expect((await inputError(zonalScene(raster, t, { coverage: 'centre', qa: { raster: small, maskBits: 1 } }))).message).toContain('qa_small.tif');
    const ok = new FakeRaster(new Uint8Array(16), { path: 'qa.tif', width: 4, height: 4, sampleFormat: 'uint', bitsPerSample: 8, transform: grid });
    expect((await inputError(zonalScene(raster, t, { coverage: 'centre', qa: { raster: ok } }))).message).toContain('qa.tif');
    expect((await inputError(zonalScene(raster, t, { coverage: 'centre', band: 1 }))).message).toContain('fake.tif');
    await inputError(zonalScene(raster, t, { coverage: 'centre', plausibleKelvin: [360, 170] }));
    await inputError(zonalScene(raster, t, { coverage: 'all' as never }));
    expect((await inputError(zonalScene(raster, [{ id: 'd7', geometry: [[[[0, 0], [1, 1]]]] }], { coverage: 'fraction' }))).message).toContain('"d7"');
  });

  test('QA mask by bits and by values, counted after nodata', async () => {
    const raster = new FakeRaster(Uint16Array.of(0, 15000, 15000, 15000), { width: 2, height: 2, sampleFormat: 'uint', bitsPerSample: 16, transform: grid, nodata: 0, scale: 0.02 });
    const qa = new FakeRaster(Uint16Array.of(4, 4, 9, 0), { path: 'qa.tif', width: 2, height: 2, sampleFormat: 'uint', bitsPerSample: 16, transform: grid });
    const [r] = await zonalScene(raster, [{ id: 'x', geometry: rect(0, 0, 2, 2) }], { coverage: 'centre', qa: { raster: qa, maskBits: 4, maskValues: [9] } });
    expect(r.counts).toEqual({ nodata: 1, masked: 2, implausible: 0 });
    expect(r.stats.valid).toBe(1);
  });

  test('the raster\'s own mask drops cells as nodata, together with nodata and before QA, on every value path and rule', async () => {
    // cells: nodata | mask 0 | mask 0 + QA flag | QA flag | valid 300 K | valid 310 K
    // GDAL RFC 15: mask value 0 = invalid; the counting order (nodata and mask, then QA, then plausibility) is zonalScene's contract
    const dn = [0, 15000, 15000, 15000, 15000, 15500];
    const valid = Uint8Array.of(1, 0, 0, 1, 1, 1);
    const flags = Uint16Array.of(0, 0, 4, 4, 0, 0);
    const kinds = [
      { pixels: Uint16Array.from(dn), sampleFormat: 'uint' as const, bitsPerSample: 16, nodata: 0, scale: 0.02 },
      { pixels: Float32Array.from(dn.map((v) => v * 0.02)), sampleFormat: 'float' as const, bitsPerSample: 32, nodata: 0, scale: 1 },
    ];
    for (const k of kinds) {
      for (const coverage of ['centre', 'fraction'] as const) {
        const raster = new FakeRaster(k.pixels, { width: 6, height: 1, sampleFormat: k.sampleFormat, bitsPerSample: k.bitsPerSample, transform: grid, nodata: k.nodata, scale: k.scale, mask: 'internal' });
        raster.maskValid = valid;
        const qa = new FakeRaster(flags, { path: 'qa.tif', width: 6, height: 1, sampleFormat: 'uint', bitsPerSample: 16, transform: grid });
        const [r] = await zonalScene(raster, [{ id: 'x', geometry: rect(0, 0, 6, 1) }], { coverage, qa: { raster: qa, maskBits: 4 } });
        expect([k.sampleFormat, coverage, r.counts]).toEqual([k.sampleFormat, coverage, { nodata: 3, masked: 1, implausible: 0 }]);
        expect(r.stats.valid).toBe(2);
        expect(r.stats.mean).toBeCloseTo(305, 9); // (300 + 310) / 2, derived
        const [noQa] = await zonalScene(raster, [{ id: 'x', geometry: rect(0, 0, 6, 1) }], { coverage });
        expect(noQa.counts).toEqual({ nodata: 3, masked: 0, implausible: 0 });
        expect(noQa.stats.valid).toBe(3);
      }
    }
  });
});
