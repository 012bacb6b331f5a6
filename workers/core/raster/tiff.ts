/**
 * Minimal, defensive TIFF / BigTIFF directory reader.
 *
 * Only the first image file directory (IFD) is read: for a COG that is the
 * full-resolution image, overviews follow it. Every count and offset is checked
 * against the file size before anything is read or allocated, so a malformed
 * file raises InputError instead of a RangeError or an attempt at a huge buffer.
 *
 * Layout per TIFF 6.0 (Adobe, 1992) section 2 and BigTIFF (Aware Systems /
 * libtiff, 2007): header "II"/"MM", magic 42 (classic) or 43 (BigTIFF).
 */
import { readSync } from 'node:fs';
import type { FileHandle } from 'node:fs/promises';
import { InputError } from '../errors.js';

/** Byte size of each TIFF field type (TIFF 6.0 section 2, BigTIFF types 16-18). */
const TYPE_SIZES: Record<number, number> = {
  1: 1, // BYTE
  2: 1, // ASCII
  3: 2, // SHORT
  4: 4, // LONG
  5: 8, // RATIONAL
  6: 1, // SBYTE
  7: 1, // UNDEFINED
  8: 2, // SSHORT
  9: 4, // SLONG
  10: 8, // SRATIONAL
  11: 4, // FLOAT
  12: 8, // DOUBLE
  13: 4, // IFD
  16: 8, // LONG8
  17: 8, // SLONG8
  18: 8, // IFD8
};

/** Largest single tag value we agree to read (offset/byte-count arrays of huge COGs stay far below). */
const MAX_TAG_BYTES = 64 * 1024 * 1024;
/** Largest number of entries in one IFD (real files have a few dozen). */
const MAX_IFD_ENTRIES = 4096;

export interface TiffEntry {
  readonly tag: number;
  readonly type: number;
  readonly count: number;
  /** Absolute file offset of the value bytes (inline values point into the IFD entry itself). */
  readonly valueOffset: number;
  readonly byteLength: number;
}

export interface TiffDirectory {
  readonly littleEndian: boolean;
  readonly bigTiff: boolean;
  readonly fileSize: number;
  readonly entries: ReadonlyMap<number, TiffEntry>;
  /** File offset of this directory. */
  readonly offset: number;
  /** File offset of the next directory in the chain, 0 for none. */
  readonly nextOffset: number;
}

/** Most directories followed along one chain (a COG with masks has two per level; real files stay far below). */
export const MAX_DIRECTORIES = 256;

/**
 * Read exactly `length` bytes at `position` into a new array, synchronously:
 * the one exact read of the raster readers (headers, directories, blocks, masks).
 * @throws InputError naming the file when it ends first or cannot be read
 */
export function readExactlySync(fd: number, path: string, position: number, length: number, what: string): Uint8Array {
  const buf = new Uint8Array(length);
  let done = 0;
  while (done < length) {
    let bytesRead: number;
    try {
      bytesRead = readSync(fd, buf, done, length - done, position + done);
    } catch (e) {
      const code = (e as NodeJS.ErrnoException).code;
      if (code === 'EISDIR') throw new InputError('is a directory, not a GeoTIFF', path);
      throw new InputError(`cannot read ${what} (${code ?? (e as Error).message})`, path);
    }
    if (bytesRead === 0) {
      throw new InputError(`file is truncated: ${what} at byte ${position} needs ${length} bytes`, path);
    }
    done += bytesRead;
  }
  return buf;
}

function u64(view: DataView, at: number, le: boolean): number {
  const lo = view.getUint32(at + (le ? 0 : 4), le);
  const hi = view.getUint32(at + (le ? 4 : 0), le);
  // Values above 2^53 cannot be file offsets of a real file; make them fail the range checks.
  return hi >= 0x200000 ? Number.MAX_SAFE_INTEGER : hi * 0x100000000 + lo;
}

/**
 * Parse the TIFF header and the first IFD of an open file.
 * @param fh open file handle (the caller closes it)
 * @param path file path, for error messages
 * @returns the directory: byte order and tag entries (values not yet read)
 */
export async function readFirstDirectory(fh: FileHandle, path: string): Promise<TiffDirectory> {
  const fileSize = (await fh.stat()).size;
  if (fileSize < 8) throw new InputError('not a TIFF file (shorter than a TIFF header)', path);
  const head = readExactlySync(fh.fd, path, 0, Math.min(16, fileSize), 'TIFF header');
  const order = String.fromCharCode(head[0], head[1]);
  if (order !== 'II' && order !== 'MM') throw new InputError('not a TIFF file (no II/MM byte-order mark)', path);
  const le = order === 'II';
  const hv = new DataView(head.buffer, head.byteOffset, head.length);
  const magic = hv.getUint16(2, le);
  let bigTiff: boolean;
  let ifdOffset: number;
  if (magic === 42) {
    bigTiff = false;
    ifdOffset = hv.getUint32(4, le);
  } else if (magic === 43) {
    if (head.length < 16) throw new InputError('file is truncated inside the BigTIFF header', path);
    if (hv.getUint16(4, le) !== 8 || hv.getUint16(6, le) !== 0) {
      throw new InputError('BigTIFF header has an unsupported offset size', path);
    }
    bigTiff = true;
    ifdOffset = u64(hv, 8, le);
  } else {
    throw new InputError(`not a TIFF file (magic number ${magic}, expected 42 or 43)`, path);
  }
  return readDirectoryAt(fh, path, ifdOffset, { littleEndian: le, bigTiff, fileSize }, 'first image directory');
}

/**
 * Parse the image directory at `ifdOffset` (TIFF 6.0 section 2: entry count,
 * 12- or 20-byte entries, then the offset of the next directory).
 * @param what which directory, for messages
 */
export async function readDirectoryAt(
  fh: FileHandle,
  path: string,
  ifdOffset: number,
  file: { littleEndian: boolean; bigTiff: boolean; fileSize: number },
  what: string,
): Promise<TiffDirectory> {
  const { littleEndian: le, bigTiff, fileSize } = file;
  const countSize = bigTiff ? 8 : 2;
  const entrySize = bigTiff ? 20 : 12;
  const nextSize = bigTiff ? 8 : 4;
  if (ifdOffset < 8 || ifdOffset + countSize > fileSize) {
    throw new InputError(`${what} offset ${ifdOffset} lies outside the file (${fileSize} bytes)`, path);
  }
  const cbuf = readExactlySync(fh.fd, path, ifdOffset, countSize, what);
  const cv = new DataView(cbuf.buffer, cbuf.byteOffset, cbuf.length);
  const n = bigTiff ? u64(cv, 0, le) : cv.getUint16(0, le);
  if (n === 0 || n > MAX_IFD_ENTRIES) throw new InputError(`${what} has an implausible entry count ${n}`, path);
  const entriesStart = ifdOffset + countSize;
  if (entriesStart + n * entrySize > fileSize) {
    throw new InputError(`file is truncated inside the ${what} (${n} entries)`, path);
  }
  const ebuf = readExactlySync(fh.fd, path, entriesStart, n * entrySize, `${what} entries`);
  const ev = new DataView(ebuf.buffer, ebuf.byteOffset, ebuf.length);
  const entries = new Map<number, TiffEntry>();
  for (let i = 0; i < n; i++) {
    const at = i * entrySize;
    const tag = ev.getUint16(at, le);
    const type = ev.getUint16(at + 2, le);
    const count = bigTiff ? u64(ev, at + 4, le) : ev.getUint32(at + 4, le);
    const size = TYPE_SIZES[type];
    if (size === undefined) continue; // unknown field types are skipped, as TIFF 6.0 asks readers to
    const byteLength = count * size;
    const inlineSize = bigTiff ? 8 : 4;
    let valueOffset: number;
    if (byteLength <= inlineSize) {
      valueOffset = entriesStart + at + (bigTiff ? 12 : 8);
    } else {
      valueOffset = bigTiff ? u64(ev, at + 12, le) : ev.getUint32(at + 8, le);
    }
    entries.set(tag, { tag, type, count, valueOffset, byteLength });
  }
  // A file cut right after the entries has no next-directory offset: treat it as the last directory.
  let nextOffset = 0;
  const nextAt = entriesStart + n * entrySize;
  if (nextAt + nextSize <= fileSize) {
    const nbuf = readExactlySync(fh.fd, path, nextAt, nextSize, `${what} link`);
    const nv = new DataView(nbuf.buffer, nbuf.byteOffset, nbuf.length);
    nextOffset = bigTiff ? u64(nv, 0, le) : nv.getUint32(0, le);
  }
  return { littleEndian: le, bigTiff, fileSize, entries, offset: ifdOffset, nextOffset };
}

/**
 * The directories after `first` along the chain (overviews, masks), each
 * once; a loop in the chain or more than MAX_DIRECTORIES is an InputError.
 */
export async function* followingDirectories(fh: FileHandle, path: string, first: TiffDirectory): AsyncIterable<TiffDirectory> {
  const seen = new Set<number>([first.offset]);
  let next = first.nextOffset;
  for (let i = 1; next !== 0; i++) {
    if (seen.has(next)) throw new InputError(`image directory ${i} points back to an earlier directory (a loop in the chain)`, path);
    if (i >= MAX_DIRECTORIES) throw new InputError(`the file has more than ${MAX_DIRECTORIES} image directories`, path);
    seen.add(next);
    const dir = await readDirectoryAt(fh, path, next, first, `image directory ${i}`);
    yield dir;
    next = dir.nextOffset;
  }
}

function checkEntry(dir: TiffDirectory, e: TiffEntry, path: string, name: string): void {
  if (e.count === 0) throw new InputError(`tag ${name} has no values`, path);
  if (e.byteLength > MAX_TAG_BYTES) {
    throw new InputError(`tag ${name} claims an implausible ${e.count} values`, path);
  }
  if (e.valueOffset + e.byteLength > dir.fileSize) {
    throw new InputError(`tag ${name} data (${e.byteLength} bytes at ${e.valueOffset}) lies past the end of the file`, path);
  }
}

/**
 * Read a numeric tag as a plain number array (integers, rationals and floats).
 * @param maxCount refuse more values than this before reading anything
 */
export async function readNumbers(
  fh: FileHandle,
  dir: TiffDirectory,
  path: string,
  tag: number,
  name: string,
  maxCount = MAX_TAG_BYTES,
): Promise<number[] | null> {
  const e = dir.entries.get(tag);
  if (!e) return null;
  if (e.type === 2 || e.type === 7) throw new InputError(`tag ${name} has a non-numeric type ${e.type}`, path);
  if (e.count > maxCount) throw new InputError(`tag ${name} has ${e.count} values, expected at most ${maxCount}`, path);
  checkEntry(dir, e, path, name);
  const buf = readExactlySync(fh.fd, path, e.valueOffset, e.byteLength, `tag ${name}`);
  return decodeNumbers(buf, e.type, e.count, dir.littleEndian);
}

/** Decode `count` values of TIFF `type` from `buf` (exported for the offset arrays). */
export function decodeNumbers(buf: Uint8Array, type: number, count: number, le: boolean): number[] {
  const v = new DataView(buf.buffer, buf.byteOffset, buf.length);
  const out = new Array<number>(count);
  for (let i = 0; i < count; i++) {
    switch (type) {
      case 1: out[i] = v.getUint8(i); break;
      case 6: out[i] = v.getInt8(i); break;
      case 3: out[i] = v.getUint16(i * 2, le); break;
      case 8: out[i] = v.getInt16(i * 2, le); break;
      case 4: case 13: out[i] = v.getUint32(i * 4, le); break;
      case 9: out[i] = v.getInt32(i * 4, le); break;
      case 5: { const den = v.getUint32(i * 8 + 4, le); out[i] = den === 0 ? NaN : v.getUint32(i * 8, le) / den; break; }
      case 10: { const den = v.getInt32(i * 8 + 4, le); out[i] = den === 0 ? NaN : v.getInt32(i * 8, le) / den; break; }
      case 11: out[i] = v.getFloat32(i * 4, le); break;
      case 12: out[i] = v.getFloat64(i * 8, le); break;
      case 16: case 18: out[i] = u64(v, i * 8, le); break;
      case 17: out[i] = Number(v.getBigInt64(i * 8, le)); break;
      default: out[i] = NaN;
    }
  }
  return out;
}

/** Read an ASCII tag as a string (NUL terminators removed). */
export async function readAscii(
  fh: FileHandle,
  dir: TiffDirectory,
  path: string,
  tag: number,
  name: string,
): Promise<string | null> {
  const e = dir.entries.get(tag);
  if (!e) return null;
  if (e.type !== 2 && e.type !== 1 && e.type !== 7) throw new InputError(`tag ${name} is not text (type ${e.type})`, path);
  checkEntry(dir, e, path, name);
  const buf = readExactlySync(fh.fd, path, e.valueOffset, e.byteLength, `tag ${name}`);
  let end = buf.length;
  while (end > 0 && buf[end - 1] === 0) end--;
  return Buffer.from(buf.buffer, buf.byteOffset, end).toString('latin1');
}

/** Read a tag that must hold exactly one non-negative integer. */
export async function readScalar(
  fh: FileHandle,
  dir: TiffDirectory,
  path: string,
  tag: number,
  name: string,
): Promise<number | null> {
  const e = dir.entries.get(tag);
  if (!e) return null;
  const v = await readNumbers(fh, dir, path, tag, name, 64);
  const x = v![0];
  if (!Number.isFinite(x)) throw new InputError(`tag ${name} has an invalid value`, path);
  return x;
}
