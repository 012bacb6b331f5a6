/**
 * Block reader: reads the compressed bytes of tiles/strips with a file handle,
 * decodes them with the decoder registry, undoes byte order and predictor,
 * and hands out single-band typed arrays.
 */
import { open, type FileHandle } from 'node:fs/promises';
import { InputError } from '../errors.js';
import { intersectWindows, type Window } from './affine.js';
import { CorruptBlockError, compressionName, decoderFor } from './decoders/index.js';
import { swapBytes, undoFloatingPoint, undoHorizontal } from './decoders/predictor.js';
import { readRasterHeader, type BlockLayout, type RasterHeader } from './header.js';
import { InternalMaskReader, type MaskLayout } from './mask.js';
import { readExactlySync } from './tiff.js';

/** Blocks read and started ahead of the one in use. */
const AHEAD = 1;

export type TypedArray = Uint8Array | Int8Array | Uint16Array | Int16Array | Uint32Array | Int32Array | Float32Array | Float64Array;

/** One decoded tile/strip, clipped to the image. */
export interface RasterBlock {
  /** Absolute pixel window of the valid part. */
  window: Window;
  /** Single band; pixel (r, c) of the window at data[r * stride + c]. */
  data: TypedArray;
  stride: number;
}

export interface RasterFile {
  readonly header: RasterHeader;
  /** Blocks meeting the window (clamped to the image), each once, in row-major block order. `band` is 0-based. */
  blocks(window: Window, band?: number): AsyncIterable<RasterBlock>;
  /** Row-major pixels of the window clamped to the image (see {@link clampWindow}). `band` is 0-based. */
  readWindow(window: Window, band?: number): Promise<TypedArray>;
  /**
   * Validity of the pixels of `window` (clamped to the image) under the
   * raster's mask (header.mask: internal mask and/or alpha band), row-major:
   * 1 = valid, 0 = masked out. Null when the raster has no mask for `band`.
   * Nodata is not part of it (the caller tests values).
   */
  validMask(window: Window, band?: number): Promise<Uint8Array | null>;
  close(): Promise<void>;
}

type ArrayCtor = new (buffer: ArrayBufferLike, byteOffset: number, length: number) => TypedArray;
type AllocCtor = new (length: number) => TypedArray;

function arrayType(h: RasterHeader): ArrayCtor & AllocCtor {
  const key = `${h.sampleFormat}${h.bitsPerSample}`;
  switch (key) {
    case 'uint8': return Uint8Array as never;
    case 'uint16': return Uint16Array as never;
    case 'uint32': return Uint32Array as never;
    case 'int8': return Int8Array as never;
    case 'int16': return Int16Array as never;
    case 'int32': return Int32Array as never;
    case 'float32': return Float32Array as never;
    default: return Float64Array as never;
  }
}

/**
 * The part of `window` inside an image of `width` x `height`, or null when it
 * lies wholly outside. Throws InputError for windows that are not whole,
 * non-negative sizes.
 * @example clampWindow({colOff: -5, rowOff: 0, width: 10, height: 10}, 100, 100, 'a.tif') // {colOff: 0, rowOff: 0, width: 5, height: 10}
 */
export function clampWindow(window: Window, width: number, height: number, path: string): Window | null {
  const { colOff, rowOff } = window;
  if (![colOff, rowOff, window.width, window.height].every(Number.isSafeInteger) || window.width < 0 || window.height < 0) {
    throw new InputError(`read window ${JSON.stringify(window)} is not whole pixels with non-negative size`, path);
  }
  return intersectWindows(window, { colOff: 0, rowOff: 0, width, height });
}

/** A private copy (Buffer#slice would only make a view). */
function copyBytes(x: Uint8Array): Uint8Array {
  const c = new Uint8Array(x.length);
  c.set(x);
  return c;
}

class GeoTiffFile implements RasterFile {
  readonly header: RasterHeader;
  private readonly layout: BlockLayout;
  private fh: FileHandle | null;
  private readonly ctor: ArrayCtor & AllocCtor;
  private readonly mask: InternalMaskReader | null;
  private maskFh: FileHandle | null;

  constructor(fh: FileHandle, header: RasterHeader, layout: BlockLayout, maskLayout: MaskLayout | null, maskFile: { fh: FileHandle; path: string } | null) {
    this.fh = fh;
    this.header = header;
    this.layout = layout;
    this.ctor = arrayType(header);
    this.maskFh = maskFile?.fh ?? null;
    // The mask's bytes are in the raster file itself, or in the .msk file beside it.
    const maskPath = maskFile?.path ?? header.path;
    this.mask = maskLayout === null ? null : new InternalMaskReader(() => {
      const f = maskFile ? this.maskFh : this.fh;
      if (!f) throw new InputError('raster file is already closed', maskPath);
      return f.fd;
    }, maskPath, maskLayout, header.width, header.height);
  }

  async validMask(window: Window, band = 0): Promise<Uint8Array | null> {
    const h = this.header;
    this.checkBand(band);
    const alpha = h.alphaBand !== null && h.alphaBand !== band ? h.alphaBand : null;
    if (this.mask === null && alpha === null) return null;
    const w = clampWindow(window, h.width, h.height, h.path);
    if (!w) return new Uint8Array(0);
    const out = new Uint8Array(w.width * w.height).fill(1);
    if (this.mask !== null) await this.mask.clearInvalid(w, band, out);
    if (alpha !== null) {
      const a = await this.readWindow(w, alpha);
      for (let i = 0; i < out.length; i++) {
        const v = a[i];
        if (v === 0 || v !== v) out[i] = 0; // alpha 0 (or NaN) = invalid (GDAL RFC 15)
      }
    }
    return out;
  }

  private checkBand(band: number): void {
    if (!Number.isInteger(band) || band < 0 || band >= this.header.bands) {
      throw new InputError(`band ${band} does not exist (the file has bands 0..${this.header.bands - 1})`, this.header.path);
    }
  }

  async *blocks(window: Window, band = 0): AsyncIterable<RasterBlock> {
    const h = this.header;
    this.checkBand(band);
    const w = clampWindow(window, h.width, h.height, h.path);
    if (!w) return;
    const bw = h.blockWidth, bh = h.blockHeight;
    const c0 = Math.floor(w.colOff / bw), c1 = Math.floor((w.colOff + w.width - 1) / bw);
    const r0 = Math.floor(w.rowOff / bh), r1 = Math.floor((w.rowOff + w.height - 1) / bh);
    const across = c1 - c0 + 1, total = across * (r1 - r0 + 1);
    // The next block is read and handed to its decoder before the current one
    // goes out, so a decoder that works off the main thread (a registered one
    // may) overlaps with the caller's work on the current block. Predictor and
    // band extraction happen in order, as each block is taken.
    const started: Array<Promise<Uint8Array | null>> = [];
    let next = 0;
    const startNext = (): void => {
      const j = next++;
      const p = this.startBlock(r0 + Math.floor(j / across), c0 + (j % across), band);
      p.catch(() => undefined); // raised when its turn comes, not as an unhandled rejection
      started.push(p);
    };
    while (next < total && next < AHEAD) startNext();
    for (let j = 0; j < total; j++) {
      const raw = await started.shift()!;
      if (next < total) startNext();
      yield this.finishBlock(r0 + Math.floor(j / across), c0 + (j % across), band, raw);
    }
  }

  /** Geometry of block (row br, column bc) of `band`. */
  private blockPlace(br: number, bc: number, band: number) {
    const h = this.header, L = this.layout;
    const bw = h.blockWidth, bh = h.blockHeight;
    const colOff = bc * bw, rowOff = br * bh;
    const window: Window = { colOff, rowOff, width: Math.min(bw, h.width - colOff), height: Math.min(bh, h.height - rowOff) };
    const chunky = L.planar === 1 ? L.samplesPerPixel : 1;
    const plane = L.planar === 2 ? band : 0;
    const index = plane * L.blocksPerBand + br * L.blocksAcross + bc;
    // Tiles are always stored whole; a last strip may hold only the rows left (TIFF 6.0, RowsPerStrip).
    const storedRows = h.tiled ? bh : window.height;
    const rowSamples = bw * chunky;
    const fullBytes = bh * rowSamples * L.bytesPerSample;
    const needBytes = storedRows * rowSamples * L.bytesPerSample;
    const where = `${h.tiled ? 'tile' : 'strip'} ${index}`;
    return { window, chunky, index, storedRows, rowSamples, fullBytes, needBytes, where };
  }

  /**
   * Read a block's stored bytes (synchronously: a local file's bytes are
   * usually in the page cache, and a synchronous read spares a round trip
   * through the thread pool per block) and start decompressing them. Resolves to the
   * decompressed bytes (a private array), or null for a sparse block.
   */
  private async startBlock(br: number, bc: number, band: number): Promise<Uint8Array | null> {
    const h = this.header, L = this.layout;
    if (!this.fh) throw new InputError('raster file is already closed', h.path);
    const { index, fullBytes, needBytes, where } = this.blockPlace(br, bc, band);
    const offset = L.offsets[index], count = L.byteCounts[index];
    // Sparse block (GDAL SPARSE_OK): GDAL reads it as nodata, or 0 without nodata.
    if (offset === 0 && count === 0) return null;
    if (h.compression === 1) {
      if (count < needBytes) throw new InputError(`${where} holds ${count} bytes, fewer than the ${needBytes} its size needs`, h.path);
      return readExactlySync(this.fh.fd, h.path, offset, Math.min(count, fullBytes), where);
    }
    const stored = readExactlySync(this.fh.fd, h.path, offset, count, where);
    let raw: Uint8Array;
    try {
      raw = await decoderFor(h.compression)!(stored, fullBytes);
    } catch (e) {
      if (e instanceof CorruptBlockError) throw new InputError(`${where} is corrupt: ${e.message}`, h.path);
      throw e;
    }
    return raw;
  }

  /** Predictor, byte order and band extraction of a decompressed block. */
  private finishBlock(br: number, bc: number, band: number, decoded: Uint8Array | null): RasterBlock {
    const h = this.header, L = this.layout;
    const bw = h.blockWidth, bh = h.blockHeight;
    const { window, chunky, storedRows, rowSamples, needBytes, where } = this.blockPlace(br, bc, band);
    if (decoded === null) {
      const fill = new this.ctor(bw * bh);
      const nd = h.nodata;
      if (nd !== null && nd !== 0) fill.fill(nd as never);
      return { window, data: fill, stride: bw };
    }
    let raw = decoded;
    if (raw.length < needBytes) {
      throw new InputError(`${where} decodes to ${raw.length} bytes but ${compressionName(h.compression)} data of a ${bw} x ${storedRows} block needs ${needBytes}`, h.path);
    }
    // Work on an aligned private copy only when needed (the decoders return fresh buffers).
    const bps = L.bytesPerSample;
    if (raw.byteOffset % bps !== 0) raw = copyBytes(raw);
    raw = raw.subarray(0, needBytes);

    try {
      if (h.predictor === 3) {
        undoFloatingPoint(raw, bps, rowSamples, chunky, storedRows);
      } else {
        if (!L.littleEndian && bps > 1) swapBytes(raw, bps);
        if (h.predictor === 2) undoHorizontal(raw, bps, rowSamples, chunky, storedRows);
      }
    } catch (e) {
      if (e instanceof CorruptBlockError) throw new InputError(`${where}: ${e.message}`, h.path);
      throw e;
    }

    const all = new this.ctor(raw.buffer, raw.byteOffset, storedRows * rowSamples);
    if (chunky === 1) return { window, data: all, stride: bw };
    // Interleaved samples: pull out the requested band.
    const n = storedRows * bw;
    const data = new this.ctor(n);
    for (let i = 0, j = band; i < n; i++, j += chunky) data[i] = all[j];
    return { window, data, stride: bw };
  }

  async readWindow(window: Window, band = 0): Promise<TypedArray> {
    const h = this.header;
    this.checkBand(band);
    const w = clampWindow(window, h.width, h.height, h.path);
    if (!w) return new this.ctor(0);
    const out = new this.ctor(w.width * w.height);
    for await (const b of this.blocks(w, band)) {
      const part = intersectWindows(b.window, w)!;
      for (let r = 0; r < part.height; r++) {
        const src = (part.rowOff - b.window.rowOff + r) * b.stride + (part.colOff - b.window.colOff);
        const dst = (part.rowOff - w.rowOff + r) * w.width + (part.colOff - w.colOff);
        out.set(b.data.subarray(src, src + part.width) as never, dst);
      }
    }
    return out;
  }

  async close(): Promise<void> {
    const fh = this.fh, maskFh = this.maskFh;
    this.fh = null;
    this.maskFh = null;
    if (fh) await fh.close();
    if (maskFh) await maskFh.close();
  }
}

/**
 * Open a local GeoTIFF or COG and read its header (no pixels yet).
 * @param path file path
 * @returns the open raster; call `close()` when done (try/finally)
 * @throws InputError naming the path for a missing, unreadable or malformed file
 * @example
 * const r = await openRaster('scene.tif');
 * try { for await (const b of r.blocks({colOff: 0, rowOff: 0, width: 256, height: 256})) use(b); }
 * finally { await r.close(); }
 */
export async function openRaster(path: string): Promise<RasterFile> {
  let fh: FileHandle;
  try {
    fh = await open(path, 'r');
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    throw new InputError(code === 'ENOENT' ? 'file does not exist' : `cannot open file (${code ?? (e as Error).message})`, path);
  }
  try {
    const { header, layout, maskLayout, maskFile } = await readRasterHeader(fh, path);
    return new GeoTiffFile(fh, header, layout, maskLayout, maskFile);
  } catch (e) {
    await fh.close();
    if (e instanceof InputError) throw e;
    const code = (e as NodeJS.ErrnoException).code;
    if (code === 'EISDIR') throw new InputError('is a directory, not a GeoTIFF', path);
    throw e;
  }
}
