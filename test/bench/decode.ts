/**
 * Decoder throughput on a 4000 x 4000 UInt16 GeoTIFF written by gdal_translate.
 *
 *   npx tsc -p tsconfig.json && node dist/test/bench/decode.js
 *
 * Needs GDAL (gdal_translate) and Debian's /usr/bin/python3 with NumPy to make the
 * input once under test/bench/.work/ (gitignored). Prints MB/s of decoded pixels:
 * our LZW decoder vs the geotiff package's, and tile-by-tile DEFLATE on native
 * zlib (openRaster) vs geotiff's readRasters.
 */
import { execFileSync } from 'node:child_process';
import { existsSync, mkdirSync } from 'node:fs';
import { open } from 'node:fs/promises';
import { join } from 'node:path';
import { fromFile, getDecoder } from 'geotiff';
import { lzwDecode } from '../../workers/core/raster/decoders/lzw.js';
import { openRaster } from '../../workers/core/raster/index.js';

const WORK = join(process.cwd(), 'test', 'bench', '.work');
const SIZE = 4000;

function makeInputs(): { lzw: string; deflate: string } {
  mkdirSync(WORK, { recursive: true });
  const raw = join(WORK, 'u16_raw.tif');
  const lzw = join(WORK, 'u16_lzw.tif');
  const deflate = join(WORK, 'u16_deflate.tif');
  if (!existsSync(raw)) {
    // An invented LST-like field: smooth pattern plus sensor-like noise.
    const py = `
import numpy as np
from osgeo import gdal
n=${SIZE}
y,x=np.mgrid[0:n,0:n]
rng=np.random.default_rng(1)
a=(40000+3000*np.sin(x/150.0)*np.cos(y/110.0)+rng.normal(0,25,(n,n))).astype(np.uint16)
ds=gdal.GetDriverByName('GTiff').Create('${raw}',n,n,1,gdal.GDT_UInt16)
ds.GetRasterBand(1).WriteArray(a); ds=None`;
    execFileSync('/usr/bin/python3', ['-c', py], { stdio: 'inherit' });
  }
  if (!existsSync(lzw)) execFileSync('gdal_translate', ['-q', '-co', 'TILED=YES', '-co', 'COMPRESS=LZW', '-co', 'PREDICTOR=2', raw, lzw]);
  if (!existsSync(deflate)) execFileSync('gdal_translate', ['-q', '-co', 'TILED=YES', '-co', 'COMPRESS=DEFLATE', '-co', 'PREDICTOR=2', raw, deflate]);
  return { lzw, deflate };
}

/** Compressed tile payloads of a tiled little-endian classic TIFF (TileOffsets 324 / TileByteCounts 325). */
async function tilePayloads(path: string): Promise<Uint8Array[]> {
  const tiff = await fromFile(path);
  try {
    const img = await tiff.getImage();
    const fd = img.fileDirectory as unknown as { loadValue(name: string): Promise<ArrayLike<number>> };
    const offs = await fd.loadValue('TileOffsets');
    const cnts = await fd.loadValue('TileByteCounts');
    const fh = await open(path, 'r');
    try {
      const out: Uint8Array[] = [];
      for (let i = 0; i < offs.length; i++) {
        const b = new Uint8Array(cnts[i]);
        await fh.read(b, 0, cnts[i], offs[i]);
        out.push(b);
      }
      return out;
    } finally {
      await fh.close();
    }
  } finally {
    tiff.close();
  }
}

const mbps = (bytes: number, ms: number) => (bytes / 1e6 / (ms / 1000)).toFixed(1);

async function main(): Promise<void> {
  const { lzw, deflate } = makeInputs();
  const decodedBytes = SIZE * SIZE * 2;
  const tileBytes = 256 * 256 * 2;

  // 1. LZW decoder alone on the same tile payloads.
  const tiles = await tilePayloads(lzw);
  // First pass includes JIT warm-up; report it and the best of three.
  const passes: number[] = [];
  let t = 0;
  for (let pass = 0; pass < 3; pass++) {
    t = performance.now();
    for (const p of tiles) lzwDecode(p, tileBytes);
    passes.push(performance.now() - t);
  }
  const oursMs = Math.min(...passes);
  console.log(`LZW ours, first pass: ${mbps(tiles.length * tileBytes, passes[0])} MB/s`);
  const theirs = (await getDecoder(5, { tileWidth: 256, tileHeight: 256, predictor: 1, bitsPerSample: 16, planarConfiguration: 1 } as never)) as unknown as { decodeBlock(b: ArrayBufferLike): ArrayBufferLike };
  const sample = tiles.slice(0, Math.ceil(tiles.length / 8)); // the bundled decoder is slow: time an eighth of the tiles
  t = performance.now();
  for (const p of sample) theirs.decodeBlock(p.slice().buffer);
  const theirsMs = performance.now() - t;
  console.log(`LZW decode only: ours ${mbps(tiles.length * tileBytes, oursMs)} MB/s (${tiles.length} tiles, ${oursMs.toFixed(0)} ms); geotiff ${mbps(sample.length * tileBytes, theirsMs)} MB/s (${sample.length} tiles, ${theirsMs.toFixed(0)} ms)`);

  // 2. Whole-image reads.
  for (const [label, path] of [['LZW', lzw], ['DEFLATE', deflate], ['LZW (2nd run)', lzw], ['DEFLATE (2nd run)', deflate]] as const) {
    t = performance.now();
    const r = await openRaster(path);
    let n = 0;
    try {
      for await (const b of r.blocks({ colOff: 0, rowOff: 0, width: SIZE, height: SIZE })) n += b.window.width * b.window.height;
    } finally {
      await r.close();
    }
    const ms = performance.now() - t;
    console.log(`${label} openRaster blocks(): ${mbps(n * 2, ms)} MB/s (${ms.toFixed(0)} ms)`);
  }
  t = performance.now();
  const tiff = await fromFile(deflate);
  try {
    const img = await tiff.getImage();
    await img.readRasters({ interleave: true });
  } finally {
    tiff.close();
  }
  const rrMs = performance.now() - t;
  console.log(`DEFLATE geotiff readRasters(): ${mbps(decodedBytes, rrMs)} MB/s (${rrMs.toFixed(0)} ms)`);
}

main().catch((e) => { console.error(e); process.exit(1); });
