/**
 * RasterHeader and block layout of a GeoTIFF, from its first image directory,
 * without reading any pixel. All size checks happen here, before the reader
 * allocates anything for pixels.
 */
import type { FileHandle } from 'node:fs/promises';
import { InputError } from '../errors.js';
import type { Epsg } from '../units.js';
import type { Affine } from './affine.js';
import { acquisitionTime } from './acqtime.js';
import { compressionName, decoderFor } from './decoders/index.js';
import { parseGdalMetadata, parseNodata } from './gdalmeta.js';
import { crsDefinitionOf, epsgOf, geotransform, isPixelIsPoint, parseGeoKeys, type GeoKeyValue } from './geokeys.js';
import { readAscii, readFirstDirectory, readNumbers, readScalar, type TiffDirectory } from './tiff.js';

/** TIFF tag numbers (TIFF 6.0; GeoTIFF 1.1; GDAL private tags). */
export const TAG = {
  ImageWidth: 256, ImageLength: 257, BitsPerSample: 258, Compression: 259,
  StripOffsets: 273, SamplesPerPixel: 277, RowsPerStrip: 278, StripByteCounts: 279,
  PlanarConfiguration: 284, DateTime: 306, Predictor: 317,
  TileWidth: 322, TileLength: 323, TileOffsets: 324, TileByteCounts: 325, SampleFormat: 339,
  ModelPixelScale: 33550, ModelTiepoint: 33922, ModelTransformation: 34264,
  GeoKeyDirectory: 34735, GeoDoubleParams: 34736, GeoAsciiParams: 34737,
  GdalMetadata: 42112, GdalNodata: 42113,
} as const;

/** Largest image we read, in pixels per band (the reader's and its callers' indices stay int32). */
export const MAX_PIXELS = 2 ** 31;
/** Largest decoded block (tile or strip, all samples) in bytes. */
export const MAX_BLOCK_BYTES = 256 * 1024 * 1024;

export interface RasterHeader {
  path: string;
  width: number;
  height: number;
  bands: number;
  sampleFormat: 'uint' | 'int' | 'float';
  bitsPerSample: number;
  /** Pixel-is-area corner convention (pixel-is-point shifted by half a pixel). */
  transform: Affine;
  /** From GeoKeys; null for a user-defined CRS or none. */
  epsg: Epsg | null;
  /** proj4 definition (also for user-defined CRSs); null = no CRS. */
  crsDefinition: string | null;
  /** GDAL_NODATA tag; NaN for "nan". */
  nodata: number | null;
  /** Physical value = DN * scale + offset (GDAL metadata); default 1 / 0. */
  scale: number;
  offset: number;
  /** UTC "YYYY-MM-DDTHH:MM:SSZ". */
  acquiredAt: string | null;
  /** GDAL metadata items (dataset level, default domain). */
  metadata: Record<string, string>;
  blockWidth: number;
  blockHeight: number;
  tiled: boolean;
  compression: number;
  predictor: number;
}

/** Where each block's bytes are and how to decode them (reader internals). */
export interface BlockLayout {
  readonly littleEndian: boolean;
  readonly samplesPerPixel: number;
  readonly planar: 1 | 2;
  readonly bytesPerSample: number;
  readonly blocksAcross: number;
  readonly blocksDown: number;
  readonly blocksPerBand: number;
  readonly offsets: Float64Array;
  readonly byteCounts: Float64Array;
  readonly fileSize: number;
}

export interface ParsedRaster {
  readonly header: RasterHeader;
  readonly layout: BlockLayout;
}

const SAMPLE_FORMATS: Record<number, RasterHeader['sampleFormat']> = { 1: 'uint', 2: 'int', 3: 'float' };

function uniform(values: number[], name: string, path: string): number {
  const v = values[0];
  for (const x of values) if (x !== v) throw new InputError(`${name} differs between bands (${values.join(', ')}), which is not supported`, path);
  return v;
}

/**
 * Read the header and block layout of the first image of an open TIFF.
 * @param fh open file (the caller closes it)
 * @param path file path, for messages
 */
export async function readRasterHeader(fh: FileHandle, path: string): Promise<ParsedRaster> {
  const dir: TiffDirectory = await readFirstDirectory(fh, path);
  const scalar = (tag: number, name: string) => readScalar(fh, dir, path, tag, name);

  const width = await scalar(TAG.ImageWidth, 'ImageWidth');
  const height = await scalar(TAG.ImageLength, 'ImageLength');
  if (width === null || height === null) throw new InputError('TIFF image has no ImageWidth/ImageLength tag', path);
  if (!Number.isInteger(width) || !Number.isInteger(height) || width < 1 || height < 1) {
    throw new InputError(`image size ${width} x ${height} is not a positive whole number of pixels`, path);
  }
  if (width * height > MAX_PIXELS) {
    throw new InputError(`image size ${width} x ${height} exceeds the ${MAX_PIXELS} pixels this reader accepts`, path);
  }
  const spp = (await scalar(TAG.SamplesPerPixel, 'SamplesPerPixel')) ?? 1;
  if (!Number.isInteger(spp) || spp < 1 || spp > 4096) throw new InputError(`SamplesPerPixel ${spp} is implausible`, path);

  const bitsList = (await readNumbers(fh, dir, path, TAG.BitsPerSample, 'BitsPerSample', spp)) ?? [1];
  const bits = uniform(bitsList, 'BitsPerSample', path);
  const fmtList = (await readNumbers(fh, dir, path, TAG.SampleFormat, 'SampleFormat', spp)) ?? [1];
  const fmtCode = uniform(fmtList, 'SampleFormat', path);
  const sampleFormat = SAMPLE_FORMATS[fmtCode];
  const supported =
    (sampleFormat === 'uint' || sampleFormat === 'int') ? [8, 16, 32].includes(bits) :
    sampleFormat === 'float' ? [32, 64].includes(bits) : false;
  if (!sampleFormat || !supported) {
    throw new InputError(`sample format ${sampleFormat ?? `code ${fmtCode}`} with ${bits} bits per sample is not supported`, path);
  }
  const bytesPerSample = bits / 8;

  const compression = (await scalar(TAG.Compression, 'Compression')) ?? 1;
  if (!decoderFor(compression)) throw new InputError(`compression ${compressionName(compression)} is not supported`, path);
  const predictor = (await scalar(TAG.Predictor, 'Predictor')) ?? 1;
  if (predictor !== 1 && predictor !== 2 && predictor !== 3) throw new InputError(`predictor ${predictor} is not supported`, path);
  if (predictor === 3 && sampleFormat !== 'float') throw new InputError('predictor 3 (floating point) on integer samples is invalid', path);
  const planarCode = (await scalar(TAG.PlanarConfiguration, 'PlanarConfiguration')) ?? 1;
  if (planarCode !== 1 && planarCode !== 2) throw new InputError(`PlanarConfiguration ${planarCode} is invalid`, path);
  const planar: 1 | 2 = spp === 1 ? 1 : planarCode;

  const tiled = dir.entries.has(TAG.TileWidth) || dir.entries.has(TAG.TileOffsets);
  let blockWidth: number;
  let blockHeight: number;
  if (tiled) {
    const tw = await scalar(TAG.TileWidth, 'TileWidth');
    const th = await scalar(TAG.TileLength, 'TileLength');
    if (tw === null || th === null || !Number.isInteger(tw) || !Number.isInteger(th) || tw < 1 || th < 1) {
      throw new InputError(`tile size ${tw} x ${th} is invalid`, path);
    }
    blockWidth = tw;
    blockHeight = th;
  } else {
    const rps = (await scalar(TAG.RowsPerStrip, 'RowsPerStrip')) ?? height;
    if (!Number.isInteger(rps) || rps < 1) throw new InputError(`RowsPerStrip ${rps} is invalid`, path);
    blockWidth = width;
    blockHeight = Math.min(rps, height); // 2^32-1 means "one strip" (TIFF 6.0)
  }
  const samplesPerBlockPixel = planar === 1 ? spp : 1;
  const blockBytes = blockWidth * blockHeight * samplesPerBlockPixel * bytesPerSample;
  if (blockBytes > MAX_BLOCK_BYTES) {
    throw new InputError(`blocks of ${blockWidth} x ${blockHeight} pixels (${blockBytes} bytes) exceed the ${MAX_BLOCK_BYTES}-byte limit`, path);
  }
  const blocksAcross = Math.ceil(width / blockWidth);
  const blocksDown = Math.ceil(height / blockHeight);
  const blocksPerBand = blocksAcross * blocksDown;
  const expectedBlocks = blocksPerBand * (planar === 2 ? spp : 1);
  const [offTag, cntTag, offName, cntName] = tiled
    ? [TAG.TileOffsets, TAG.TileByteCounts, 'TileOffsets', 'TileByteCounts']
    : [TAG.StripOffsets, TAG.StripByteCounts, 'StripOffsets', 'StripByteCounts'];
  for (const [tag, name] of [[offTag, offName], [cntTag, cntName]] as const) {
    const e = dir.entries.get(tag);
    if (!e) throw new InputError(`${name} tag is missing`, path);
    if (e.count !== expectedBlocks) {
      throw new InputError(`${name} has ${e.count} entries but the image needs ${expectedBlocks} blocks`, path);
    }
  }
  const offsets = Float64Array.from((await readNumbers(fh, dir, path, offTag, offName, expectedBlocks))!);
  const byteCounts = Float64Array.from((await readNumbers(fh, dir, path, cntTag, cntName, expectedBlocks))!);
  for (let i = 0; i < expectedBlocks; i++) {
    const o = offsets[i], n = byteCounts[i];
    if (!Number.isInteger(o) || !Number.isInteger(n) || o < 0 || n < 0) {
      throw new InputError(`block ${i} has an invalid offset ${o} or byte count ${n}`, path);
    }
    if (o + n > dir.fileSize) {
      throw new InputError(`file is truncated: block ${i} (${n} bytes at ${o}) ends past the end of the file (${dir.fileSize} bytes)`, path);
    }
  }

  // Georeferencing.
  let keys: Map<number, GeoKeyValue> | null = null;
  const keyDir = await readNumbers(fh, dir, path, TAG.GeoKeyDirectory, 'GeoKeyDirectory', 4 + 4 * 4096);
  if (keyDir) {
    const doubles = await readNumbers(fh, dir, path, TAG.GeoDoubleParams, 'GeoDoubleParams', 65536);
    const ascii = await readAscii(fh, dir, path, TAG.GeoAsciiParams, 'GeoAsciiParams');
    keys = parseGeoKeys(keyDir, doubles, ascii, path);
  }
  const transform = geotransform(
    await readNumbers(fh, dir, path, TAG.ModelTransformation, 'ModelTransformation', 16),
    await readNumbers(fh, dir, path, TAG.ModelTiepoint, 'ModelTiepoint', 6 * 65536),
    await readNumbers(fh, dir, path, TAG.ModelPixelScale, 'ModelPixelScale', 3),
    isPixelIsPoint(keys),
    path,
  );

  // GDAL metadata and nodata.
  const xml = await readAscii(fh, dir, path, TAG.GdalMetadata, 'GDAL_METADATA');
  const meta = xml === null ? { dataset: {}, scale: null, offset: null } : parseGdalMetadata(xml, path);
  const nodataText = await readAscii(fh, dir, path, TAG.GdalNodata, 'GDAL_NODATA');
  const tiffDateTime = await readAscii(fh, dir, path, TAG.DateTime, 'DateTime');

  const epsg = epsgOf(keys);
  const header: RasterHeader = {
    path,
    width,
    height,
    bands: spp,
    sampleFormat,
    bitsPerSample: bits,
    transform,
    epsg,
    crsDefinition: epsg !== null ? await projectDefinition(epsg, path) : crsDefinitionOf(keys, path),
    nodata: nodataText === null ? null : parseNodata(nodataText, path),
    scale: meta.scale ?? 1,
    offset: meta.offset ?? 0,
    acquiredAt: acquisitionTime(meta.dataset, tiffDateTime, path),
    metadata: meta.dataset,
    blockWidth,
    blockHeight,
    tiled,
    compression,
    predictor,
  };
  const layout: BlockLayout = {
    littleEndian: dir.littleEndian,
    samplesPerPixel: spp,
    planar,
    bytesPerSample,
    blocksAcross,
    blocksDown,
    blocksPerBand,
    offsets,
    byteCounts,
    fileSize: dir.fileSize,
  };
  return { header, layout };
}

/**
 * The project's definition for an EPSG code (workers/core/crs: easting-first
 * axes and a datum shift to WGS 84). A code it has no definition for is an
 * InputError naming the file and the code: reading the raster with some other
 * guess (the GeoKeys library falls back to lon/lat for codes it does not know)
 * would put every pixel in the wrong place without a word.
 */
async function projectDefinition(epsg: Epsg, path: string): Promise<string> {
  const crs = await import('../crs/index.js');
  try {
    return crs.crsDefinitionForEpsg(epsg);
  } catch (e) {
    if ((e as Error).name === 'InputError') throw new InputError((e as Error).message, path);
    throw e;
  }
}
