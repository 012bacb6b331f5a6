/**
 * ZSTD (TIFF compression 50000, as GDAL writes it) through the WebAssembly
 * decoder that the geotiff package also uses (zstddec). Node 20's zlib has no
 * zstd.
 *
 * The decoder is always given the block's expected size as its output
 * capacity: left to itself it would allocate whatever size a (possibly
 * corrupt) frame header declares.
 */
import { ZSTDDecoder } from 'zstddec/stream';
import { CorruptBlockError } from './errors.js';

let ready: Promise<ZSTDDecoder> | null = null;

function decoder(): Promise<ZSTDDecoder> {
  ready ??= (async () => {
    const d = new ZSTDDecoder();
    await d.init(); // the WebAssembly module is inlined in the package: nothing is downloaded
    return d;
  })();
  return ready;
}

/**
 * Decompress one ZSTD strip or tile.
 * @param input compressed bytes
 * @param maxBytes the block's full decoded size (the output capacity)
 * @returns decoded bytes
 */
export async function zstdDecode(input: Uint8Array, maxBytes: number): Promise<Uint8Array> {
  const d = await decoder();
  let out: Uint8Array;
  try {
    out = d.decode(input, Math.max(1, maxBytes));
  } catch (e) {
    throw new CorruptBlockError(`ZSTD data is corrupt (${(e as Error).message})`);
  }
  // ZSTD_decompress reports errors as huge or (through wasm's i32) negative sizes.
  if (out.length > maxBytes) throw new CorruptBlockError('ZSTD data is corrupt (decoder reported an error)');
  return out;
}
