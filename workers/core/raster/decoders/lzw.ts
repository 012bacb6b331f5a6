/**
 * TIFF LZW decoder on typed arrays.
 *
 * Format per TIFF 6.0 (Adobe, 1992) section 13: codes are read most
 * significant bit first, start at 9 bits and grow to at most 12; code 256
 * clears the table, 257 ends the data; the width grows one code early (when
 * the next free code reaches 511, 1023, 2047), as libtiff writes it.
 *
 * Speed: every table entry is a (start, length) slice of the output already
 * written — entry k is the string of the previous code followed by the first
 * byte of the current one, and that exact byte sequence sits in the output at
 * the previous code's start. Decoding a code is therefore one short copy
 * inside the output buffer, with no per-entry string storage.
 */
import { CorruptBlockError } from './errors.js';

const CLEAR = 256;
const EOI = 257;
const TABLE_SIZE = 4096;

// Reused across calls: the table is 4096 entries whatever the file.
const entryStart = new Int32Array(TABLE_SIZE);
const entryLength = new Int32Array(TABLE_SIZE);

/**
 * Decode one LZW-compressed strip or tile.
 * @param input compressed bytes
 * @param maxBytes the block's full decoded size in bytes; decoding stops there
 *   (like libtiff, which decodes exactly the bytes it expects)
 * @returns decoded bytes (length <= maxBytes; the caller checks the minimum)
 * @example lzwDecode(Uint8Array.of(0x80, 0x10, 0x50, 0x10, 0x10), 2) // Uint8Array [65, 65]
 */
export function lzwDecode(input: Uint8Array, maxBytes: number): Uint8Array {
  // Grow the output as data arrives, so a bogus header promising gigabytes
  // cannot make us allocate them from a few compressed bytes.
  // Blocks up to 16 MiB (every usual tile or strip) get their full size at once.
  let cap = maxBytes <= 16 * 1024 * 1024 ? maxBytes : Math.min(maxBytes, Math.max(65536, input.length * 4));
  let out = new Uint8Array(cap);
  let op = 0;
  const n = input.length;
  let ip = 0;
  let bitBuf = 0;
  let bitCount = 0;
  let width = 9;
  let mask = 511;
  let next = 258;
  let prev = -1; // previous code, -1 right after a clear
  let prevStart = 0;
  let prevLen = 0;

  for (let i = 0; i < 256; i++) {
    entryLength[i] = 1;
  }

  while (op < maxBytes) {
    while (bitCount < width) {
      if (ip >= n) return out.subarray(0, op); // data ended without EOI: keep what was decoded
      bitBuf = (bitBuf << 8) | input[ip++];
      bitCount += 8;
    }
    bitCount -= width;
    const code = (bitBuf >>> bitCount) & mask;

    if (code === EOI) break;
    if (code === CLEAR) {
      width = 9;
      mask = 511;
      next = 258;
      prev = -1;
      continue;
    }

    let start: number;
    let len: number;
    if (code < 256) {
      start = -1;
      len = 1;
    } else if (code < next && prev !== -1) {
      start = entryStart[code];
      len = entryLength[code];
    } else if (code === next && prev !== -1) {
      start = prevStart; // KwKwK case: previous string plus its own first byte
      len = prevLen + 1;
    } else {
      throw new CorruptBlockError(`invalid LZW code ${code} (table holds ${next})`);
    }

    // Make room (never past maxBytes: the string is cut there, as libtiff does).
    if (op + len > cap) {
      if (cap >= maxBytes) {
        len = maxBytes - op;
      } else {
        let ncap = cap * 2;
        while (ncap < op + len) ncap *= 2;
        cap = Math.min(ncap, maxBytes);
        const grown = new Uint8Array(cap);
        grown.set(out.subarray(0, op));
        out = grown;
        if (op + len > cap) len = cap - op;
      }
    }

    const here = op;
    if (start < 0) {
      out[op++] = code;
    } else if (code === next) {
      // Copy the previous string, then repeat its first byte.
      const body = len > prevLen ? prevLen : len;
      for (let k = 0; k < body; k++) out[op + k] = out[start + k];
      if (len > prevLen) out[op + prevLen] = out[start];
      op += len;
    } else if (len < 16) {
      for (let k = 0; k < len; k++) out[op + k] = out[start + k];
      op += len;
    } else {
      out.copyWithin(op, start, start + len);
      op += len;
    }

    if (prev !== -1 && next < TABLE_SIZE) {
      entryStart[next] = prevStart;
      entryLength[next] = prevLen + 1;
      next++;
      // Early change: widen when the next free code would not fit (TIFF 6.0 §13).
      if (next + 1 > mask && width < 12) {
        width++;
        mask = (1 << width) - 1;
      }
    }
    prev = code;
    prevStart = here;
    prevLen = len;
  }
  return out.subarray(0, op);
}
