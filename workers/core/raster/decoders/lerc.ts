/**
 * LERC (TIFF compression 34887, Esri's Limited Error Raster Compression, as
 * GDAL writes it: one LERC blob per tile or strip, optionally wrapped in
 * DEFLATE or ZSTD: GDAL's LERC_DEFLATE / LERC_ZSTD). The blob is decoded by
 * the `lerc` package the geotiff package ships its LERC support with; the
 * wrapping is undone with this reader's own DEFLATE and ZSTD decoders.
 *
 * The wrapping is recognised from the bytes rather than the LercParameters
 * tag: a bare blob starts with "Lerc2 " (or "CntZImage " for version 1, refused), a
 * ZSTD frame with its magic number (RFC 8878 section 3.1.1); anything else is
 * taken as zlib-wrapped DEFLATE, which fails loudly if it is not.
 *
 * Samples come out in the machine's byte order (the header refuses LERC in a
 * big-endian file) and pixel-interleaved. Pixels the blob's own validity mask
 * marks invalid become NaN in floating-point data (as GDAL reads them); in
 * integer data they have no value to take, so such a block is refused.
 */
import { CorruptBlockError } from './errors.js';
import { deflateDecode } from './deflate.js';

const LERC2 = [0x4c, 0x65, 0x72, 0x63, 0x32, 0x20]; // "Lerc2 "
const LERC1 = [0x43, 0x6e, 0x74, 0x5a, 0x49, 0x6d, 0x61, 0x67, 0x65, 0x20]; // "CntZImage "

/**
 * Refuse a blob whose header declares more values than the block holds,
 * before the decoder allocates for them. Lerc2 header (Esri lerc, Lerc2
 * format): "Lerc2 ", int32 version, uint32 checksum (version >= 3), uint32
 * rows, uint32 columns, uint32 values per pixel (version >= 4), all
 * little-endian.
 */
function checkLerc2Header(blob: Uint8Array, maxBytes: number): void {
  const v = new DataView(blob.buffer, blob.byteOffset, blob.byteLength);
  if (blob.length < 6 + 4 + 4 + 12) throw new CorruptBlockError('LERC header is truncated');
  const version = v.getInt32(6, true);
  if (version < 1 || version > 16) throw new CorruptBlockError(`LERC version ${version} is not a known one`);
  let at = 10 + (version >= 3 ? 4 : 0);
  const rows = v.getUint32(at, true), cols = v.getUint32(at + 4, true);
  at += 8;
  const dims = version >= 4 ? v.getUint32(at, true) : 1;
  // every value takes at least one byte of the decoded block
  if (rows * cols * dims > maxBytes) {
    throw new CorruptBlockError(`LERC header declares ${rows} x ${cols} x ${dims} values, more than the block's ${maxBytes} bytes hold`);
  }
}
const ZSTD_MAGIC = [0x28, 0xb5, 0x2f, 0xfd];

function startsWith(x: Uint8Array, prefix: number[]): boolean {
  if (x.length < prefix.length) return false;
  for (let i = 0; i < prefix.length; i++) if (x[i] !== prefix[i]) return false;
  return true;
}

/**
 * Decode one LERC tile or strip.
 * @param input stored bytes
 * @param maxBytes the block's full decoded size
 * @returns the samples' bytes, pixel-interleaved, little-endian
 */
export async function lercDecode(input: Uint8Array, maxBytes: number): Promise<Uint8Array> {
  let blob = input;
  if (!startsWith(blob, LERC2) && !startsWith(blob, LERC1)) {
    // A LERC blob holds at most the samples, a validity mask and small headers;
    // twice the block's size plus 64 KiB bounds an unwrapped blob generously.
    const bound = 2 * maxBytes + 65536;
    blob = startsWith(blob, ZSTD_MAGIC)
      ? await (await import('./zstd.js')).zstdDecode(blob, bound)
      : deflateDecode(blob, bound);
    if (!startsWith(blob, LERC2) && !startsWith(blob, LERC1)) throw new CorruptBlockError('LERC block holds no LERC data');
  }
  // Version 1 blobs ("CntZImage") never appear in TIFF files GDAL writes and carry no
  // header to bound them before decoding: refused.
  if (!startsWith(blob, LERC2)) throw new CorruptBlockError('LERC version 1 data is not supported (only Lerc2)');
  checkLerc2Header(blob, maxBytes);
  const Lerc = (await import('lerc')).default;
  let block;
  try {
    const copy = new Uint8Array(blob).buffer as ArrayBuffer; // a private copy: the decoder reads its buffer from byte 0 (a Buffer may be a view into a shared pool)
    block = Lerc.decode(copy, { returnPixelInterleavedDims: true });
  } catch (e) {
    // the decoder throws plain strings as well as errors
    throw new CorruptBlockError(`LERC data is corrupt (${e instanceof Error ? e.message : String(e)})`);
  }
  const px = block.pixels[0];
  if (!px) throw new CorruptBlockError('LERC block holds no pixels');
  const mask = block.mask;
  if (mask && mask.some((m) => m === 0)) {
    if (!(px instanceof Float32Array || px instanceof Float64Array)) {
      throw new CorruptBlockError('LERC block marks integer pixels invalid, which have no value to stand for that');
    }
    const dims = px.length / mask.length;
    for (let i = 0; i < mask.length; i++) if (mask[i] === 0) for (let d = 0; d < dims; d++) px[i * dims + d] = NaN;
  }
  return new Uint8Array(px.buffer, px.byteOffset, px.byteLength);
}
