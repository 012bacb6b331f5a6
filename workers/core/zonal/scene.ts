/**
 * Zonal statistics of one scene: every target's mask is built first, then
 * the raster's blocks under the targets are decoded once each and poured
 * straight into per-target accumulators. No whole-raster array is made.
 */
import { InputError } from '../errors.js';
import type { FlatMultiPolygon, MultiPolygonCoordinates } from '../crs/transform.js';
import { centreMask } from '../coverage/centre.js';
import { inverseGeoTransform } from '../coverage/pixelspace.js';
import type { CentreMask, FractionMask } from '../coverage/types.js';
import { intersectWindows, sameGrid, unionWindows, type Window } from '../raster/affine.js';
import type { RasterBlock, RasterFile, TypedArray } from '../raster/index.js';
import type { FloatAccumulator } from './float.js';
import { IntegerAccumulator, type IntegerKind } from './integer.js';
import { emptyStats, type ValueSummary, type ZonalCounts, type ZonalStats } from './types.js';

/** Hard-reject window for LST, K: observed satellite skin-temperature extremes with a margin (~175 K, Scambos et al. 2018, GRL 45; 343.9 K, Mildrexler, Zhao & Running 2011, BAMS 92:855-860; the margin is a rule of thumb, from memory). */
export const DEFAULT_PLAUSIBLE_KELVIN: readonly [number, number] = [170, 360];

/** A district (or any zone) with its geometry already in the raster's CRS. */
export interface ZonalTarget {
  id: string;
  /** MultiPolygon coordinates in the raster CRS, map units: nested, or as typed arrays (reprojectFlat). */
  geometry: MultiPolygonCoordinates | FlatMultiPolygon;
}

export interface ZonalSceneOptions {
  /** 'centre': cells whose centre is inside; 'fraction': area-weighted by exact coverage. */
  coverage: 'centre' | 'fraction';
  /** Values (K, after scale/offset) outside [min, max] are invalid; null keeps all finite values. Default [170, 360]. */
  plausibleKelvin?: readonly [number, number] | null;
  /** Quality raster on the same grid: a cell is masked when (qa & maskBits) != 0 or qa is one of maskValues. */
  qa?: { raster: RasterFile; maskBits?: number; maskValues?: number[] };
  /** 0-based band of the LST raster (default 0), as in RasterFile.blocks. */
  band?: number;
}

export interface ZonalSceneResult {
  id: string;
  stats: ZonalStats;
  counts: ZonalCounts;
}

// Cell classes in the lookup tables; tally slots use the same numbers.
const VALID = 0, NODATA = 1, MASKED = 2, IMPLAUSIBLE = 3, VALID_WEIGHT = 4;
// Per-block exclusion codes handed to the hot loops (null when nothing is excluded):
// 0 = keep, QA_MASKED = flagged by the QA raster, MASK_INVALID = invalid under the
// raster's own mask (internal mask or alpha band), counted with nodata as GDAL treats it.
const QA_MASKED = 1, MASK_INVALID = 2;

/**
 * Exclusion codes of one block: the raster's own mask (1 = valid) and the QA
 * mask (1 = flagged), either may be null. The mask wins where both exclude.
 */
function exclusions(valid: Uint8Array | null, qa: Uint8Array | null, n: number, buffer: { codes: Uint8Array }): Uint8Array | null {
  if (valid === null && qa === null) return null;
  if (buffer.codes.length < n) buffer.codes = new Uint8Array(n);
  const out = buffer.codes;
  for (let i = 0; i < n; i++) {
    out[i] = valid !== null && valid[i] === 0 ? MASK_INVALID : qa !== null && qa[i] !== 0 ? QA_MASKED : 0;
  }
  return out;
}

function integerKind(sampleFormat: string, bits: number): IntegerKind | null {
  if ((sampleFormat === 'uint' || sampleFormat === 'int') && (bits === 8 || bits === 16)) {
    return { bits, signed: sampleFormat === 'int' };
  }
  return null;
}

/** The typed array the reader hands out for an integer kind (Buffer passes as a Uint8Array). */
function isExpectedArray(data: TypedArray, kind: IntegerKind): boolean {
  if (kind.bits === 8) return kind.signed ? data instanceof Int8Array : data instanceof Uint8Array;
  return kind.signed ? data instanceof Int16Array : data instanceof Uint16Array;
}


/** Per-block QA mask (1 = masked), by lookup table for 8/16-bit QA and by test otherwise. */
class QaMasker {
  private buffer = new Uint8Array(0);
  private readonly lut: Uint8Array | null;
  private readonly bias: number;
  private readonly bits: number;
  private readonly values: Set<number>;

  constructor(readonly raster: RasterFile, maskBits: number, maskValues: number[]) {
    const h = raster.header;
    this.bits = maskBits;
    this.values = new Set(maskValues);
    const kind = integerKind(h.sampleFormat, h.bitsPerSample);
    if (kind !== null) {
      const bins = 2 ** kind.bits;
      this.bias = kind.signed ? bins / 2 : 0;
      this.lut = new Uint8Array(bins);
      for (let b = 0; b < bins; b++) {
        const q = b - this.bias;
        this.lut[b] = (q & maskBits) !== 0 || this.values.has(q) ? 1 : 0;
      }
    } else {
      this.bias = 0;
      this.lut = null;
    }
  }

  async maskFor(window: Window): Promise<Uint8Array> {
    const n = window.width * window.height;
    const q: TypedArray = await this.raster.readWindow(window);
    if (q.length !== n) throw new Error(`QA reader returned ${q.length} values for a ${window.width} x ${window.height} window`);
    if (this.buffer.length < n) this.buffer = new Uint8Array(n);
    const out = this.buffer;
    if (this.lut !== null) {
      const lut = this.lut, bias = this.bias;
      for (let i = 0; i < n; i++) out[i] = lut[q[i] + bias];
    } else {
      const bits = this.bits, values = this.values, useValues = values.size > 0;
      for (let i = 0; i < n; i++) {
        const v = q[i];
        out[i] = (v & bits) !== 0 || (useValues && values.has(v)) ? 1 : 0;
      }
    }
    return out;
  }
}

interface TargetState {
  id: string;
  window: Window | null;
  centre: CentreMask | null;
  fraction: FractionMask | null;
  pixels: number;
  int: IntegerAccumulator | null;
  float: FloatAccumulator | null;
  /** [valid, nodata, masked, implausible, valid weight] */
  tally: Float64Array;
}

// ---- hot loops: one per (coverage rule, value path); qa is null or a per-block mask ----
// Each loop is kept whole and specialised on purpose (no per-pixel calls or branches on the path): they run once per pixel.

function centreInteger(block: RasterBlock, m: CentreMask, acc: IntegerAccumulator, bias: number, classes: Uint8Array, qa: Uint8Array | null, tally: Float64Array): void {
  const { window: bw, data, stride } = block;
  const hist = acc.counts;
  const mw = m.window, offs = m.rowOffsets, spans = m.spans;
  const r0 = Math.max(bw.rowOff, mw.rowOff), r1 = Math.min(bw.rowOff + bw.height, mw.rowOff + mw.height);
  const c0 = bw.colOff, c1 = bw.colOff + bw.width;
  let nodata = 0, masked = 0, implausible = 0, valid = 0;
  // cells seen without a QA raster: the implausible ones are those neither valid nor nodata
  let scanned = 0;
  // Bins touched, so that summarising scans only them.
  let lo = 0x7fffffff, hi = -1;
  for (let r = r0; r < r1; r++) {
    const i = r - mw.rowOff;
    const base = (r - bw.rowOff) * stride - c0;
    const qBase = (r - bw.rowOff) * bw.width - c0;
    for (let k = offs[i]; k < offs[i + 1]; k++) {
      const cs = spans[2 * k] > c0 ? spans[2 * k] : c0;
      const ce = spans[2 * k + 1] < c1 ? spans[2 * k + 1] : c1;
      if (qa === null) {
        // Nodata counted without a branch of its own and implausible cells by difference: a
        // count whose branch had not run yet when V8 optimised this loop threw the optimised
        // code away at its first cell (two recompiles of ~5 ms in a one-scene `zonal` run).
        for (let c = cs; c < ce; c++) {
          const b = data[base + c] + bias;
          const cls = classes[b];
          if (cls === VALID) {
            hist[b]++; valid++;
            if (b < lo) lo = b;
            if (b > hi) hi = b;
          }
          nodata += cls === NODATA ? 1 : 0;
        }
        if (ce > cs) scanned += ce - cs;
      } else {
        for (let c = cs; c < ce; c++) {
          const b = data[base + c] + bias;
          const cls = classes[b];
          const q = qa[qBase + c];
          if (cls === NODATA || q === MASK_INVALID) nodata++;
          else if (q !== 0) masked++;
          else if (cls === VALID) {
            hist[b]++; valid++;
            if (b < lo) lo = b;
            if (b > hi) hi = b;
          } else implausible++;
        }
      }
    }
  }
  if (qa === null) implausible = scanned - valid - nodata;
  acc.widen(lo, hi);
  tally[VALID] += valid; tally[NODATA] += nodata; tally[MASKED] += masked; tally[IMPLAUSIBLE] += implausible;
}

function centreFloat(block: RasterBlock, m: CentreMask, acc: FloatAccumulator, nodataValue: number, scale: number, offset: number, lo: number, hi: number, qa: Uint8Array | null, tally: Float64Array): void {
  const { window: bw, data, stride } = block;
  const mw = m.window, offs = m.rowOffsets, spans = m.spans;
  const r0 = Math.max(bw.rowOff, mw.rowOff), r1 = Math.min(bw.rowOff + bw.height, mw.rowOff + mw.height);
  const c0 = bw.colOff, c1 = bw.colOff + bw.width;
  let nodata = 0, masked = 0, implausible = 0, valid = 0;
  for (let r = r0; r < r1; r++) {
    const i = r - mw.rowOff;
    const base = (r - bw.rowOff) * stride - c0;
    const qBase = (r - bw.rowOff) * bw.width - c0;
    for (let k = offs[i]; k < offs[i + 1]; k++) {
      const cs = spans[2 * k] > c0 ? spans[2 * k] : c0;
      const ce = spans[2 * k + 1] < c1 ? spans[2 * k + 1] : c1;
      for (let c = cs; c < ce; c++) {
        const v = data[base + c];
        if (v !== v || v === nodataValue) { nodata++; continue; }
        if (qa !== null && qa[qBase + c] !== 0) { if (qa[qBase + c] === MASK_INVALID) nodata++; else masked++; continue; }
        const kelvin = v * scale + offset;
        if (kelvin >= lo && kelvin <= hi) { acc.add(kelvin); valid++; } else implausible++;
      }
    }
  }
  tally[VALID] += valid; tally[NODATA] += nodata; tally[MASKED] += masked; tally[IMPLAUSIBLE] += implausible;
}

function fractionInteger(block: RasterBlock, m: FractionMask, acc: IntegerAccumulator, bias: number, classes: Uint8Array, qa: Uint8Array | null, tally: Float64Array): void {
  const { window: bw, data, stride } = block;
  const hist = acc.counts, weights = acc.weights!;
  const mw = m.window, fr = m.fractions;
  const win = intersectWindows(bw, mw);
  if (win === null) return;
  let nodata = 0, masked = 0, implausible = 0, valid = 0, validWeight = 0;
  let lo = 0x7fffffff, hi = -1;
  for (let r = win.rowOff; r < win.rowOff + win.height; r++) {
    const fBase = (r - mw.rowOff) * mw.width - mw.colOff;
    const base = (r - bw.rowOff) * stride - bw.colOff;
    const qBase = (r - bw.rowOff) * bw.width - bw.colOff;
    for (let c = win.colOff; c < win.colOff + win.width; c++) {
      const f = fr[fBase + c];
      if (f === 0) continue;
      const b = data[base + c] + bias;
      const cls = classes[b];
      const q = qa === null ? 0 : qa[qBase + c];
      if (cls === NODATA || q === MASK_INVALID) nodata++;
      else if (q !== 0) masked++;
      else if (cls === VALID) {
        hist[b]++; weights[b] += f; valid++; validWeight += f;
        if (b < lo) lo = b;
        if (b > hi) hi = b;
      } else implausible++;
    }
  }
  acc.widen(lo, hi);
  tally[VALID] += valid; tally[NODATA] += nodata; tally[MASKED] += masked; tally[IMPLAUSIBLE] += implausible;
  tally[VALID_WEIGHT] += validWeight;
}

function fractionFloat(block: RasterBlock, m: FractionMask, acc: FloatAccumulator, nodataValue: number, scale: number, offset: number, lo: number, hi: number, qa: Uint8Array | null, tally: Float64Array): void {
  const { window: bw, data, stride } = block;
  const mw = m.window, fr = m.fractions;
  const win = intersectWindows(bw, mw);
  if (win === null) return;
  let nodata = 0, masked = 0, implausible = 0, valid = 0, validWeight = 0;
  for (let r = win.rowOff; r < win.rowOff + win.height; r++) {
    const fBase = (r - mw.rowOff) * mw.width - mw.colOff;
    const base = (r - bw.rowOff) * stride - bw.colOff;
    const qBase = (r - bw.rowOff) * bw.width - bw.colOff;
    for (let c = win.colOff; c < win.colOff + win.width; c++) {
      const f = fr[fBase + c];
      if (f === 0) continue;
      const v = data[base + c];
      if (v !== v || v === nodataValue) { nodata++; continue; }
      if (qa !== null && qa[qBase + c] !== 0) { if (qa[qBase + c] === MASK_INVALID) nodata++; else masked++; continue; }
      const kelvin = v * scale + offset;
      if (kelvin >= lo && kelvin <= hi) { acc.addWeighted(kelvin, f); valid++; validWeight += f; } else implausible++;
    }
  }
  tally[VALID] += valid; tally[NODATA] += nodata; tally[MASKED] += masked; tally[IMPLAUSIBLE] += implausible;
  tally[VALID_WEIGHT] += validWeight;
}

function checkOptions(raster: RasterFile, options: ZonalSceneOptions): { band: number; lo: number; hi: number } {
  const h = raster.header;
  if (options.coverage !== 'centre' && options.coverage !== 'fraction') {
    throw new InputError(`coverage rule ${JSON.stringify(options.coverage)} is not 'centre' or 'fraction'`, h.path);
  }
  const band = options.band ?? 0;
  if (!Number.isInteger(band) || band < 0 || band >= h.bands) {
    throw new InputError(`band ${band} does not exist (the file has bands 0..${h.bands - 1})`, h.path);
  }
  if (!Number.isFinite(h.scale) || !Number.isFinite(h.offset)) {
    throw new InputError(`scale ${h.scale} / offset ${h.offset} are not finite numbers`, h.path);
  }
  inverseGeoTransform(h.transform, h.path);
  const range = options.plausibleKelvin === undefined ? DEFAULT_PLAUSIBLE_KELVIN : options.plausibleKelvin;
  if (range === null) return { band, lo: -Number.MAX_VALUE, hi: Number.MAX_VALUE };
  if (!Array.isArray(range) || range.length !== 2 || !Number.isFinite(range[0]) || !Number.isFinite(range[1]) || !(range[0] < range[1])) {
    throw new InputError(`plausible LST range ${JSON.stringify(range)} is not [min, max] in Kelvin with min < max`);
  }
  return { band, lo: range[0], hi: range[1] };
}

function prepareQa(raster: RasterFile, qa: NonNullable<ZonalSceneOptions['qa']>): QaMasker {
  const h = raster.header, q = qa.raster.header;
  if (q.width !== h.width || q.height !== h.height) {
    throw new InputError(`QA raster is ${q.width} x ${q.height} pixels but ${h.path} is ${h.width} x ${h.height}; they must share one grid`, q.path);
  }
  if (!sameGrid(q.transform, h.transform)) {
    throw new InputError(`QA raster's geotransform differs from that of ${h.path}; they must share one grid`, q.path);
  }
  const bits = qa.maskBits ?? 0;
  if (!Number.isInteger(bits) || bits < 0 || bits > 0xffffffff) {
    throw new InputError(`QA mask bits ${qa.maskBits} are not a whole number from 0 to 2^32 - 1`, q.path);
  }
  const values = qa.maskValues ?? [];
  if (!Array.isArray(values) || !values.every((v) => typeof v === 'number' && Number.isFinite(v))) {
    throw new InputError('QA mask values are not a list of finite numbers', q.path);
  }
  if (bits === 0 && values.length === 0) {
    throw new InputError('QA raster given without mask bits or mask values, so it would mask nothing', q.path);
  }
  if (bits !== 0 && q.sampleFormat === 'float') {
    throw new InputError('QA raster holds floating-point samples, which have no bits to test against mask bits', q.path);
  }
  return new QaMasker(qa.raster, bits, values);
}

/**
 * Zonal statistics of one LST scene for many targets.
 *
 * Values are Kelvin after the header's scale/offset (K = DN * scale + offset).
 * A cell is dropped, and counted once in this order, when it is nodata
 * (header nodata, NaN in float data, or 0 under the raster's own mask:
 * internal mask or alpha band; tested before scale/offset), masked by the QA
 * raster, or implausible (outside `plausibleKelvin`, default [170, 360] K).
 * Nodata and mask both apply where a raster has both (GDAL would use only
 * its mask band there). 8- and 16-bit integer rasters use the exact histogram
 * accumulator, everything else the float accumulator.
 *
 * Only the blocks meeting the union of the targets' windows are decoded,
 * each once; each block goes to every target whose window it meets.
 *
 * @param raster the scene (RasterFile contract of workers/core/raster)
 * @param targets zones with MultiPolygon coordinates in the raster's CRS; a
 *   geometry must not change once used (its masks are kept per geometry and grid)
 * @param options coverage rule, plausible range, QA raster, band (0-based)
 * @returns one entry per target, in input order; targets off the raster get
 *   pixels 0 and null statistics
 * @example
 * const rows = await zonalScene(raster, [{ id: 'north', geometry }], { coverage: 'centre' });
 * rows[0].stats.mean // K
 */
export async function zonalScene(
  raster: RasterFile,
  targets: readonly ZonalTarget[],
  options: ZonalSceneOptions,
): Promise<ZonalSceneResult[]> {
  const h = raster.header;
  if (!Array.isArray(targets)) throw new InputError('zonal targets are not a list', h.path);
  const { band, lo, hi } = checkOptions(raster, options ?? ({} as ZonalSceneOptions));
  const qa = options.qa ? prepareQa(raster, options.qa) : null;
  const fraction = options.coverage === 'fraction';
  const kind = integerKind(h.sampleFormat, h.bitsPerSample);
  const values: ValuePath = {
    kind, ...dnClasses(h, kind, lo, hi), scale: h.scale, offset: h.offset, lo, hi,
    // Float data: the nodata value as the array holds it (float32 rounding).
    nodataValue: h.nodata === null ? NaN : h.sampleFormat === 'float' && h.bitsPerSample === 32 ? Math.fround(h.nodata) : h.nodata,
  };
  const states = await targetStates(h, targets, fraction, kind);
  const active = states.filter((s) => s.window !== null);
  const pools = kind !== null ? attachHistograms(active, kind, fraction) : [];
  await scanBlocks(raster, band, active, qa, fraction, values);
  const results = states.map((s) => resultOf(s, fraction, values));
  if (kind !== null) releaseHistograms(active, pools, 2 ** kind.bits);
  return results;
}

/** How a block's values become Kelvin and classes: the integer path's DN classes, or the float path's constants. */
interface ValuePath {
  kind: IntegerKind | null;
  classes: Uint8Array | null;
  bias: number;
  nodataValue: number;
  scale: number;
  offset: number;
  lo: number;
  hi: number;
}

/** Class of every DN (integer path): nodata and plausibility decided once per bin. */
function dnClasses(h: RasterFile['header'], kind: IntegerKind | null, lo: number, hi: number): { classes: Uint8Array | null; bias: number } {
  if (kind === null) return { classes: null, bias: 0 };
  const bins = 2 ** kind.bits;
  const bias = kind.signed ? bins / 2 : 0;
  const classes = new Uint8Array(bins);
  // every comparison made for every bin (NaN never equals a DN): a comparison first met
  // late in the loop would throw its optimised code away (common practice, no source)
  const nodata = h.nodata ?? NaN, scale = h.scale, offset = h.offset;
  for (let b = 0; b < bins; b++) {
    const dn = b - bias;
    const kelvin = dn * scale + offset;
    const plausible = (kelvin >= lo ? 1 : 0) & (kelvin <= hi ? 1 : 0);
    classes[b] = dn === nodata ? NODATA : plausible === 1 ? VALID : IMPLAUSIBLE;
  }
  return { classes, bias };
}

/** Each target's pixel mask on the raster grid, window, pixel count and (float path) accumulator. */
/**
 * Masks kept per target geometry and grid. A worker's scene job hands scene after
 * scene the same (cached, reprojected) geometry object per district, and the scenes
 * of an archive mostly share one grid, so their masks are made once, as a careful
 * script computes them once per grid. Masks are only read once made. Keyed weakly
 * by the geometry: masks go when nobody holds the geometry any longer.
 */
const maskCache = new WeakMap<object, Map<string, CentreMask | FractionMask | null>>();

function gridKey(h: RasterFile['header'], fraction: boolean): string {
  const t = h.transform;
  return `${fraction ? 'fraction' : 'centre'} ${t.a} ${t.b} ${t.c} ${t.d} ${t.e} ${t.f} ${h.width} ${h.height}`;
}

function cachedMask<M extends CentreMask | FractionMask>(geometry: object, key: string, make: () => M | null): M | null {
  let byGrid = maskCache.get(geometry);
  if (!byGrid) maskCache.set(geometry, (byGrid = new Map()));
  if (byGrid.has(key)) return byGrid.get(key) as M | null;
  const m = make();
  byGrid.set(key, m);
  return m;
}

async function targetStates(h: RasterFile['header'], targets: readonly ZonalTarget[], fraction: boolean, kind: IntegerKind | null): Promise<TargetState[]> {
  // Loaded when needed: most LST rasters are integer DNs read by the centre rule.
  const fractionMask = fraction ? (await import('../coverage/fraction.js')).fractionMask : null;
  const Float = kind === null ? (await import('./float.js')).FloatAccumulator : null;
  return targets.map((t) => {
    if (t === null || typeof t !== 'object' || typeof t.id !== 'string') {
      throw new InputError('a zonal target has no string id', h.path);
    }
    const source = `target ${JSON.stringify(t.id)}`;
    const key = gridKey(h, fraction);
    const cacheable = t.geometry !== null && typeof t.geometry === 'object';
    let window: Window | null = null, centre: CentreMask | null = null, frac: FractionMask | null = null, pixels = 0;
    if (fraction) {
      const make = () => fractionMask!(t.geometry, h.transform, h.width, h.height, source);
      frac = cacheable ? cachedMask(t.geometry, key, make) : make();
      if (frac !== null) {
        for (let i = 0; i < frac.fractions.length; i++) if (frac.fractions[i] > 0) pixels++;
        window = frac.window;
      }
    } else {
      const make = () => centreMask(t.geometry, h.transform, h.width, h.height, source);
      centre = cacheable ? cachedMask(t.geometry, key, make) : make();
      if (centre !== null && centre.count > 0) { pixels = centre.count; window = centre.window; }
    }
    if (pixels === 0) window = null;
    return {
      id: t.id, window, centre, fraction: frac, pixels,
      int: null as IntegerAccumulator | null,
      float: window !== null && kind === null ? new Float!({ capacity: pixels, weighted: fraction }) : null,
      tally: new Float64Array(5),
    };
  });
}

/**
 * Integer path: a histogram accumulator per target. Histograms share zeroed
 * buffers of 64 histograms each (16 MB for 16-bit DNs): few allocations, whose
 * pages the OS supplies lazily, so only the bins a district touches cost
 * anything; each scan covers only its touched range.
 *
 * The buffers are kept for the next scene (a worker serves scene after scene):
 * V8 counts each new buffer in full as external memory, and a fresh one per scene
 * set off a full collection every second scene or so (measured in a worker: 24
 * mark-compacts for 40 scenes of 21 targets, ~12 ms of GC a scene). A buffer goes
 * back to `freePools` only after a scene that completed, once every accumulator
 * has cleared the bins it touched, so a taken buffer is always all zero.
 */
const POOL_HISTOGRAMS = 64;
const MAX_FREE_POOLS = 4;
const freePools = new Map<number, Uint32Array<ArrayBuffer>[]>();

function takePool(bins: number): Uint32Array<ArrayBuffer> {
  return freePools.get(bins)?.pop() ?? new Uint32Array(POOL_HISTOGRAMS * bins);
}

function attachHistograms(active: TargetState[], kind: IntegerKind, fraction: boolean): Uint32Array<ArrayBuffer>[] {
  const bins = 2 ** kind.bits;
  const pools: Uint32Array<ArrayBuffer>[] = [];
  let pool = new Uint32Array(0);
  active.forEach((s, i) => {
    const j = i % POOL_HISTOGRAMS;
    if (j === 0) pools.push((pool = takePool(bins)));
    s.int = new IntegerAccumulator(kind, { weighted: fraction, counts: pool.subarray(j * bins, (j + 1) * bins), trackRange: true });
  });
  return pools;
}

/** Clear every histogram of a finished scene and keep its buffers for the next one. */
function releaseHistograms(active: TargetState[], pools: Uint32Array<ArrayBuffer>[], bins: number): void {
  for (const s of active) s.int?.reset();
  let free = freePools.get(bins);
  if (!free) freePools.set(bins, (free = []));
  for (const p of pools) if (free.length < MAX_FREE_POOLS) free.push(p);
}

/** Decode each block meeting a target once and hand it to every target it meets (the hot loops above). */
async function scanBlocks(raster: RasterFile, band: number, active: TargetState[], qa: QaMasker | null, fraction: boolean, v: ValuePath): Promise<void> {
  const h = raster.header;
  const union = unionWindows(active.map((s) => s.window!));
  if (union === null) return;
  // The raster's own mask (GDAL internal mask or alpha band) excludes pixels besides nodata;
  // with both, a pixel is dropped when either says so.
  const hasMask = h.mask !== null && !(h.mask === 'alpha' && h.alphaBand === band);
  const codes = { codes: new Uint8Array(0) };
  const hits: TargetState[] = [];
  for await (const block of raster.blocks(union, band)) {
    hits.length = 0;
    for (const s of active) if (intersectWindows(block.window, s.window!) !== null) hits.push(s);
    if (hits.length === 0) continue;
    if (v.kind !== null && !isExpectedArray(block.data, v.kind)) {
      throw new Error(`reader returned ${block.data.constructor.name} for ${h.sampleFormat}${h.bitsPerSample} data`);
    }
    const n = block.window.width * block.window.height;
    const valid = hasMask ? await raster.validMask(block.window, band) : null;
    if (valid !== null && valid.length !== n) throw new Error(`mask reader returned ${valid.length} flags for a ${block.window.width} x ${block.window.height} block`);
    const qaMask = exclusions(valid, qa === null ? null : await qa.maskFor(block.window), n, codes);
    for (const s of hits) {
      if (s.int !== null) {
        if (fraction) fractionInteger(block, s.fraction!, s.int, v.bias, v.classes!, qaMask, s.tally);
        else centreInteger(block, s.centre!, s.int, v.bias, v.classes!, qaMask, s.tally);
      } else if (fraction) {
        fractionFloat(block, s.fraction!, s.float!, v.nodataValue, v.scale, v.offset, v.lo, v.hi, qaMask, s.tally);
      } else {
        centreFloat(block, s.centre!, s.float!, v.nodataValue, v.scale, v.offset, v.lo, v.hi, qaMask, s.tally);
      }
    }
  }
}

/** A target's statistics and exclusion counts from its accumulator and tally. */
function resultOf(s: TargetState, fraction: boolean, v: ValuePath): ZonalSceneResult {
  const counts: ZonalCounts = { nodata: s.tally[NODATA], masked: s.tally[MASKED], implausible: s.tally[IMPLAUSIBLE] };
  if (s.pixels === 0) return { id: s.id, stats: emptyStats(0), counts };
  const summary: ValueSummary | null = s.int !== null ? s.int.summarize(v.scale, v.offset) : s.float!.summarize();
  const valid = s.tally[VALID];
  const validFraction = fraction ? s.tally[VALID_WEIGHT] / s.fraction!.sum : valid / s.pixels;
  if (summary === null) return { id: s.id, stats: { ...emptyStats(s.pixels), validFraction: 0 }, counts };
  const stats: ZonalStats = {
    pixels: s.pixels,
    valid,
    validFraction,
    mean: summary.mean,
    std: summary.std,
    min: summary.min,
    max: summary.max,
    median: summary.median,
    p10: summary.p10,
    p90: summary.p90,
  };
  return { id: s.id, stats, counts };
}
