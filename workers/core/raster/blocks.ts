/**
 * TIFF tag numbers and the block (tile or strip) geometry of one image
 * directory: what the header reader and the mask reader both need.
 */
import type { FileHandle } from 'node:fs/promises';
import { InputError } from '../errors.js';
import { readNumbers, readScalar, type TiffDirectory } from './tiff.js';

/** TIFF tag numbers (TIFF 6.0; GeoTIFF 1.1; GDAL private tags). */
export const TAG = {
  ImageWidth: 256, ImageLength: 257, BitsPerSample: 258, Compression: 259,
  StripOffsets: 273, SamplesPerPixel: 277, RowsPerStrip: 278, StripByteCounts: 279,
  NewSubfileType: 254, PhotometricInterpretation: 262,
  PlanarConfiguration: 284, DateTime: 306, Predictor: 317,
  TileWidth: 322, TileLength: 323, TileOffsets: 324, TileByteCounts: 325, ExtraSamples: 338, SampleFormat: 339,
  ModelPixelScale: 33550, ModelTiepoint: 33922, ModelTransformation: 34264,
  GeoKeyDirectory: 34735, GeoDoubleParams: 34736, GeoAsciiParams: 34737,
  GdalMetadata: 42112, GdalNodata: 42113,
} as const;

/** Largest decoded block (tile or strip, all samples) in bytes. */
export const MAX_BLOCK_BYTES = 256 * 1024 * 1024;

/** Tile or strip geometry of one image directory and where its blocks are. */
export interface BlockGeometry {
  readonly tiled: boolean;
  readonly blockWidth: number;
  readonly blockHeight: number;
  readonly blocksAcross: number;
  readonly blocksDown: number;
  readonly blocksPerBand: number;
  readonly offsets: Float64Array;
  readonly byteCounts: Float64Array;
}

/**
 * Block geometry of an image directory, every size, count, offset and byte
 * count checked against the file before anything is allocated for pixels.
 * @param size.bitsPerBlockPixel bits of one pixel within a block (all samples when chunky)
 * @param size.planes number of separate planes (samples when PlanarConfiguration is 2, else 1)
 * @param what what the directory is, for messages ('' for the image itself, else e.g. 'mask: ')
 */
export async function readBlockGeometry(
  fh: FileHandle, dir: TiffDirectory, path: string,
  size: { width: number; height: number; bitsPerBlockPixel: number; planes: number }, what = '',
): Promise<BlockGeometry> {
  const scalar = (tag: number, name: string) => readScalar(fh, dir, path, tag, name);
  const { width, height, bitsPerBlockPixel, planes } = size;
  const tiled = dir.entries.has(TAG.TileWidth) || dir.entries.has(TAG.TileOffsets);
  let blockWidth: number;
  let blockHeight: number;
  if (tiled) {
    const tw = await scalar(TAG.TileWidth, 'TileWidth');
    const th = await scalar(TAG.TileLength, 'TileLength');
    if (tw === null || th === null || !Number.isInteger(tw) || !Number.isInteger(th) || tw < 1 || th < 1) {
      throw new InputError(`${what}tile size ${tw} x ${th} is invalid`, path);
    }
    blockWidth = tw;
    blockHeight = th;
  } else {
    const rps = (await scalar(TAG.RowsPerStrip, 'RowsPerStrip')) ?? height;
    if (!Number.isInteger(rps) || rps < 1) throw new InputError(`${what}RowsPerStrip ${rps} is invalid`, path);
    blockWidth = width;
    blockHeight = Math.min(rps, height); // 2^32-1 means "one strip" (TIFF 6.0)
  }
  // Rows of a block start on byte boundaries (TIFF 6.0 section 2, for bit depths below 8).
  const blockBytes = Math.ceil((blockWidth * bitsPerBlockPixel) / 8) * blockHeight;
  if (blockBytes > MAX_BLOCK_BYTES) {
    throw new InputError(`${what}blocks of ${blockWidth} x ${blockHeight} pixels (${blockBytes} bytes) exceed the ${MAX_BLOCK_BYTES}-byte limit`, path);
  }
  const blocksAcross = Math.ceil(width / blockWidth);
  const blocksDown = Math.ceil(height / blockHeight);
  const blocksPerBand = blocksAcross * blocksDown;
  const expectedBlocks = blocksPerBand * planes;
  const [offTag, cntTag, offName, cntName] = tiled
    ? [TAG.TileOffsets, TAG.TileByteCounts, 'TileOffsets', 'TileByteCounts']
    : [TAG.StripOffsets, TAG.StripByteCounts, 'StripOffsets', 'StripByteCounts'];
  for (const [tag, name] of [[offTag, offName], [cntTag, cntName]] as const) {
    const e = dir.entries.get(tag);
    if (!e) throw new InputError(`${what}${name} tag is missing`, path);
    if (e.count !== expectedBlocks) {
      throw new InputError(`${what}${name} has ${e.count} entries but the image needs ${expectedBlocks} blocks`, path);
    }
  }
  const offsets = Float64Array.from((await readNumbers(fh, dir, path, offTag, offName, expectedBlocks))!);
  const byteCounts = Float64Array.from((await readNumbers(fh, dir, path, cntTag, cntName, expectedBlocks))!);
  for (let i = 0; i < expectedBlocks; i++) {
    const o = offsets[i], n = byteCounts[i];
    if (!Number.isInteger(o) || !Number.isInteger(n) || o < 0 || n < 0) {
      throw new InputError(`${what}block ${i} has an invalid offset ${o} or byte count ${n}`, path);
    }
    if (o + n > dir.fileSize) {
      throw new InputError(`file is truncated: ${what}block ${i} (${n} bytes at ${o}) ends past the end of the file (${dir.fileSize} bytes)`, path);
    }
  }
  return { tiled, blockWidth, blockHeight, blocksAcross, blocksDown, blocksPerBand, offsets, byteCounts };
}
