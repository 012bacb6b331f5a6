/**
 * A small GeoTIFF writer of our own: one band, classic little-endian TIFF,
 * tiled or striped, DEFLATE (Node's zlib) with predictor 1/2/3 or no
 * compression, GeoKeys for an EPSG code and GDAL's private tags for nodata,
 * scale/offset and dataset metadata.
 *
 * Layout of a written file: 8-byte header, the one IFD with its out-of-line
 * values, then the tiles/strips in row-major block order. Readers get the
 * directory from the first bytes they fetch.
 *
 * Sources of the byte layout: TIFF 6.0 (Adobe 1992) for the header, IFD, tags
 * 256-339 and predictor 2; Adobe Photoshop TIFF Technical Note 3 (2005) for the
 * floating-point predictor 3; OGC GeoTIFF 1.1 (2019) for tags 33550/33922/34264
 * and the GeoKey directory; GDAL's GTiff driver documentation for tags 42112
 * (GDAL_METADATA) and 42113 (GDAL_NODATA).
 */
import { writeFile } from 'node:fs/promises';
import { endianness } from 'node:os';
import { deflate, deflateSync } from 'node:zlib';
import { promisify } from 'node:util';
import { geokeysToProj4 } from '../crs/frozen-epsg.js';
import { InputError } from '../errors.js';
import type { Epsg } from '../units.js';
import type { Affine } from './affine.js';

const deflateAsync = promisify(deflate);

/** Pixel arrays the writer accepts (one band, row-major). */
export type WritableRaster =
  | Uint8Array
  | Uint16Array
  | Int16Array
  | Uint32Array
  | Int32Array
  | Float32Array
  | Float64Array;

/** Block layout of a written file. Tile sizes are multiples of 16 (TIFF 6.0, section 15). */
export type WriteLayout =
  | { tiled: true; tileWidth: number; tileHeight: number }
  | { tiled: false; rowsPerStrip: number };

export interface WriteGeoTiffOptions {
  /** Image size in pixels. */
  width: number;
  height: number;
  /** One band, row-major: pixel (row, col) at data[row * width + col]. */
  data: WritableRaster;
  /** Corner-convention affine (see affine.ts), map units of the CRS. */
  transform: Affine;
  /** EPSG code of the CRS; projected codes go to ProjectedCSTypeGeoKey, geographic ones to GeographicTypeGeoKey. */
  epsg: Epsg;
  /**
   * Override of the projected/geographic decision, needed only for a code the
   * bundled EPSG table (geotiff-geokeys-to-proj4) does not know.
   */
  modelType?: 'projected' | 'geographic';
  /** Nodata value (GDAL_NODATA, tag 42113); must be representable in the data type. */
  nodata?: number | null;
  /** Physical value = DN * scale + offset (GDAL_METADATA items role="scale"/"offset", sample 0). */
  scale?: number;
  offset?: number;
  /** Dataset-level GDAL_METADATA items, e.g. { ACQUISITION_TIME: '2024-07-14T15:52:00Z' }. */
  metadata?: Record<string, string>;
  /** TIFF DateTime (tag 306), "YYYY:MM:DD HH:MM:SS". */
  dateTime?: string;
  /** Default: tiled 256 x 256. */
  layout?: WriteLayout;
  /** Default 'deflate'. */
  compression?: 'deflate' | 'none';
  /** 1 none, 2 horizontal differencing (integers or floats), 3 floating point (floats only). Default 1. */
  predictor?: 1 | 2 | 3;
  /** zlib level 0-9, default 6. */
  deflateLevel?: number;
}

// TIFF field types (TIFF 6.0, section 2).
const ASCII = 2;
const SHORT = 3;
const LONG = 4;
const DOUBLE = 12;

const TYPE_SIZE: Record<number, number> = { [ASCII]: 1, [SHORT]: 2, [LONG]: 4, [DOUBLE]: 8 };

/** Largest classic TIFF: offsets are 32-bit. */
const CLASSIC_TIFF_MAX_BYTES = 2 ** 32 - 1;

const HOST_LITTLE_ENDIAN = endianness() === 'LE';

interface SampleKind {
  bits: number;
  /** TIFF SampleFormat: 1 unsigned, 2 signed, 3 IEEE float. */
  format: 1 | 2 | 3;
  min: number;
  max: number;
  name: string;
}

function sampleKind(data: unknown, where: string): SampleKind {
  if (data instanceof Uint8Array) return { bits: 8, format: 1, min: 0, max: 255, name: 'UInt8' };
  if (data instanceof Uint16Array) return { bits: 16, format: 1, min: 0, max: 65535, name: 'UInt16' };
  if (data instanceof Int16Array) return { bits: 16, format: 2, min: -32768, max: 32767, name: 'Int16' };
  if (data instanceof Uint32Array) return { bits: 32, format: 1, min: 0, max: 4294967295, name: 'UInt32' };
  if (data instanceof Int32Array) return { bits: 32, format: 2, min: -2147483648, max: 2147483647, name: 'Int32' };
  if (data instanceof Float32Array) return { bits: 32, format: 3, min: -3.4028234663852886e38, max: 3.4028234663852886e38, name: 'Float32' };
  if (data instanceof Float64Array) return { bits: 64, format: 3, min: -Number.MAX_VALUE, max: Number.MAX_VALUE, name: 'Float64' };
  throw new InputError('data must be a Uint8/Uint16/Int16/Uint32/Int32/Float32/Float64 typed array', where);
}

function isPositiveInt(n: unknown): n is number {
  return typeof n === 'number' && Number.isInteger(n) && n > 0;
}

function escapeXml(s: string): string {
  return s.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&apos;' })[c] as string);
}

/** Shortest text that parses back to the same double (GDAL reads these with CPLAtof). */
function numberText(x: number): string {
  if (Number.isNaN(x)) return 'nan';
  if (x === Infinity) return 'inf';
  if (x === -Infinity) return '-inf';
  return String(x);
}

/** Checked, defaulted options. */
interface Plan {
  width: number;
  height: number;
  kind: SampleKind;
  bytesPerSample: number;
  tiled: boolean;
  blockWidth: number;
  blockHeight: number;
  blocksAcross: number;
  blocksDown: number;
  compression: 'deflate' | 'none';
  predictor: 1 | 2 | 3;
  deflateLevel: number;
  padValue: number;
}

function plan(o: WriteGeoTiffOptions, where: string): Plan {
  if (o === null || typeof o !== 'object') throw new InputError('options must be an object', where);
  const { width, height } = o;
  if (!isPositiveInt(width) || !isPositiveInt(height)) {
    throw new InputError(`width and height must be positive integers, got ${String(width)} x ${String(height)}`, where);
  }
  if (width > 0xffffffff || height > 0xffffffff) throw new InputError(`image of ${width} x ${height} pixels is too large for TIFF`, where);
  const kind = sampleKind(o.data, where);
  if (o.data.length !== width * height) {
    throw new InputError(`data has ${o.data.length} values but width x height is ${width * height}`, where);
  }
  const layout: WriteLayout = o.layout ?? { tiled: true, tileWidth: 256, tileHeight: 256 };
  let blockWidth: number, blockHeight: number;
  if (layout.tiled) {
    const { tileWidth, tileHeight } = layout;
    if (!isPositiveInt(tileWidth) || !isPositiveInt(tileHeight) || tileWidth % 16 !== 0 || tileHeight % 16 !== 0 || tileWidth > 65520 || tileHeight > 65520) {
      throw new InputError(`tile size ${String(tileWidth)} x ${String(tileHeight)} must be positive multiples of 16 (TIFF 6.0)`, where);
    }
    blockWidth = tileWidth;
    blockHeight = tileHeight;
  } else if (layout.tiled === false) {
    if (!isPositiveInt(layout.rowsPerStrip)) throw new InputError(`rowsPerStrip must be a positive integer, got ${String(layout.rowsPerStrip)}`, where);
    blockWidth = width;
    blockHeight = Math.min(layout.rowsPerStrip, height);
  } else {
    throw new InputError('layout.tiled must be true or false', where);
  }
  const compression = o.compression ?? 'deflate';
  if (compression !== 'deflate' && compression !== 'none') throw new InputError(`compression must be 'deflate' or 'none', got ${String(compression)}`, where);
  const predictor = o.predictor ?? 1;
  if (predictor !== 1 && predictor !== 2 && predictor !== 3) throw new InputError(`predictor must be 1, 2 or 3, got ${String(predictor)}`, where);
  if (predictor !== 1 && compression === 'none') {
    // libtiff applies predictors only inside its LZW/DEFLATE/ZSTD codecs; an uncompressed file with one is read wrongly.
    throw new InputError(`predictor ${predictor} needs DEFLATE compression`, where);
  }
  if (predictor === 3 && kind.format !== 3) {
    throw new InputError(`predictor 3 (floating point) needs Float32 or Float64 data, got ${kind.name}`, where);
  }
  const deflateLevel = o.deflateLevel ?? 6;
  if (!Number.isInteger(deflateLevel) || deflateLevel < 0 || deflateLevel > 9) throw new InputError(`deflateLevel must be an integer 0-9, got ${String(deflateLevel)}`, where);
  const nodata = o.nodata ?? null;
  if (nodata !== null) {
    if (typeof nodata !== 'number') throw new InputError(`nodata must be a number or null, got ${String(nodata)}`, where);
    if (kind.format !== 3 && (!Number.isInteger(nodata) || nodata < kind.min || nodata > kind.max)) {
      throw new InputError(`nodata ${nodata} is not representable as ${kind.name}`, where);
    }
  }
  for (const [k, v] of [['scale', o.scale], ['offset', o.offset]] as const) {
    if (v !== undefined && (typeof v !== 'number' || !Number.isFinite(v))) throw new InputError(`${k} must be a finite number, got ${String(v)}`, where);
  }
  if (o.scale === 0) throw new InputError('scale must not be 0', where);
  const t = o.transform;
  if (!t || ![t.a, t.b, t.c, t.d, t.e, t.f].every((x) => typeof x === 'number' && Number.isFinite(x))) {
    throw new InputError('transform needs six finite numbers a..f', where);
  }
  if (t.a * t.e - t.b * t.d === 0) throw new InputError('transform is singular (zero pixel size)', where);
  if (o.dateTime !== undefined && !/^\d{4}:\d{2}:\d{2} \d{2}:\d{2}:\d{2}$/.test(o.dateTime)) {
    throw new InputError(`dateTime "${String(o.dateTime)}" must read "YYYY:MM:DD HH:MM:SS" (TIFF 6.0 tag 306)`, where);
  }
  for (const [k, v] of Object.entries(o.metadata ?? {})) {
    if (k === '' || /[\u0000-\u001f]/.test(k) || typeof v !== 'string' || /\u0000/.test(v)) {
      throw new InputError(`metadata item "${k}" needs a non-empty name without control characters and a string value`, where);
    }
  }
  // Edge tiles are padded with nodata (or 0) so that padding never shows up as data.
  const padValue = nodata ?? 0;
  return {
    width,
    height,
    kind,
    bytesPerSample: kind.bits / 8,
    tiled: layout.tiled,
    blockWidth,
    blockHeight,
    blocksAcross: Math.ceil(width / blockWidth),
    blocksDown: Math.ceil(height / blockHeight),
    compression,
    predictor,
    deflateLevel,
    padValue,
  };
}

/** Copy of one block: tiles padded to the full tile size, the last strip cut to the rows left. */
function extractBlock(data: WritableRaster, p: Plan, bx: number, by: number): { bytes: Uint8Array; rowSamples: number; rows: number } {
  const col0 = bx * p.blockWidth;
  const row0 = by * p.blockHeight;
  const rows = p.tiled ? p.blockHeight : Math.min(p.blockHeight, p.height - row0);
  const cols = p.blockWidth;
  const validCols = Math.min(cols, p.width - col0);
  const validRows = Math.min(rows, p.height - row0);
  const Ctor = data.constructor as new (n: number) => WritableRaster;
  const block = new Ctor(cols * rows);
  if (validCols < cols || validRows < rows) block.fill(p.padValue as never);
  for (let r = 0; r < validRows; r++) {
    const src = (row0 + r) * p.width + col0;
    block.set(data.subarray(src, src + validCols) as never, r * cols);
  }
  return { bytes: new Uint8Array(block.buffer, block.byteOffset, block.byteLength), rowSamples: cols, rows };
}

/**
 * Horizontal differencing in place (TIFF 6.0, section 14): each sample minus
 * its left neighbour, modulo 2^bits, on the samples' integer bit patterns.
 */
function applyHorizontalPredictor(bytes: Uint8Array, bits: number, rowSamples: number, rows: number): void {
  const buf = bytes.buffer;
  const off = bytes.byteOffset;
  const n = rowSamples * rows;
  const view =
    bits === 8 ? new Uint8Array(buf, off, n)
    : bits === 16 ? new Uint16Array(buf, off, n)
    : bits === 32 ? new Uint32Array(buf, off, n)
    : new BigUint64Array(buf, off, n);
  if (view instanceof BigUint64Array) {
    for (let r = 0; r < rows; r++) {
      const base = r * rowSamples;
      for (let i = rowSamples - 1; i > 0; i--) view[base + i] = view[base + i] - view[base + i - 1];
    }
    return;
  }
  for (let r = 0; r < rows; r++) {
    const base = r * rowSamples;
    // Typed-array stores wrap modulo 2^bits, which is the arithmetic the predictor wants.
    for (let i = rowSamples - 1; i > 0; i--) view[base + i] = view[base + i] - view[base + i - 1];
  }
}

/**
 * Floating-point predictor (Adobe TIFF Technical Note 3, 2005): per row, the
 * bytes of all samples are regrouped most significant byte first (all MSBs,
 * then the next bytes, ...), then each byte minus its left neighbour modulo 256.
 * Returns a new byte array (already in file byte order).
 */
function applyFloatingPointPredictor(bytes: Uint8Array, bytesPerSample: number, rowSamples: number, rows: number): Uint8Array {
  const out = new Uint8Array(bytes.length);
  const rowBytes = rowSamples * bytesPerSample;
  for (let r = 0; r < rows; r++) {
    const base = r * rowBytes;
    for (let i = 0; i < rowSamples; i++) {
      const s = base + i * bytesPerSample;
      for (let k = 0; k < bytesPerSample; k++) {
        // k = 0 is the most significant byte.
        out[base + k * rowSamples + i] = bytes[s + (HOST_LITTLE_ENDIAN ? bytesPerSample - 1 - k : k)];
      }
    }
    for (let j = rowBytes - 1; j > 0; j--) out[base + j] = (out[base + j] - out[base + j - 1]) & 0xff;
  }
  return out;
}

/** Reverse byte order of each sample (only on big-endian hosts: files are little-endian). */
function toLittleEndian(bytes: Uint8Array, bytesPerSample: number): void {
  if (HOST_LITTLE_ENDIAN || bytesPerSample === 1) return;
  for (let s = 0; s < bytes.length; s += bytesPerSample) {
    for (let i = 0, j = bytesPerSample - 1; i < j; i++, j--) {
      const t = bytes[s + i];
      bytes[s + i] = bytes[s + j];
      bytes[s + j] = t;
    }
  }
}

/** Uncompressed, predicted, little-endian bytes of every block, in row-major block order. */
function* rawBlocks(data: WritableRaster, p: Plan): Generator<Uint8Array> {
  for (let by = 0; by < p.blocksDown; by++) {
    for (let bx = 0; bx < p.blocksAcross; bx++) {
      const { bytes, rowSamples, rows } = extractBlock(data, p, bx, by);
      if (p.predictor === 3) {
        yield applyFloatingPointPredictor(bytes, p.bytesPerSample, rowSamples, rows);
        continue;
      }
      if (p.predictor === 2) applyHorizontalPredictor(bytes, p.kind.bits, rowSamples, rows);
      toLittleEndian(bytes, p.bytesPerSample);
      yield bytes;
    }
  }
}

interface Tag {
  code: number;
  type: number;
  values: number[] | string;
}

function geoKeyDirectory(epsg: number, modelType: 'projected' | 'geographic'): number[] {
  // OGC GeoTIFF 1.1: header {KeyDirectoryVersion 1, KeyRevision 1, MinorRevision 0, NumberOfKeys},
  // then {KeyID, TIFFTagLocation (0 = value inline), Count, Value} sorted by KeyID.
  const keys: [number, number][] = [
    [1024, modelType === 'projected' ? 1 : 2], // GTModelTypeGeoKey: 1 projected, 2 geographic
    [1025, 1], // GTRasterTypeGeoKey: 1 RasterPixelIsArea
    modelType === 'projected' ? [3072, epsg] : [2048, epsg], // ProjectedCSTypeGeoKey / GeographicTypeGeoKey
  ];
  keys.sort((x, y) => x[0] - y[0]);
  const out = [1, 1, 0, keys.length];
  for (const [id, v] of keys) out.push(id, 0, 1, v);
  return out;
}

function modelTypeOf(o: WriteGeoTiffOptions, where: string): 'projected' | 'geographic' {
  const epsg = o.epsg;
  if (!Number.isInteger(epsg) || epsg <= 0 || epsg > 65535) {
    throw new InputError(`EPSG code ${String(epsg)} must be an integer 1-65535 (GeoKeys are 16-bit)`, where);
  }
  if (o.modelType !== undefined) {
    if (o.modelType !== 'projected' && o.modelType !== 'geographic') throw new InputError(`modelType must be 'projected' or 'geographic'`, where);
    return o.modelType;
  }
  const r = geokeysToProj4({ ProjectedCSTypeGeoKey: epsg, GTModelTypeGeoKey: 1 });
  if (r.errors && Object.keys(r.errors).length > 0) {
    throw new InputError(`EPSG code ${epsg} is not in the bundled EPSG table; pass modelType 'projected' or 'geographic'`, where);
  }
  if (/\+proj=geocent\b/.test(r.proj4)) throw new InputError(`EPSG code ${epsg} is a geocentric CRS, which a raster cannot use`, where);
  return r.isGCS ? 'geographic' : 'projected';
}

function gdalMetadataXml(o: WriteGeoTiffOptions): string | null {
  const items: string[] = [];
  // GDAL escapes item values twice (CPLEscapeString, then the XML serializer) and names once, and
  // unescapes values twice when reading; follow it so that '&', '<' and quotes survive.
  for (const [k, v] of Object.entries(o.metadata ?? {})) items.push(`  <Item name="${escapeXml(k)}">${escapeXml(escapeXml(v))}</Item>`);
  if (o.offset !== undefined) items.push(`  <Item name="OFFSET" sample="0" role="offset">${numberText(o.offset)}</Item>`);
  if (o.scale !== undefined) items.push(`  <Item name="SCALE" sample="0" role="scale">${numberText(o.scale)}</Item>`);
  if (items.length === 0) return null;
  return `<GDALMetadata>\n${items.join('\n')}\n</GDALMetadata>\n`;
}

function buildTags(o: WriteGeoTiffOptions, p: Plan, modelType: 'projected' | 'geographic', blockOffsets: number[], blockCounts: number[]): Tag[] {
  const tags: Tag[] = [
    { code: 256, type: LONG, values: [p.width] }, // ImageWidth
    { code: 257, type: LONG, values: [p.height] }, // ImageLength
    { code: 258, type: SHORT, values: [p.kind.bits] }, // BitsPerSample
    { code: 259, type: SHORT, values: [p.compression === 'deflate' ? 8 : 1] }, // Compression: 8 = Adobe DEFLATE (zlib stream)
    { code: 262, type: SHORT, values: [1] }, // PhotometricInterpretation: BlackIsZero
    { code: 277, type: SHORT, values: [1] }, // SamplesPerPixel
    { code: 284, type: SHORT, values: [1] }, // PlanarConfiguration: contiguous
    { code: 305, type: ASCII, values: 'heatledger' }, // Software
    { code: 339, type: SHORT, values: [p.kind.format] }, // SampleFormat
  ];
  if (p.tiled) {
    tags.push(
      { code: 322, type: SHORT, values: [p.blockWidth] }, // TileWidth
      { code: 323, type: SHORT, values: [p.blockHeight] }, // TileLength
      { code: 324, type: LONG, values: blockOffsets }, // TileOffsets
      { code: 325, type: LONG, values: blockCounts }, // TileByteCounts
    );
  } else {
    tags.push(
      { code: 273, type: LONG, values: blockOffsets }, // StripOffsets
      { code: 278, type: LONG, values: [p.blockHeight] }, // RowsPerStrip
      { code: 279, type: LONG, values: blockCounts }, // StripByteCounts
    );
  }
  if (o.dateTime !== undefined) tags.push({ code: 306, type: ASCII, values: o.dateTime });
  if (p.predictor !== 1) tags.push({ code: 317, type: SHORT, values: [p.predictor] });
  const t = o.transform;
  if (t.b === 0 && t.d === 0 && t.a > 0 && t.e < 0) {
    // North-up: ModelPixelScale (ScaleX, ScaleY, ScaleZ) and one tiepoint (I, J, K, X, Y, Z) at the
    // upper-left corner (GeoTIFF 1.1, pixel-is-area raster space).
    tags.push({ code: 33550, type: DOUBLE, values: [t.a, -t.e, 0] });
    tags.push({ code: 33922, type: DOUBLE, values: [0, 0, 0, t.c, t.f, 0] });
  } else {
    // Rotated, sheared or flipped: the 4 x 4 ModelTransformation, row-major (GeoTIFF 1.1).
    tags.push({ code: 34264, type: DOUBLE, values: [t.a, t.b, 0, t.c, t.d, t.e, 0, t.f, 0, 0, 0, 0, 0, 0, 0, 1] });
  }
  tags.push({ code: 34735, type: SHORT, values: geoKeyDirectory(o.epsg, modelType) });
  const xml = gdalMetadataXml(o);
  if (xml !== null) tags.push({ code: 42112, type: ASCII, values: xml });
  const nodata = o.nodata ?? null;
  if (nodata !== null) tags.push({ code: 42113, type: ASCII, values: numberText(nodata) });
  tags.sort((x, y) => x.code - y.code);
  return tags;
}

function tagCount(tag: Tag): number {
  // ASCII values carry a terminating NUL (TIFF 6.0, section 2).
  return typeof tag.values === 'string' ? Buffer.byteLength(tag.values, 'latin1') + 1 : tag.values.length;
}

/** Bytes of the IFD plus its out-of-line values, for `tags` placed at `ifdOffset`. */
function directorySize(tags: Tag[]): number {
  let size = 2 + tags.length * 12 + 4;
  for (const tag of tags) {
    const bytes = tagCount(tag) * TYPE_SIZE[tag.type];
    if (bytes > 4) size += bytes + (bytes & 1); // keep values on word boundaries
  }
  return size;
}

function encodeDirectory(tags: Tag[], ifdOffset: number): Buffer {
  const size = directorySize(tags);
  const buf = Buffer.alloc(size);
  buf.writeUInt16LE(tags.length, 0);
  let extra = ifdOffset + 2 + tags.length * 12 + 4; // absolute offset of the next out-of-line value
  tags.forEach((tag, i) => {
    const e = 2 + i * 12;
    const count = tagCount(tag);
    const bytes = count * TYPE_SIZE[tag.type];
    buf.writeUInt16LE(tag.code, e);
    buf.writeUInt16LE(tag.type, e + 2);
    buf.writeUInt32LE(count, e + 4);
    let at: number;
    if (bytes <= 4) {
      at = e + 8;
    } else {
      buf.writeUInt32LE(extra, e + 8);
      at = extra - ifdOffset;
      extra += bytes + (bytes & 1);
    }
    if (typeof tag.values === 'string') {
      buf.write(tag.values, at, 'latin1');
    } else {
      tag.values.forEach((v, k) => {
        if (tag.type === SHORT) buf.writeUInt16LE(v, at + 2 * k);
        else if (tag.type === LONG) buf.writeUInt32LE(v, at + 4 * k);
        else buf.writeDoubleLE(v, at + 8 * k);
      });
    }
  });
  buf.writeUInt32LE(0, 2 + tags.length * 12); // no next IFD
  return buf;
}

/** Header + directory + blocks of a file whose blocks are already encoded. */
function assemble(o: WriteGeoTiffOptions, p: Plan, modelType: 'projected' | 'geographic', blocks: Uint8Array[], where: string): Uint8Array[] {
  const placeholder = blocks.map(() => 0);
  const probe = buildTags(o, p, modelType, placeholder, placeholder);
  const ifdOffset = 8;
  const dataStart = ifdOffset + directorySize(probe);
  const offsets: number[] = [];
  const counts: number[] = [];
  let at = dataStart;
  for (const b of blocks) {
    offsets.push(at);
    counts.push(b.length);
    at += b.length;
  }
  if (at > CLASSIC_TIFF_MAX_BYTES) {
    throw new InputError(`the file would be ${at} bytes, over the 4 GiB limit of classic TIFF (BigTIFF is not written)`, where);
  }
  const header = Buffer.alloc(8);
  header.write('II', 0, 'latin1'); // little-endian
  header.writeUInt16LE(42, 2);
  header.writeUInt32LE(ifdOffset, 4);
  const directory = encodeDirectory(buildTags(o, p, modelType, offsets, counts), ifdOffset);
  return [header, directory, ...blocks];
}

/**
 * Encode one band as a GeoTIFF in memory.
 *
 * @param options pixel data, geotransform (corner convention, CRS map units),
 *   EPSG code, optional nodata/scale/offset/metadata/DateTime, block layout
 *   (default 256 x 256 tiles), compression (default DEFLATE) and predictor.
 * @returns the complete file bytes (classic TIFF, little-endian)
 * @throws InputError for inconsistent options, or a file that would exceed 4 GiB
 * @example
 * const buf = encodeGeoTiff({ width: 2, height: 1, data: new Uint16Array([1, 2]),
 *   transform: { a: 30, b: 0, c: 500000, d: 0, e: -30, f: 4900000 }, epsg: 32625 });
 */
export function encodeGeoTiff(options: WriteGeoTiffOptions): Buffer {
  const where = 'GeoTIFF writer';
  const p = plan(options, where);
  const modelType = modelTypeOf(options, where);
  const blocks: Uint8Array[] = [];
  for (const raw of rawBlocks(options.data, p)) {
    blocks.push(p.compression === 'deflate' ? deflateSync(raw, { level: p.deflateLevel }) : raw);
  }
  return Buffer.concat(assemble(options, p, modelType, blocks, where));
}

/**
 * Write one band as a GeoTIFF file. Same options and result as
 * {@link encodeGeoTiff}; blocks are compressed on libuv's thread pool, a few
 * at a time, so several cores share the work.
 *
 * @param path output file (overwritten)
 * @throws InputError naming `path` for inconsistent options
 * @example
 * await writeGeoTiff('/tmp/x.tif', { width: 512, height: 512, data, transform, epsg: 32625,
 *   nodata: 0, scale: 0.00341802, offset: 149, predictor: 2 });
 */
export async function writeGeoTiff(path: string, options: WriteGeoTiffOptions): Promise<void> {
  const p = plan(options, path);
  const modelType = modelTypeOf(options, path);
  const blocks: Uint8Array[] = [];
  if (p.compression === 'none') {
    for (const raw of rawBlocks(options.data, p)) blocks.push(raw);
  } else {
    const inFlight = 8;
    let batch: Promise<Buffer>[] = [];
    for (const raw of rawBlocks(options.data, p)) {
      batch.push(deflateAsync(raw, { level: p.deflateLevel }));
      if (batch.length === inFlight) {
        blocks.push(...(await Promise.all(batch)));
        batch = [];
      }
    }
    blocks.push(...(await Promise.all(batch)));
  }
  await writeFile(path, assemble(options, p, modelType, blocks, path));
}
