/**
 * DEFLATE (TIFF compression 8 and the older code 32946) on Node's native zlib.
 * Native inflate is several times faster than a JavaScript inflater; the
 * stream is zlib-wrapped (RFC 1950) as libtiff writes it.
 *
 * Synchronous on purpose: zlib's thread-pool variant (zlib.inflate) gave more
 * wall-clock throughput on two idle cores but cost ~30% more CPU per block
 * (stream machinery, thread hand-offs), and end-to-end zonal runs were no
 * faster with it.
 */
import { inflateSync, type ZlibOptions } from 'node:zlib';
import { CorruptBlockError } from './errors.js';

function options(maxBytes: number): ZlibOptions {
  const limit = Math.max(1, maxBytes);
  // chunkSize one byte above the block's size: zlib inflates into a single
  // output buffer that is returned as is (with the default 16 KiB chunks Node
  // collects a list of chunks and concatenates them, one more copy of every
  // block; with exactly the block's size it would allocate a second, unused
  // buffer to learn that the stream has ended). maxOutputLength stops a bogus
  // stream from inflating without bound.
  return { maxOutputLength: limit, chunkSize: Math.max(64, limit + 1) };
}

/**
 * Inflate one strip or tile.
 * @param input compressed bytes (not modified)
 * @param maxBytes the block's full decoded size; a stream that inflates past it is corrupt
 * @returns decoded bytes (a fresh buffer the caller may keep and modify)
 */
export function deflateDecode(input: Uint8Array, maxBytes: number): Uint8Array {
  try {
    return inflateSync(input, options(maxBytes));
  } catch (e) {
    throw new CorruptBlockError(`DEFLATE data is corrupt (${(e as Error).message})`);
  }
}
