// Decoder and metadata units. GDAL-written fixtures from:
//   /usr/bin/python3 test/fixtures/make_raster_fixtures.py
import { createHash } from 'node:crypto';
import { openSync, readFileSync, readSync, closeSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { acquisitionTime, normaliseTimestamp } from '../../workers/core/raster/acqtime.js';
import { CorruptBlockError } from '../../workers/core/raster/decoders/errors.js';
import { lzwDecode } from '../../workers/core/raster/decoders/lzw.js';
import { packbitsDecode } from '../../workers/core/raster/decoders/packbits.js';
import { parseGdalMetadata, parseNodata } from '../../workers/core/raster/gdalmeta.js';

const DIR = fileURLToPath(new URL('../fixtures/raster/', import.meta.url));
const expected = JSON.parse(readFileSync(DIR + 'expected.json', 'utf8'));

/** Pack codes MSB-first at the TIFF LZW widths (9 bits, one more at 511/1023/2047, TIFF 6.0 §13). */
function packCodes(codes: number[]): Uint8Array {
  const bits: number[] = [];
  let next = 258, width = 9, prevWasClear = true;
  for (const c of codes) {
    for (let i = width - 1; i >= 0; i--) bits.push((c >> i) & 1);
    if (c === 256) { next = 258; width = 9; prevWasClear = true; continue; }
    if (!prevWasClear) { next++; if (next + 1 > (1 << width) - 1 && width < 12) width++; }
    prevWasClear = false;
  }
  const out = new Uint8Array(Math.ceil(bits.length / 8));
  bits.forEach((b, i) => { out[i >> 3] |= b << (7 - (i & 7)); });
  return out;
}

describe('LZW decoder', () => {
  it('decodes a hand-worked stream including the KwKwK case', () => {
    // Worked by hand from the TIFF 6.0 §13 algorithm: A, B, 258 = "AB" (259 = "BA"),
    // 260 is not yet in the table, so it is "AB" + "A" -> output "A B AB ABA".
    const out = lzwDecode(packCodes([256, 65, 66, 258, 260, 257]), 100);
    expect(Buffer.from(out).toString('latin1')).toBe('ABABABA');
  });

  it('stops at the expected size', () => {
    expect(lzwDecode(packCodes([256, 65, 66, 258, 260, 257]), 3).length).toBe(3);
  });

  it('rejects a code beyond the table', () => {
    expect(() => lzwDecode(packCodes([256, 65, 300, 257]), 100)).toThrow(CorruptBlockError);
    expect(() => lzwDecode(packCodes([256, 259, 257]), 100)).toThrow(CorruptBlockError);
  });

  it('matches GDAL on a one-strip file whose code table fills and resets', () => {
    // Read the single strip's bytes straight from the file (StripOffsets/StripByteCounts located
    // by scanning the classic little-endian IFD, TIFF 6.0 section 2).
    const path = DIR + 'lzw_table_reset_u8.tif';
    const buf = readFileSync(path);
    const ifd = buf.readUInt32LE(4);
    const n = buf.readUInt16LE(ifd);
    let off = 0, cnt = 0;
    for (let i = 0; i < n; i++) {
      const at = ifd + 2 + i * 12;
      const tag = buf.readUInt16LE(at), type = buf.readUInt16LE(at + 2);
      const v = type === 3 ? buf.readUInt16LE(at + 8) : buf.readUInt32LE(at + 8);
      if (tag === 273) off = v;
      if (tag === 279) cnt = v;
    }
    const fd = openSync(path, 'r');
    const strip = Buffer.alloc(cnt);
    readSync(fd, strip, 0, cnt, off);
    closeSync(fd);
    const e = expected.files['lzw_table_reset_u8.tif'];
    const out = lzwDecode(strip, e.width * e.height);
    expect(out.length).toBe(e.width * e.height);
    expect(createHash('sha256').update(out).digest('hex')).toBe(e.bandData[0].sha256);
    // Count clear codes while walking the stream: more than the leading one means a reset happened.
    let pos = 0, width = 9, next = 258, clears = 0, prevClear = false;
    const bit = (p: number) => (strip[p >> 3] >> (7 - (p & 7))) & 1;
    for (;;) {
      let c = 0;
      for (let i = 0; i < width; i++) c = (c << 1) | bit(pos++);
      if (c === 257) break;
      if (c === 256) { clears++; width = 9; next = 258; prevClear = true; continue; }
      if (!prevClear) { next++; if (next + 1 > (1 << width) - 1 && width < 12) width++; }
      prevClear = false;
    }
    expect(clears).toBeGreaterThan(1);
  });
});

describe('PackBits decoder', () => {
  it('decodes the TIFF 6.0 section 9 example', () => {
    // TIFF 6.0 (Adobe, 1992) section 9 example (from memory): packed FE AA 02 80 00 2A FD AA 03 80 00 2A 22 F7 AA
    const packed = Uint8Array.from([0xfe, 0xaa, 0x02, 0x80, 0x00, 0x2a, 0xfd, 0xaa, 0x03, 0x80, 0x00, 0x2a, 0x22, 0xf7, 0xaa]);
    const unpacked = [0xaa, 0xaa, 0xaa, 0x80, 0x00, 0x2a, 0xaa, 0xaa, 0xaa, 0xaa, 0x80, 0x00, 0x2a, 0x22, ...Array(10).fill(0xaa)];
    expect([...packbitsDecode(packed, 100)]).toEqual(unpacked);
  });
});

describe('GDAL metadata', () => {
  it('reads band-1 scale/offset roles and dataset items', () => {
    // Item layout as the GDAL GTiff driver writes tag 42112 (common practice, no source).
    const m = parseGdalMetadata('<GDALMetadata>\n  <Item name="ACQUISITION_TIME">2024-07-14T10:00:00Z</Item>\n  <Item name="OFFSET" sample="0" role="offset">149</Item>\n  <Item name="SCALE" sample="0" role="scale">0.00341802</Item>\n  <Item name="SCALE" sample="1" role="scale">9</Item>\n  <Item name="NOTE">a &amp; b</Item>\n</GDALMetadata>', 'x.tif');
    expect(m.scale).toBe(0.00341802);
    expect(m.offset).toBe(149);
    expect(m.dataset).toEqual({ ACQUISITION_TIME: '2024-07-14T10:00:00Z', NOTE: 'a & b' });
  });
  it('unescapes item values twice, as GDAL does', () => {
    // GDAL 3.6 (Debian gdal-bin) writes the value `a < b & "c"` of an item as
    // `a &amp;lt; b &amp;amp; &amp;quot;c&amp;quot;` and reads it back unescaped twice (measured here with
    // gdal.Dataset.SetMetadataItem / GetMetadataItem).
    const m = parseGdalMetadata('<GDALMetadata><Item name="NOTE">a &amp;lt; b &amp;amp; &amp;quot;c&amp;quot;</Item></GDALMetadata>', 'x.tif');
    expect(m.dataset.NOTE).toBe('a < b & "c"');
  });
  it('falls back to plain scale_factor / add_offset items (CF convention)', () => {
    const m = parseGdalMetadata('<GDALMetadata><Item name="scale_factor">0.02</Item><Item name="add_offset">0</Item></GDALMetadata>', 'x.tif');
    expect([m.scale, m.offset]).toEqual([0.02, 0]);
  });
  it('parses nodata text, including nan', () => {
    expect(parseNodata('-9999', 'x.tif')).toBe(-9999);
    expect(parseNodata('nan', 'x.tif')).toBeNaN();
    expect(parseNodata('-inf', 'x.tif')).toBe(-Infinity);
    expect(() => parseNodata('none', 'x.tif')).toThrow(/x\.tif.*not a number/);
  });
});

describe('acquisition time', () => {
  it('normalises ISO 8601 and TIFF DateTime forms to UTC', () => {
    // Conversions derived from ISO 8601 offset arithmetic (local - offset = UTC).
    expect(normaliseTimestamp('2024-07-14T15:30:00+02:00')).toBe('2024-07-14T13:30:00Z');
    expect(normaliseTimestamp('2024-07-14T01:30:00-0330')).toBe('2024-07-14T05:00:00Z');
    expect(normaliseTimestamp('2024-12-31T23:30:00-01:00')).toBe('2025-01-01T00:30:00Z');
    expect(normaliseTimestamp('2024-07-14 10:21:33.987Z')).toBe('2024-07-14T10:21:33Z');
    expect(normaliseTimestamp('2024:07:14 10:21:33')).toBe('2024-07-14T10:21:33Z'); // TIFF 6.0 tag 306 form
    expect(normaliseTimestamp('2024-02-30T00:00:00Z')).toBe('invalid');
    expect(normaliseTimestamp('    :  :     :  :  ')).toBeNull();
    expect(normaliseTimestamp('2024-07-14')).toBe('date-only');
  });
  it('prefers ACQUISITION_TIME over DATETIME and the TIFF tag, and combines date + time of day', () => {
    expect(acquisitionTime({ DATETIME: '2020-01-01T00:00:00Z', ACQUISITION_TIME: '2024-07-14T10:00:00Z' }, '2019:01:01 00:00:00', 'x.tif')).toBe('2024-07-14T10:00:00Z');
    expect(acquisitionTime({ ACQUISITION_DATE: '2021-12-31', ACQUISITION_TIME: '23:59:58.25' }, null, 'x.tif')).toBe('2021-12-31T23:59:58Z');
    expect(acquisitionTime({}, '2022:08:09 14:15:16', 'x.tif')).toBe('2022-08-09T14:15:16Z');
    expect(acquisitionTime({}, null, 'x.tif')).toBeNull();
    expect(() => acquisitionTime({ ACQUISITION_TIME: 'yesterday' }, null, 'x.tif')).toThrow(/x\.tif.*ACQUISITION_TIME/);
  });
});

describe('GeoKey names', () => {
  it('match the geotiff package (general-purpose reference library) key for key', async () => {
    // GeoTIFF 1.1 (OGC 19-008r4) section 7 key ids; the geotiff npm package carries the same table.
    const { globals } = await import('geotiff');
    const { GEOKEY_NAMES } = await import('../../workers/core/raster/geokeys.js');
    expect(GEOKEY_NAMES).toEqual(Object.fromEntries(Object.entries(globals.geoKeyNames).map(([k, v]) => [Number(k), v])));
    expect(GEOKEY_NAMES[3072]).toBe('ProjectedCSTypeGeoKey');
  });
});
