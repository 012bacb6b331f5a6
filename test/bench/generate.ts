/**
 * Bench inputs in test/bench/.work/: the full scene, its centre clip and the
 * ward file, written once and reused while the generator version matches.
 */
import { mkdir, readFile, stat, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { writeGeoTiff, type WriteGeoTiffOptions } from '../../workers/core/raster/write.js';
import { wardCollection } from './districts.js';
import {
  BENCH_EPSG, CLIP_SIZE, CLIP_TRANSFORM, FULL_SIZE, FULL_TRANSFORM, ST_NODATA, ST_OFFSET, ST_SCALE, TILE_SIZE,
  clipDns, generateSceneDns,
} from './scene.js';

/** Bump when anything that changes the generated files changes. */
export const GENERATOR_VERSION = 3;

export interface BenchFiles {
  full: string;
  clip: string;
  districts: string;
  /** Compressed file bytes / decoded bytes (UInt16), per raster. */
  compressionRatio: { full: number; clip: number };
  /** True when the files were written by this call. */
  generated: boolean;
  generateSeconds: number;
}

interface Manifest {
  version: number;
  compressionRatio: { full: number; clip: number };
}

async function exists(path: string): Promise<boolean> {
  try {
    await stat(path);
    return true;
  } catch {
    return false;
  }
}

function rasterOptions(width: number, data: Uint16Array, transform: WriteGeoTiffOptions['transform']): WriteGeoTiffOptions {
  return {
    width, height: width, data, transform, epsg: BENCH_EPSG,
    nodata: ST_NODATA, scale: ST_SCALE, offset: ST_OFFSET,
    metadata: { ACQUISITION_TIME: '2025-07-14T13:05:00Z' },
    layout: { tiled: true, tileWidth: TILE_SIZE, tileHeight: TILE_SIZE },
    compression: 'deflate', predictor: 2,
  };
}

/**
 * Make sure the bench inputs exist in `workDir`; write them when missing or
 * written by another generator version.
 * @param workDir folder for the files (created when missing)
 * @param log progress lines
 */
export async function ensureBenchData(workDir: string, log: (line: string) => void): Promise<BenchFiles> {
  const full = join(workDir, `scene_${FULL_SIZE}.tif`);
  const clip = join(workDir, `scene_${CLIP_SIZE}.tif`);
  const districts = join(workDir, 'wards.geojson');
  const manifestPath = join(workDir, 'manifest.json');
  let manifest: Manifest | null = null;
  try {
    manifest = JSON.parse(await readFile(manifestPath, 'utf8')) as Manifest;
  } catch {
    manifest = null;
  }
  if (manifest?.version === GENERATOR_VERSION && (await exists(full)) && (await exists(clip)) && (await exists(districts))) {
    return { full, clip, districts, compressionRatio: manifest.compressionRatio, generated: false, generateSeconds: 0 };
  }
  log(`generating bench inputs in ${workDir} (generator version ${GENERATOR_VERSION}) ...`);
  const t0 = performance.now();
  await mkdir(workDir, { recursive: true });
  const dns = generateSceneDns();
  await writeGeoTiff(full, rasterOptions(FULL_SIZE, dns, FULL_TRANSFORM));
  await writeGeoTiff(clip, rasterOptions(CLIP_SIZE, clipDns(dns), CLIP_TRANSFORM));
  await writeFile(districts, JSON.stringify(wardCollection()) + '\n');
  const ratio = async (path: string, size: number) => (size * size * 2) / (await stat(path)).size;
  const compressionRatio = { full: await ratio(full, FULL_SIZE), clip: await ratio(clip, CLIP_SIZE) };
  await writeFile(manifestPath, JSON.stringify({ version: GENERATOR_VERSION, compressionRatio } satisfies Manifest) + '\n');
  const generateSeconds = (performance.now() - t0) / 1000;
  return { full, clip, districts, compressionRatio, generated: true, generateSeconds };
}
