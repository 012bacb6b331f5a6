// Fixtures and expected values come from GDAL + NumPy (see the script's docstring):
//   /usr/bin/python3 test/fixtures/make_raster_fixtures.py
// Every expected value below is read from test/fixtures/raster/expected.json, which GDAL/OSR and
// NumPy computed from the committed files; the TypeScript reader is compared with GDAL.
import { createHash } from 'node:crypto';
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import proj4 from 'proj4';
import { describe, expect, it } from 'vitest';
import { pixelToMap, toGdal } from '../../workers/core/raster/affine.js';
import { openRaster, type RasterFile, type TypedArray } from '../../workers/core/raster/index.js';

const DIR = fileURLToPath(new URL('../fixtures/raster/', import.meta.url));
interface BandExp { sha256: string; nanCount: number; sum: number; pixels: [number, number, number | null][] }
interface WinExp { request: [number, number, number, number]; clamped: [number, number, number, number] | null; sha256: string; blocks: [number, number, number, number][] }
interface FileExp {
  width: number; height: number; bands: number; dtype: string; geotransform: number[]; epsg: number | null;
  hasCrs: boolean; nodata: number | 'nan' | null; scale: number; offset: number; metadata: Record<string, string>;
  blockWidth: number; blockHeight: number; compression: string | null; interleave: string;
  bandData: BandExp[]; windows: WinExp[]; lonlat: [number, number, number, number][]; acquiredAt?: string;
}
const expected = JSON.parse(readFileSync(DIR + 'expected.json', 'utf8')) as { files: Record<string, FileExp> };

const sha = (a: TypedArray) => createHash('sha256').update(new Uint8Array(a.buffer, a.byteOffset, a.byteLength)).digest('hex');
const win = (w: number[]) => ({ colOff: w[0], rowOff: w[1], width: w[2], height: w[3] });
// TIFF compression codes: TIFF 6.0 (1, 5, 32773, 8), GDAL GTiff driver for ZSTD (50000).
const CODES: Record<string, number> = { LZW: 5, DEFLATE: 8, PACKBITS: 32773, ZSTD: 50000 };
const DTYPES: Record<string, [string, number]> = {
  uint8: ['uint', 8], int8: ['int', 8], uint16: ['uint', 16], int16: ['int', 16],
  uint32: ['uint', 32], int32: ['int', 32], float32: ['float', 32], float64: ['float', 64],
};

async function withRaster<T>(name: string, fn: (r: RasterFile) => Promise<T>): Promise<T> {
  const r = await openRaster(DIR + name);
  try { return await fn(r); } finally { await r.close(); }
}

describe('openRaster against GDAL-written fixtures', () => {
  for (const [name, exp] of Object.entries(expected.files)) {
    describe(name, () => {
      it('header matches GDAL', async () => {
        await withRaster(name, async (r) => {
          const h = r.header;
          expect([h.width, h.height, h.bands]).toEqual([exp.width, exp.height, exp.bands]);
          expect([h.sampleFormat, h.bitsPerSample]).toEqual(DTYPES[exp.dtype]);
          // GDAL's geotransform is already in the corner convention (PixelIsPoint shifted on read).
          toGdal(h.transform).forEach((v, i) => expect(v).toBeCloseTo(exp.geotransform[i], 9));
          expect(h.epsg).toBe(exp.epsg);
          expect(h.crsDefinition !== null).toBe(exp.hasCrs);
          if (exp.nodata === 'nan') expect(h.nodata).toBeNaN();
          else expect(h.nodata).toBe(exp.nodata);
          expect(h.scale).toBeCloseTo(exp.scale, 12);
          expect(h.offset).toBeCloseTo(exp.offset, 12);
          expect(h.metadata).toEqual(exp.metadata);
          expect([h.blockWidth, h.blockHeight]).toEqual([exp.blockWidth, exp.blockHeight]);
          expect(h.compression).toBe(exp.compression === null ? 1 : CODES[exp.compression]);
          expect(h.acquiredAt).toBe(exp.acquiredAt ?? null);
        });
      });

      it('every band decodes to GDAL\'s pixels', async () => {
        await withRaster(name, async (r) => {
          for (let b = 0; b < exp.bands; b++) {
            const all = await r.readWindow({ colOff: 0, rowOff: 0, width: exp.width, height: exp.height }, b);
            const e = exp.bandData[b];
            expect(all.length).toBe(exp.width * exp.height);
            let nans = 0;
            for (const v of all) if (Number.isNaN(v)) nans++;
            expect(nans).toBe(e.nanCount);
            for (const [c, row, v] of e.pixels) {
              const got = all[row * exp.width + c];
              if (v === null) expect(got).toBeNaN(); else expect(got).toBe(v);
            }
            expect(sha(all)).toBe(e.sha256);
          }
        });
      });

      it('windows at the edges are clamped and blocks meet them once', async () => {
        await withRaster(name, async (r) => {
          for (const w of exp.windows) {
            const data = await r.readWindow(win(w.request));
            expect(data.length).toBe(w.clamped ? w.clamped[2] * w.clamped[3] : 0);
            expect(sha(data)).toBe(w.sha256);
            const seen: number[][] = [];
            for await (const blk of r.blocks(win(w.request))) {
              seen.push([blk.window.colOff, blk.window.rowOff, blk.window.width, blk.window.height]);
              expect(blk.data.length).toBeGreaterThanOrEqual((blk.window.height - 1) * blk.stride + blk.window.width);
            }
            // GDAL's block grid with GetActualBlockSize (edge blocks clipped to the image).
            expect(seen).toEqual(w.blocks);
          }
        });
      });

      if (exp.lonlat.length > 0) {
        it('crsDefinition places pixel centres where GDAL/OSR does', async () => {
          await withRaster(name, async (r) => {
            const toLonLat = proj4(r.header.crsDefinition!, 'EPSG:4326');
            for (const [c, row, lon, lat] of exp.lonlat) {
              const [x, y] = pixelToMap(r.header.transform, c + 0.5, row + 0.5);
              const [gx, gy] = toLonLat.forward([x, y]);
              expect(gx).toBeCloseTo(lon, 7);
              expect(gy).toBeCloseTo(lat, 7);
            }
          });
        });
      }
    });
  }
});

describe('specific header facts', () => {
  it('reads a PixelIsPoint raster in the corner convention, half a pixel up-left', async () => {
    // The fixture was written with GDAL geotransform origin (600000, 5000000) and 10 m pixels;
    // GDAL stores the tie point at the first pixel centre and shifts it back on read (GDAL GTiff driver).
    await withRaster('pixel_is_point_u8.tif', async (r) => {
      expect(r.header.transform.c).toBeCloseTo(600000, 9);
      expect(r.header.transform.f).toBeCloseTo(5000000, 9);
    });
  });

  it('a user-defined CRS has no EPSG code but a proj4 definition', async () => {
    await withRaster('user_defined_laea.tif', async (r) => {
      expect(r.header.epsg).toBeNull();
      expect(r.header.crsDefinition).toMatch(/\+proj=laea/);
    });
  });

  it('LZW fixture is long enough for the code table to fill and reset', async () => {
    await withRaster('lzw_table_reset_u8.tif', async (r) => {
      // One strip; codes are at most 12 bits (TIFF 6.0 §13), so a strip of N bytes holds at least
      // N*8/12 codes. Derived from that bound: more than 4096 codes when N > 6144 bytes.
      expect(r.header.blockHeight).toBe(r.header.height);
      const fileBytes = readFileSync(DIR + 'lzw_table_reset_u8.tif').length;
      expect(fileBytes).toBeGreaterThan(6144 + 1024);
    });
  });
});
