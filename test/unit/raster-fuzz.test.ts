// Robustness of the GeoTIFF reader against malformed files. Base files are the GDAL-written
// fixtures (/usr/bin/python3 test/fixtures/make_raster_fixtures.py). The rule checked is the
// project's contract (DEVELOPERS.md): every malformed file yields InputError, never another
// exception, a hang or a huge allocation. Byte layouts used to aim the mutations follow
// TIFF 6.0 (Adobe, 1992) section 2 and BigTIFF (libtiff, 2007).
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, describe, expect, it } from 'vitest';
import { isInputError } from '../../workers/core/errors.js';
import { openRaster } from '../../workers/core/raster/index.js';
import { mulberry32 as prng } from '../../workers/core/prng.js';

const DIR = fileURLToPath(new URL('../fixtures/raster/', import.meta.url));
const BASES = [
  'utm_u16_deflate_p2_tiled.tif', 'f32_lzw_p3_striped.tif', 'i16_none_striped.tif', 'chunky_i8_3band_lzw.tif',
  'zstd_u16_bigendian.tif', 'bigtiff_f32_bigendian_p3.tif', 'planar2_u32_3band.tif', 'tiff_datetime_only.tif',
  'lzw_table_reset_u8.tif', 'cog_u16.tif',
];
const RANDOM_CASES_PER_BASE = 150; // plus the aimed truncations and dimension cases
const MAX_RSS_GROWTH_BYTES = 400 * 1024 * 1024;


interface Layout {
  le: boolean; big: boolean; ifd: number; entries: { at: number; tag: number; type: number; count: number; value: number; bytes: number }[];
  boundaries: number[];
}
const SIZES: Record<number, number> = { 1: 1, 2: 1, 3: 2, 4: 4, 5: 8, 6: 1, 7: 1, 8: 2, 9: 4, 10: 8, 11: 4, 12: 8, 16: 8, 17: 8, 18: 8 };

/** Locate the first IFD's entries and every structure boundary (header, entries, tag data, blocks). */
function layoutOf(buf: Buffer): Layout {
  const le = buf.toString('latin1', 0, 2) === 'II';
  const u16 = (o: number) => (le ? buf.readUInt16LE(o) : buf.readUInt16BE(o));
  const u32 = (o: number) => (le ? buf.readUInt32LE(o) : buf.readUInt32BE(o));
  const u64 = (o: number) => Number(le ? buf.readBigUInt64LE(o) : buf.readBigUInt64BE(o));
  const big = u16(2) === 43;
  const ifd = big ? u64(8) : u32(4);
  const n = big ? u64(ifd) : u16(ifd);
  const start = ifd + (big ? 8 : 2);
  const esz = big ? 20 : 12;
  const entries: Layout['entries'] = [];
  const boundaries = new Set<number>([0, 2, 4, 8, big ? 16 : 8, ifd, start, start + n * esz]);
  for (let i = 0; i < n; i++) {
    const at = start + i * esz;
    const tag = u16(at), type = u16(at + 2);
    const count = big ? u64(at + 4) : u32(at + 4);
    const bytes = count * (SIZES[type] ?? 1);
    const inline = bytes <= (big ? 8 : 4);
    const value = inline ? at + (big ? 12 : 8) : big ? u64(at + 12) : u32(at + 8);
    entries.push({ at, tag, type, count, value, bytes });
    boundaries.add(at).add(at + esz);
    if (!inline) boundaries.add(value).add(value + bytes);
  }
  // Block data boundaries from the offset/byte-count tags (273/279 strips, 324/325 tiles).
  const readArr = (tag: number): number[] => {
    const e = entries.find((x) => x.tag === tag);
    if (!e) return [];
    const out: number[] = [];
    const sz = SIZES[e.type];
    for (let i = 0; i < e.count; i++) {
      const o = e.value + i * sz;
      out.push(sz === 2 ? u16(o) : sz === 4 ? u32(o) : u64(o));
    }
    return out;
  };
  for (const [ot, ct] of [[273, 279], [324, 325]]) {
    const offs = readArr(ot), cnts = readArr(ct);
    offs.forEach((o, i) => { boundaries.add(o); boundaries.add(o + (cnts[i] ?? 0)); boundaries.add(o + Math.floor((cnts[i] ?? 0) / 2)); });
  }
  return { le, big, ifd, entries, boundaries: [...boundaries].filter((b) => b > 0 && b < buf.length).sort((a, b) => a - b) };
}

type Mutation = { kind: string; data: Buffer };

function mutations(name: string, base: Buffer, rand: () => number, count: number): Mutation[] {
  const L = layoutOf(base);
  const out: Mutation[] = [];
  const w32 = (b: Buffer, o: number, v: number) => (L.le ? b.writeUInt32LE(v >>> 0, o) : b.writeUInt32BE(v >>> 0, o));
  const w16 = (b: Buffer, o: number, v: number) => (L.le ? b.writeUInt16LE(v & 0xffff, o) : b.writeUInt16BE(v & 0xffff, o));
  const wCount = (b: Buffer, at: number, v: number) => (L.big ? (L.le ? b.writeBigUInt64LE(BigInt(v), at + 4) : b.writeBigUInt64BE(BigInt(v), at + 4)) : w32(b, at + 4, v));
  const wValue = (b: Buffer, at: number, v: number) => (L.big ? (L.le ? b.writeBigUInt64LE(BigInt(v), at + 12) : b.writeBigUInt64BE(BigInt(v), at + 12)) : w32(b, at + 8, v));
  const pick = <T>(xs: T[]) => xs[Math.floor(rand() * xs.length)];
  const ifdEnd = L.entries[L.entries.length - 1].at + (L.big ? 20 : 12);

  // Truncation at every structure boundary (and one byte either side).
  for (const b of L.boundaries) {
    for (const cut of [b - 1, b, b + 1]) if (cut > 0 && cut < base.length) out.push({ kind: 'truncate', data: base.subarray(0, cut) });
  }
  // Absurd dimensions: 10^6 x 10^6 written as LONG values; and huge tile sizes.
  for (const [tags, v] of [[[256, 257], 1_000_000], [[256], 0], [[257], 70_000], [[322, 323], 65_536], [[278], 0], [[277], 60_000]] as const) {
    const d = Buffer.from(base);
    for (const tag of tags) {
      const e = L.entries.find((x) => x.tag === tag);
      if (!e) continue;
      w16(d, e.at + 2, 4); // type LONG
      wCount(d, e.at, 1);
      if (L.big) wValue(d, e.at, v); else w32(d, e.at + 8, v);
    }
    out.push({ kind: 'absurd-dimension', data: d });
  }
  const target = out.length + count;
  while (out.length < target) {
    const d = Buffer.from(base);
    const r = rand();
    if (r < 0.3) {
      // Bit flips anywhere in the file.
      const flips = 1 + Math.floor(rand() * 8);
      for (let i = 0; i < flips; i++) { const o = Math.floor(rand() * d.length); d[o] ^= 1 << Math.floor(rand() * 8); }
      out.push({ kind: 'bitflip', data: d });
    } else if (r < 0.55) {
      // Bit flips inside the header and IFD entries, where structure lives.
      const flips = 1 + Math.floor(rand() * 3);
      for (let i = 0; i < flips; i++) { const o = rand() < 0.1 ? Math.floor(rand() * 16) : L.ifd + Math.floor(rand() * (ifdEnd - L.ifd)); d[o] ^= 1 << Math.floor(rand() * 8); }
      out.push({ kind: 'ifd-bitflip', data: d });
    } else if (r < 0.7) {
      const e = pick(L.entries);
      wCount(d, e.at, pick([0, 1, 2, e.count + 1, Math.max(0, e.count - 1), e.count * 1000, 0x7fffffff, 0xffffffff]));
      out.push({ kind: 'bogus-count', data: d });
    } else if (r < 0.85) {
      const e = pick(L.entries);
      wValue(d, e.at, pick([0, 1, base.length - 1, base.length, base.length + 100, 0x7fffffff, 0xffffffff, Math.floor(rand() * base.length)]));
      out.push({ kind: 'bogus-offset', data: d });
    } else if (r < 0.95) {
      // Scramble a block: corrupt bytes inside compressed tile/strip data.
      const o = L.boundaries[Math.floor(rand() * L.boundaries.length)];
      for (let i = 0; i < 16 && o + i < d.length; i++) d[o + i] = Math.floor(rand() * 256);
      out.push({ kind: 'block-garbage', data: d });
    } else {
      const e = pick(L.entries);
      w16(d, e.at + 2, pick([0, 2, 3, 4, 5, 11, 12, 16, 99]));
      out.push({ kind: 'bogus-type', data: d });
    }
  }
  void name;
  return out;
}

describe('GeoTIFF reader fuzz', () => {
  const work = mkdtempSync(join(tmpdir(), 'raster-fuzz-'));
  afterAll(() => rmSync(work, { recursive: true, force: true }));

  // every case runs whatever the machine's speed (no time budget); a hang is caught by the test timeout
  it('every mutated file reads or raises InputError, without a memory blow-up', async () => {
    const rand = prng(0x5eed1234);
    const counts: Record<string, { ok: number; inputError: number }> = {};
    const rss0 = process.memoryUsage().rss;
    let maxRss = rss0;
    let slowest = 0;
    let total = 0;
    const t0 = Date.now();
    for (const [bi, name] of BASES.entries()) {
      const base = readFileSync(DIR + name);
      for (const [i, m] of mutations(name, base, rand, RANDOM_CASES_PER_BASE).entries()) {
        const path = join(work, `case-${bi}-${i}.tif`);
        writeFileSync(path, m.data);
        if (process.env.FUZZ_TRACE) console.error(`case ${name} ${i} ${m.kind}`);
        const c0 = Date.now();
        let outcome: 'ok' | 'inputError';
        try {
          const r = await openRaster(path);
          try {
            const { width, height, bands } = r.header;
            for (let b = 0; b < bands; b++) {
              for await (const blk of r.blocks({ colOff: 0, rowOff: 0, width, height }, b)) {
                if (blk.data.length < (blk.window.height - 1) * blk.stride + blk.window.width) throw new Error('short block');
              }
            }
          } finally {
            await r.close();
          }
          outcome = 'ok';
        } catch (e) {
          if (!isInputError(e)) {
            throw new Error(`${name} case ${i} (${m.kind}) threw ${(e as Error).name}: ${(e as Error).message}`);
          }
          expect((e as Error).message).toContain(path);
          outcome = 'inputError';
        }
        const ms = Date.now() - c0;
        slowest = Math.max(slowest, ms);
        const k = (counts[m.kind] ??= { ok: 0, inputError: 0 });
        k[outcome]++;
        total++;
        if (total % 50 === 0) maxRss = Math.max(maxRss, process.memoryUsage().rss);
        rmSync(path);
      }
    }
    maxRss = Math.max(maxRss, process.memoryUsage().rss);
    const ok = Object.values(counts).reduce((s, c) => s + c.ok, 0);
    const bad = Object.values(counts).reduce((s, c) => s + c.inputError, 0);
    console.log(`raster fuzz: ${total} cases, ${ok} ok, ${bad} InputError, slowest ${slowest} ms, rss growth ${((maxRss - rss0) / 1048576).toFixed(1)} MiB, ${Date.now() - t0} ms`);
    console.log(JSON.stringify(counts));
    expect(total).toBeGreaterThanOrEqual(1000);
    expect(maxRss - rss0).toBeLessThan(MAX_RSS_GROWTH_BYTES);
    // Both outcomes must occur, or the mutations are not reaching the reader.
    expect(ok).toBeGreaterThan(0);
    expect(bad).toBeGreaterThan(0);
  }, 900_000);
});
