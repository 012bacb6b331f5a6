/**
 * In-process measurements of the zonal job: where one run's time goes
 * (district file, header, reprojection, masks, decode, statistics, output) and
 * throughput figures of the decode, coverage and statistics stages.
 *
 * The phase profile follows workers/commands/zonal-table.ts step by step and runs
 * the real zonalScene; decode time is measured by wrapping the raster so that
 * every block the driver pulls is timed, and the mask phase is the time from
 * the zonalScene call to its first block request (it builds every mask first).
 */
import { open } from 'node:fs/promises';
import { inflateSync } from 'node:zlib';
import { centreMask } from '../../workers/core/coverage/index.js';
import { reprojectFlat } from '../../workers/core/crs/index.js';
import { readDistricts } from '../../workers/core/districts/index.js';
import { unionWindows, intersectWindows, type Window } from '../../workers/core/raster/affine.js';
import { readRasterHeader } from '../../workers/core/raster/header.js';
import { openRaster, type RasterBlock, type RasterFile } from '../../workers/core/raster/index.js';
import { zonalScene, type ZonalTarget } from '../../workers/core/zonal/index.js';
import { formatRows, type Row } from '../../workers/format.js';
import { GEOJSON_CRS } from '../../workers/core/crs/geojson.js';
import { rasterCrs } from '../../workers/core/raster/placement.js';
import { ZONAL_FIELDS } from '../../workers/commands/zonal-table.js';
import { median } from './timing.js';

/** Milliseconds per phase of one zonal run. */
export interface PhaseProfile {
  districtsMs: number;
  headerMs: number;
  reprojectMs: number;
  maskMs: number;
  decodeMs: number;
  statsMs: number;
  formatMs: number;
  totalMs: number;
  /** Blocks decoded and their pixels. */
  blocks: number;
  decodedPixels: number;
  /** Cells inside districts (sum of mask counts). */
  districtPixels: number;
}

/** A raster whose blocks() calls are timed; everything else passes through. */
class TimedRaster implements RasterFile {
  firstBlocksCallAt: number | null = null;
  decodeMs = 0;
  blocksRead = 0;
  pixelsRead = 0;
  constructor(private readonly inner: RasterFile) {}
  get header() { return this.inner.header; }
  async *blocks(window: Window, band?: number): AsyncIterable<RasterBlock> {
    this.firstBlocksCallAt ??= performance.now();
    const it = this.inner.blocks(window, band)[Symbol.asyncIterator]();
    for (;;) {
      const t0 = performance.now();
      const r = await it.next();
      this.decodeMs += performance.now() - t0;
      if (r.done) return;
      this.blocksRead++;
      this.pixelsRead += r.value.window.width * r.value.window.height;
      yield r.value;
    }
  }
  readWindow(window: Window, band?: number) { return this.inner.readWindow(window, band); }
  validMask(window: Window, band?: number) { return this.inner.validMask(window, band); }
  close() { return this.inner.close(); }
}

/**
 * One zonal run (centre rule, default plausible range, JSON output) with each
 * phase timed. Same steps as zonalTable() + the JSON formatting of the CLI.
 */
export async function profileZonalRun(rasterPath: string, districtsPath: string): Promise<PhaseProfile> {
  const t0 = performance.now();
  const districts = await readDistricts(districtsPath, { idField: 'id', nameField: 'name' });
  const t1 = performance.now();
  const raster = new TimedRaster(await openRaster(rasterPath));
  const t2 = performance.now();
  try {
    const crs = rasterCrs(raster.header);
    const targets = districts.map((d) => ({ id: d.id, geometry: reprojectFlat(d.geometry, GEOJSON_CRS, crs) }));
    const t3 = performance.now();
    const results = await zonalScene(raster, targets, { coverage: 'centre', plausibleKelvin: [170, 360] });
    const t4 = performance.now();
    const rows = results.map((r) => ({ district: r.id, ...r.stats }));
    const text = formatRows(rows as unknown as Row[], 'json', { columns: ZONAL_FIELDS });
    const t5 = performance.now();
    if (text.length === 0) throw new Error('empty output');
    const maskEnd = raster.firstBlocksCallAt ?? t4;
    return {
      districtsMs: t1 - t0,
      headerMs: t2 - t1,
      reprojectMs: t3 - t2,
      maskMs: maskEnd - t3,
      decodeMs: raster.decodeMs,
      statsMs: t4 - maskEnd - raster.decodeMs,
      formatMs: t5 - t4,
      totalMs: t5 - t0,
      blocks: raster.blocksRead,
      decodedPixels: raster.pixelsRead,
      districtPixels: results.reduce((s, r) => s + r.stats.pixels, 0),
    };
  } finally {
    await raster.close();
  }
}

/** The districts of a file reprojected to a raster's CRS (zonal targets). */
export async function loadTargets(rasterPath: string, districtsPath: string): Promise<{ targets: ZonalTarget[]; raster: RasterFile }> {
  const districts = await readDistricts(districtsPath, { idField: 'id', nameField: 'name' });
  const raster = await openRaster(rasterPath);
  const crs = rasterCrs(raster.header);
  return { targets: districts.map((d) => ({ id: d.id, geometry: reprojectFlat(d.geometry, GEOJSON_CRS, crs) })), raster };
}

export interface DecodeFigures {
  pixels: number;
  seconds: number;
  mpixelPerSecond: number;
  /** Decoded megabytes per second (UInt16 = 2 bytes a pixel). */
  megabytesPerSecond: number;
  /** Native inflate alone on the same tiles (compressed bytes already in memory), per image pixel. */
  inflateOnlyMpixelPerSecond: number;
  /** Reading the compressed bytes alone (page cache warm). */
  readOnlySeconds: number;
}

/**
 * Decode every block of a raster through openRaster().blocks() (the reader
 * the zonal job uses), single thread; then, for comparison, the same tiles'
 * compressed bytes read into memory and inflated alone.
 */
export async function measureDecode(path: string): Promise<DecodeFigures> {
  const raster = await openRaster(path);
  const h = raster.header;
  let pixels = 0;
  const t0 = performance.now();
  try {
    for await (const b of raster.blocks({ colOff: 0, rowOff: 0, width: h.width, height: h.height })) pixels += b.window.width * b.window.height;
  } finally {
    await raster.close();
  }
  const seconds = (performance.now() - t0) / 1000;

  const fh = await open(path, 'r');
  const chunks: Buffer[] = [];
  let readOnlySeconds: number;
  try {
    const { layout } = await readRasterHeader(fh, path);
    const t1 = performance.now();
    for (let i = 0; i < layout.offsets.length; i++) {
      const buf = Buffer.allocUnsafe(layout.byteCounts[i]);
      await fh.read(buf, 0, buf.length, layout.offsets[i]);
      chunks.push(buf);
    }
    readOnlySeconds = (performance.now() - t1) / 1000;
  } finally {
    await fh.close();
  }
  const tileBytes = h.blockWidth * h.blockHeight * 2;
  const t2 = performance.now();
  for (const c of chunks) inflateSync(c, { maxOutputLength: tileBytes });
  const inflateSeconds = (performance.now() - t2) / 1000;
  return {
    pixels,
    seconds,
    mpixelPerSecond: pixels / seconds / 1e6,
    megabytesPerSecond: (pixels * 2) / seconds / 1e6,
    inflateOnlyMpixelPerSecond: pixels / inflateSeconds / 1e6,
    readOnlySeconds,
  };
}

export interface CoverageFigures {
  /** Median milliseconds for the masks of every target. */
  ms: number;
  cells: number;
  mpixelPerSecond: number;
}

/** centreMask for every target, repeated; median time. */
export function measureCoverage(targets: readonly ZonalTarget[], raster: RasterFile, repeats = 7): CoverageFigures {
  const h = raster.header;
  const times: number[] = [];
  let cells = 0;
  for (let k = 0; k < repeats; k++) {
    const t0 = performance.now();
    let n = 0;
    for (const t of targets) n += centreMask(t.geometry, h.transform, h.width, h.height, t.id)?.count ?? 0;
    times.push(performance.now() - t0);
    cells = n;
  }
  const ms = median(times);
  return { ms, cells, mpixelPerSecond: cells / (ms / 1000) / 1e6 };
}

/** A raster serving already-decoded blocks from memory (statistics without decode). */
function cachedRaster(inner: RasterFile, blocks: RasterBlock[]): RasterFile {
  return {
    header: inner.header,
    async *blocks(window: Window) {
      for (const b of blocks) if (intersectWindows(b.window, window) !== null) yield b;
    },
    readWindow: () => Promise.reject(new Error('not used by the bench')),
    validMask: (window: Window, band?: number) => inner.validMask(window, band),
    close: () => Promise.resolve(),
  };
}

export interface StatsFigures {
  /** Median ms of zonalScene on cached blocks (masks + statistics, no decode). */
  sceneMs: number;
  /** sceneMs minus the coverage time: pouring cells into accumulators and summarising. */
  statsMs: number;
  cells: number;
  mpixelPerSecond: number;
}

/**
 * zonalScene on blocks decoded beforehand, repeated; statistics time is that
 * minus the masks' time (`coverageMs`, measured by {@link measureCoverage}).
 */
export async function measureStats(targets: readonly ZonalTarget[], raster: RasterFile, coverageMs: number, repeats = 5): Promise<StatsFigures> {
  const h = raster.header;
  const windows = targets
    .map((t) => centreMask(t.geometry, h.transform, h.width, h.height, t.id))
    .filter((m) => m !== null && m.count > 0)
    .map((m) => m!.window);
  const union = unionWindows(windows);
  const blocks: RasterBlock[] = [];
  if (union) for await (const b of raster.blocks(union)) blocks.push(b);
  const mem = cachedRaster(raster, blocks);
  const times: number[] = [];
  let cells = 0;
  for (let k = 0; k < repeats; k++) {
    const t0 = performance.now();
    const res = await zonalScene(mem, targets, { coverage: 'centre', plausibleKelvin: [170, 360] });
    times.push(performance.now() - t0);
    cells = res.reduce((s, r) => s + r.stats.pixels, 0);
  }
  const sceneMs = median(times);
  const statsMs = Math.max(1e-3, sceneMs - coverageMs);
  return { sceneMs, statsMs, cells, mpixelPerSecond: cells / (statsMs / 1000) / 1e6 };
}
