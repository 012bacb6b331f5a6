/**
 * The GeoTIFF writer, checked by reading its files back with GDAL (the
 * reference GeoTIFF library, Debian python3-gdal via /usr/bin/python3) and with
 * the geotiff npm package.
 */
import { spawnSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { fromArrayBuffer } from 'geotiff';
import { encodeGeoTiff, writeGeoTiff, type WritableRaster, type WriteGeoTiffOptions, type WriteLayout } from '../../workers/core/raster/write.js';
import type { Affine } from '../../workers/core/raster/affine.js';
import { isInputError } from '../../workers/core/errors.js';
import { pythonModulesAvailable } from '../support/services.js';

const PYTHON = '/usr/bin/python3';
const HAVE_GDAL = await pythonModulesAvailable(['osgeo.gdal', 'osgeo.osr', 'numpy'], 'raster-write read-back through GDAL');

const dir = mkdtempSync(join(tmpdir(), 'heatledger-write-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

// Small deterministic generator so the pixel values are the same on every run.
function lcg(seed: number): () => number {
  let s = seed >>> 0;
  return () => {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    return s / 2 ** 32;
  };
}

type DType = 'UInt8' | 'UInt16' | 'Int16' | 'UInt32' | 'Int32' | 'Float32' | 'Float64';
const DTYPES: DType[] = ['UInt8', 'UInt16', 'Int16', 'UInt32', 'Int32', 'Float32', 'Float64'];
const RANGE: Record<DType, [number, number]> = {
  UInt8: [0, 255],
  UInt16: [0, 65535],
  Int16: [-32768, 32767],
  UInt32: [0, 4294967295],
  Int32: [-2147483648, 2147483647],
  Float32: [-1e6, 1e6],
  Float64: [-1e12, 1e12],
};

/** A smooth field plus noise, with the type's extremes and (floats) NaN / ±0 / infinities in it. */
function makeData(dtype: DType, width: number, height: number, seed: number): WritableRaster {
  const n = width * height;
  const rnd = lcg(seed);
  const [lo, hi] = RANGE[dtype];
  const arr =
    dtype === 'UInt8' ? new Uint8Array(n)
    : dtype === 'UInt16' ? new Uint16Array(n)
    : dtype === 'Int16' ? new Int16Array(n)
    : dtype === 'UInt32' ? new Uint32Array(n)
    : dtype === 'Int32' ? new Int32Array(n)
    : dtype === 'Float32' ? new Float32Array(n)
    : new Float64Array(n);
  const isFloat = dtype.startsWith('Float');
  for (let r = 0; r < height; r++) {
    for (let c = 0; c < width; c++) {
      const smooth = 0.5 + 0.4 * Math.sin(c / 9) * Math.cos(r / 7);
      const v = lo + (hi - lo) * Math.min(1, Math.max(0, smooth + 0.1 * (rnd() - 0.5)));
      arr[r * width + c] = isFloat ? v : Math.round(v);
    }
  }
  arr[0] = lo;
  arr[1] = hi;
  if (isFloat) {
    arr[2] = NaN;
    arr[3] = -0;
    arr[4] = Infinity;
    arr[5] = -Infinity;
    arr[6] = 1e-30; // subnormal in Float32 neighbourhood exercises the low bytes
  }
  return arr;
}

function md5(a: WritableRaster): string {
  // GDAL returns the array in native order; the test machine is little-endian (x86-64/arm64).
  return createHash('md5').update(new Uint8Array(a.buffer, a.byteOffset, a.byteLength)).digest('hex');
}

interface Case {
  name: string;
  path: string;
  options: WriteGeoTiffOptions;
  dtype: DType;
}

const LAYOUTS: { label: string; layout: WriteLayout }[] = [
  { label: 'tiles64x32', layout: { tiled: true, tileWidth: 64, tileHeight: 32 } },
  { label: 'strips7', layout: { tiled: false, rowsPerStrip: 7 } },
  { label: 'onestrip', layout: { tiled: false, rowsPerStrip: 1000 } },
];
const CODECS: { label: string; compression: 'deflate' | 'none'; predictor: 1 | 2 | 3 }[] = [
  { label: 'none', compression: 'none', predictor: 1 },
  { label: 'deflate-p1', compression: 'deflate', predictor: 1 },
  { label: 'deflate-p2', compression: 'deflate', predictor: 2 },
  { label: 'deflate-p3', compression: 'deflate', predictor: 3 },
];

// 75 x 50 is no multiple of the 64 x 32 tile: edge tiles are padded, the last strip is short.
const W = 75;
const H = 50;
const NORTH_UP: Affine = { a: 30, b: 0, c: 487230, d: 0, e: -30, f: 4896210 };
const ROTATED: Affine = { a: 25.98076211353316, b: 15, c: 487230, d: 15, e: -25.98076211353316, f: 4896210 }; // 30 m pixels turned by 30 degrees
const GEOGRAPHIC: Affine = { a: 0.00025, b: 0, c: -35.75, d: 0, e: -0.00025, f: 44.3 };

function buildCases(): Case[] {
  const cases: Case[] = [];
  let k = 0;
  for (const dtype of DTYPES) {
    const isFloat = dtype.startsWith('Float');
    for (const { label: ll, layout } of LAYOUTS) {
      for (const codec of CODECS) {
        if (codec.predictor === 3 && !isFloat) continue;
        k++;
        const variant = k % 3; // cycle CRS/transform kinds over the combinations
        const transform = variant === 0 ? NORTH_UP : variant === 1 ? ROTATED : GEOGRAPHIC;
        const epsg = variant === 2 ? (k % 2 === 0 ? 4326 : 4258) : 32625;
        const nodata = isFloat ? (k % 2 === 0 ? -9999.5 : NaN) : RANGE[dtype][0] + 1;
        const name = `${dtype}-${ll}-${codec.label}`;
        cases.push({
          name,
          dtype,
          path: join(dir, `${name}.tif`),
          options: {
            width: W,
            height: H,
            data: makeData(dtype, W, H, k),
            transform,
            epsg,
            nodata,
            scale: 0.00341802,
            offset: 149.0,
            metadata: { ACQUISITION_TIME: `2024-07-${String(1 + (k % 28)).padStart(2, '0')}T15:52:00Z`, KIND: 'lst', NOTE: 'a < b & "c"' },
            dateTime: '2024:07:14 15:52:00',
            layout,
            compression: codec.compression,
            predictor: codec.predictor,
          },
        });
      }
    }
  }
  return cases;
}

const CASES = buildCases();
const written = Promise.all(CASES.map((c) => writeGeoTiff(c.path, c.options)));

// Reads every file with GDAL and reports what GDAL sees, as JSON.
const GDAL_READER = `
import sys, json, hashlib, math
from osgeo import gdal, osr
gdal.UseExceptions()
out = {}
for path in json.load(sys.stdin):
    ds = gdal.Open(path)
    band = ds.GetRasterBand(1)
    arr = band.ReadAsArray()
    srs = ds.GetSpatialRef()
    nd = band.GetNoDataValue()
    out[path] = {
        'size': [ds.RasterXSize, ds.RasterYSize, ds.RasterCount],
        'dtype': gdal.GetDataTypeName(band.DataType),
        'md5': hashlib.md5(arr.astype(arr.dtype.newbyteorder('<')).tobytes()).hexdigest(),
        'gt': list(ds.GetGeoTransform()),
        'epsg': srs.GetAuthorityCode(None),
        'projected': bool(srs.IsProjected()),
        'geographic': bool(srs.IsGeographic()),
        'nodata': None if nd is None else ('nan' if math.isnan(nd) else nd),
        'scale': band.GetScale(),
        'offset': band.GetOffset(),
        'md': ds.GetMetadata(),
        'struct': ds.GetMetadata('IMAGE_STRUCTURE'),
        'block': band.GetBlockSize(),
    }
json.dump(out, sys.stdout)
`;

interface GdalView {
  size: number[];
  dtype: string;
  md5: string;
  gt: number[];
  epsg: string;
  projected: boolean;
  geographic: boolean;
  nodata: number | 'nan' | null;
  scale: number;
  offset: number;
  md: Record<string, string>;
  struct: Record<string, string>;
  block: number[];
}

function readWithGdal(paths: string[]): Record<string, GdalView> {
  const r = spawnSync(PYTHON, ['-c', GDAL_READER], { input: JSON.stringify(paths), encoding: 'utf8', maxBuffer: 64 << 20 });
  if (r.status !== 0) throw new Error(`GDAL reader failed: ${r.stderr}`);
  return JSON.parse(r.stdout) as Record<string, GdalView>;
}

if (!HAVE_GDAL) {
  console.log('raster-write: GDAL read-back checks not run: /usr/bin/python3 with osgeo (python3-gdal) is missing');
} else {
  describe('writeGeoTiff read back with GDAL (reference library)', () => {
    let views: Record<string, GdalView> = {};
    beforeAll(async () => {
      await written;
      views = readWithGdal(CASES.map((c) => c.path));
    });
    it('GDAL opens every file', () => {
      expect(Object.keys(views).length).toBe(CASES.length);
    });

    for (const c of CASES) {
      it(c.name, () => {
        const v = views[c.path];
        expect(v, 'GDAL view').toBeDefined();
        const o = c.options;
        // Pixels identical: md5 of GDAL's numpy array vs md5 of the array we wrote.
        expect(v.size).toEqual([W, H, 1]);
        expect(v.dtype).toBe(c.dtype === 'UInt8' ? 'Byte' : c.dtype); // GDAL calls UInt8 "Byte"
        expect(v.md5).toBe(md5(o.data));
        // GDAL geotransform [c, a, b, f, d, e] (GDAL data model) must equal our affine exactly.
        const t = o.transform;
        expect(v.gt).toEqual([t.c, t.a, t.b, t.f, t.d, t.e]);
        expect(v.epsg).toBe(String(o.epsg));
        expect(v.projected).toBe(o.epsg === 32625);
        expect(v.geographic).toBe(o.epsg !== 32625);
        expect(v.md.AREA_OR_POINT).toBe('Area'); // GTRasterTypeGeoKey = PixelIsArea
        if (Number.isNaN(o.nodata)) expect(v.nodata).toBe('nan');
        else expect(v.nodata).toBe(o.nodata);
        expect(v.scale).toBe(0.00341802);
        expect(v.offset).toBe(149.0);
        expect(v.md.ACQUISITION_TIME).toBe(o.metadata!.ACQUISITION_TIME);
        expect(v.md.KIND).toBe('lst');
        expect(v.md.NOTE).toBe('a < b & "c"'); // GDAL's double escaping of item values survives the round trip
        expect(v.md.TIFFTAG_DATETIME).toBe('2024:07:14 15:52:00');
        // Layout and codec as GDAL reports them (IMAGE_STRUCTURE domain).
        if (o.layout!.tiled) expect(v.block).toEqual([64, 32]);
        else if (o.compression === 'none' && o.layout!.rowsPerStrip >= H) {
          // libtiff "strip chopping" splits one large uncompressed strip into virtual strips (from memory).
          expect(v.block[0]).toBe(W);
          expect(v.block[1]).toBeLessThanOrEqual(H);
        } else expect(v.block).toEqual([W, Math.min(H, o.layout!.rowsPerStrip)]);
        if (o.compression === 'deflate') expect(v.struct.COMPRESSION).toBe('DEFLATE');
        else expect(v.struct.COMPRESSION).toBeUndefined();
        if (o.predictor !== 1) expect(v.struct.PREDICTOR).toBe(String(o.predictor));
        else expect(v.struct.PREDICTOR).toBeUndefined();
      });
    }
  });
}

describe('encodeGeoTiff read back with the geotiff npm package', () => {
  for (const c of CASES) {
    // geotiff 3.0.5 refuses predictor 2 on 64-bit samples ("Predictor 2 not allowed with 64 bits"),
    // a limit of that reader; GDAL reads these files above.
    if (c.options.predictor === 2 && c.dtype === 'Float64') continue;
    it(c.name, async () => {
      const buf = encodeGeoTiff(c.options);
      // Same bytes from both entry points (sync and thread-pool compression).
      await written;
      expect(buf.equals(readFileSync(c.path))).toBe(true);
      const tiff = await fromArrayBuffer(buf.buffer.slice(buf.byteOffset, buf.byteOffset + buf.byteLength) as ArrayBuffer);
      const img = await tiff.getImage();
      expect(img.getWidth()).toBe(W);
      expect(img.getHeight()).toBe(H);
      expect(img.getSamplesPerPixel()).toBe(1);
      const keys = img.getGeoKeys() as Record<string, number> | null;
      expect(keys?.GTRasterTypeGeoKey).toBe(1);
      if (c.options.epsg === 32625) {
        expect(keys?.GTModelTypeGeoKey).toBe(1);
        expect(keys?.ProjectedCSTypeGeoKey).toBe(32625);
      } else {
        expect(keys?.GTModelTypeGeoKey).toBe(2);
        expect(keys?.GeographicTypeGeoKey).toBe(c.options.epsg);
      }
      const nd = img.getGDALNoData();
      if (Number.isNaN(c.options.nodata)) expect(Number.isNaN(nd)).toBe(true);
      else expect(nd).toBe(c.options.nodata);
      const t = c.options.transform;
      if (t.b === 0) {
        expect(img.getOrigin().slice(0, 2)).toEqual([t.c, t.f]);
        expect(img.getResolution().slice(0, 2)).toEqual([t.a, t.e]);
      }
      const rasters = (await img.readRasters()) as unknown as WritableRaster[];
      expect(md5(rasters[0])).toBe(md5(c.options.data));
    });
  }
});

describe('writer refuses inconsistent options with an InputError', () => {
  const base: WriteGeoTiffOptions = {
    width: 4,
    height: 3,
    data: new Uint16Array(12),
    transform: NORTH_UP,
    epsg: 32625,
  };
  const bad: [string, Partial<WriteGeoTiffOptions>, RegExp][] = [
    ['data length', { data: new Uint16Array(11) }, /11 values/],
    ['tile not a multiple of 16 (TIFF 6.0 section 15)', { layout: { tiled: true, tileWidth: 24, tileHeight: 16 } }, /multiples of 16/],
    ['predictor 3 on integers (Technical Note 3 is for floats)', { predictor: 3 }, /Float32 or Float64/],
    ['predictor without compression', { compression: 'none', predictor: 2 }, /needs DEFLATE/],
    ['nodata outside UInt16', { nodata: -1 }, /not representable as UInt16/],
    ['fractional nodata for integers', { nodata: 0.5 }, /not representable/],
    ['DateTime format (TIFF 6.0 tag 306)', { dateTime: '2024-07-14T15:52:00Z' }, /YYYY:MM:DD HH:MM:SS/],
    ['singular transform', { transform: { a: 0, b: 0, c: 0, d: 0, e: 0, f: 0 } }, /singular/],
    ['unknown EPSG code', { epsg: 65001 }, /not in the bundled EPSG table/],
    ['geocentric EPSG code', { epsg: 4978 }, /geocentric/],
    ['Int8 data', { data: new Int8Array(12) as unknown as Uint8Array }, /typed array/],
    ['zero width', { width: 0 }, /positive integers/],
  ];
  for (const [label, patch, re] of bad) {
    it(label, async () => {
      const opts = { ...base, ...patch } as WriteGeoTiffOptions;
      let err: unknown;
      try {
        encodeGeoTiff(opts);
      } catch (e) {
        err = e;
      }
      expect(isInputError(err)).toBe(true);
      expect((err as Error).message).toMatch(re);
      // The file entry point names the file in the message.
      await expect(writeGeoTiff(join(dir, 'bad.tif'), opts)).rejects.toThrow(join(dir, 'bad.tif'));
    });
  }

  it('an unknown code is accepted with an explicit modelType', () => {
    const buf = encodeGeoTiff({ ...base, epsg: 65001, modelType: 'projected' });
    expect(buf.readUInt16LE(2)).toBe(42); // TIFF 6.0 header magic
  });
});
