/**
 * PackBits (TIFF compression 32773) per TIFF 6.0 (Adobe, 1992) section 9:
 * a header byte n in 0..127 copies the next n+1 bytes, -127..-1 repeats the
 * next byte 1-n times, -128 is a no-op.
 */
import { CorruptBlockError } from './errors.js';

/**
 * Decode one PackBits strip or tile.
 * @param input compressed bytes
 * @param maxBytes the block's full decoded size; decoding stops there
 * @returns decoded bytes
 * @example packbitsDecode(Uint8Array.of(0xfe, 7), 3) // Uint8Array [7, 7, 7]
 */
export function packbitsDecode(input: Uint8Array, maxBytes: number): Uint8Array {
  const out = new Uint8Array(Math.min(maxBytes, input.length * 128));
  let op = 0;
  let ip = 0;
  const n = input.length;
  while (ip < n && op < out.length) {
    const h = input[ip++];
    if (h < 128) {
      const len = h + 1;
      if (ip + len > n) throw new CorruptBlockError('PackBits literal run passes the end of the data');
      const take = Math.min(len, out.length - op);
      out.set(input.subarray(ip, ip + take), op);
      op += take;
      ip += len;
    } else if (h > 128) {
      if (ip >= n) throw new CorruptBlockError('PackBits repeat run passes the end of the data');
      const len = Math.min(257 - h, out.length - op);
      out.fill(input[ip++], op, op + len);
      op += len;
    }
  }
  return out.subarray(0, op);
}
