/**
 * DEFLATE (TIFF compression 8 and the older code 32946) on Node's native zlib.
 * Native inflate is several times faster than a JavaScript inflater; the
 * stream is zlib-wrapped (RFC 1950) as libtiff writes it.
 */
import { inflateSync } from 'node:zlib';
import { CorruptBlockError } from './errors.js';

/**
 * Inflate one strip or tile.
 * @param input compressed bytes
 * @param maxBytes the block's full decoded size; a stream that inflates past it is corrupt
 * @returns decoded bytes (a fresh buffer the caller may keep and modify)
 */
export function deflateDecode(input: Uint8Array, maxBytes: number): Uint8Array {
  const limit = Math.max(1, maxBytes);
  try {
    // chunkSize = the whole block: zlib inflates into one output buffer, which
    // is returned as is (with the default 16 KiB chunks Node inflates into a
    // list of chunks and concatenates them: one more copy of every block).
    // maxOutputLength stops a bogus stream from inflating without bound.
    return inflateSync(input, { maxOutputLength: limit, chunkSize: Math.max(64, limit) });
  } catch (e) {
    throw new CorruptBlockError(`DEFLATE data is corrupt (${(e as Error).message})`);
  }
}
