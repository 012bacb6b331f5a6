// Malformed inputs must give InputError naming the file (DEVELOPERS.md contract). Base files:
//   /usr/bin/python3 test/fixtures/make_raster_fixtures.py
// Byte positions follow TIFF 6.0 (Adobe, 1992) section 2: 8-byte header, IFD = 2-byte count +
// 12-byte entries (tag, type, count, value/offset).
import { mkdtempSync, readFileSync, rmSync, writeFileSync, mkdirSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, describe, expect, it } from 'vitest';
import { InputError } from '../../workers/core/errors.js';
import { openRaster } from '../../workers/core/raster/index.js';

const DIR = fileURLToPath(new URL('../fixtures/raster/', import.meta.url));
const work = mkdtempSync(join(tmpdir(), 'raster-errors-'));
afterAll(() => rmSync(work, { recursive: true, force: true }));

/** Patch the first IFD entry of `tag` in a little-endian classic TIFF. */
function patch(buf: Buffer, tag: number, f: (b: Buffer, entryAt: number) => void): Buffer {
  const b = Buffer.from(buf);
  const ifd = b.readUInt32LE(4);
  const n = b.readUInt16LE(ifd);
  for (let i = 0; i < n; i++) {
    const at = ifd + 2 + i * 12;
    if (b.readUInt16LE(at) === tag) { f(b, at); return b; }
  }
  throw new Error(`tag ${tag} not in fixture`);
}

async function expectInputError(name: string, data: Buffer | null, pattern: RegExp): Promise<void> {
  const path = join(work, name);
  if (data) writeFileSync(path, data);
  const run = async () => { const r = await openRaster(path); try { for await (const _ of r.blocks({ colOff: 0, rowOff: 0, width: r.header.width, height: r.header.height })) void _; } finally { await r.close(); } };
  const err = await run().then(() => null, (e: unknown) => e);
  expect(err).toBeInstanceOf(InputError);
  expect((err as Error).message).toContain(path);
  expect((err as Error).message).toMatch(pattern);
}

const utm = readFileSync(DIR + 'utm_u16_deflate_p2_tiled.tif'); // little-endian classic TIFF, 150 x 100, 64 x 32 tiles

describe('malformed GeoTIFFs raise InputError naming the file', () => {
  it('a missing file', async () => {
    await expectInputError('missing.tif', null, /does not exist/);
  });
  it('a directory', async () => {
    mkdirSync(join(work, 'dir.tif'));
    await expectInputError('dir.tif', null, /directory|not a TIFF/);
  });
  it('a text file', async () => {
    await expectInputError('text.tif', Buffer.from('hello, this is not an image\n'), /not a TIFF/);
  });
  it('an empty file', async () => {
    await expectInputError('empty.tif', Buffer.alloc(0), /not a TIFF/);
  });
  it('a file cut in half', async () => {
    await expectInputError('half.tif', utm.subarray(0, Math.floor(utm.length / 2)), /truncated|past the end/);
  });
  it('10^6 x 10^6 pixels, refused before allocating', async () => {
    let d = patch(utm, 256, (b, at) => { b.writeUInt16LE(4, at + 2); b.writeUInt32LE(1, at + 4); b.writeUInt32LE(1_000_000, at + 8); });
    d = patch(d, 257, (b, at) => { b.writeUInt16LE(4, at + 2); b.writeUInt32LE(1, at + 4); b.writeUInt32LE(1_000_000, at + 8); });
    await expectInputError('huge.tif', d, /exceeds/);
  });
  it('a zero width', async () => {
    const d = patch(utm, 256, (b, at) => b.writeUInt16LE(0, at + 8));
    await expectInputError('zero.tif', d, /positive/);
  });
  it('JPEG compression is named as unsupported', async () => {
    const d = patch(utm, 259, (b, at) => b.writeUInt16LE(7, at + 8));
    await expectInputError('jpeg.tif', d, /compression JPEG \(7\) is not supported/);
  });
  it('a tile offsets count that does not match the tile grid', async () => {
    // 150 x 100 in 64 x 32 tiles needs ceil(150/64) * ceil(100/32) = 3 * 4 = 12 tiles (derived).
    const d = patch(utm, 324, (b, at) => b.writeUInt32LE(11, at + 4));
    await expectInputError('count.tif', d, /TileOffsets has 11 entries but the image needs 12/);
  });
  it('a tile byte count past the end of the file', async () => {
    const d = patch(utm, 325, (b, at) => { const off = b.readUInt32LE(at + 8); b.writeUInt16LE(0xffff, off); });
    await expectInputError('pastend.tif', d, /past the end|truncated/);
  });
  it('a tile whose data decode short', async () => {
    // Cut every tile's byte count to 20 bytes: each DEFLATE stream then ends early.
    let d = Buffer.from(utm);
    d = patch(d, 325, (b, at) => { const off = b.readUInt32LE(at + 8); for (let i = 0; i < 12; i++) b.writeUInt16LE(20, off + i * 2); });
    await expectInputError('short.tif', d, /corrupt|decodes to/);
  });
  it('an unsupported sample format (complex integer, code 5)', async () => {
    const d = patch(readFileSync(DIR + 'f32_lzw_p3_striped.tif'), 339, (b, at) => b.writeUInt16LE(5, at + 8));
    await expectInputError('complex.tif', d, /sample format/);
  });
  it('a band index outside the file and a fractional window', async () => {
    const r = await openRaster(DIR + 'utm_u16_deflate_p2_tiled.tif');
    try {
      await expect(r.readWindow({ colOff: 0, rowOff: 0, width: 2, height: 2 }, 1)).rejects.toThrow(/band 1 does not exist/);
      await expect(r.readWindow({ colOff: 0.5, rowOff: 0, width: 2, height: 2 })).rejects.toBeInstanceOf(InputError);
    } finally {
      await r.close();
    }
  });
});
