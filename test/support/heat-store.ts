/**
 * A small store for the API and CLI output tests: three invented districts and
 * a rural reference, one day/night pair in July 2024 with its derived rows, and
 * one archive file that failed with the reader's own message.
 *
 * District "quay" carries a spreadsheet formula as its name and "park" a
 * negative day SUHI, so CSV output has both a text cell to escape and a
 * negative number that must stay a number.
 */
import { mkdirSync, writeFileSync } from 'node:fs';
import path from 'node:path';
import { openRaster } from '../../workers/core/raster/index.js';
import type { Store } from '../../workers/store/store.js';
import { markSceneFailed, registerScene, replaceDerived, replaceZonalStats, upsertDistricts } from '../../workers/store/index.js';

export const FORMULA_NAME = '=HYPERLINK("https://example.invalid/","open")';

const sq = (x: number, y: number) => [[[[x, y], [x + 0.01, y], [x + 0.01, y + 0.01], [x, y + 0.01], [x, y]]]];

export interface SeededStore {
  /** Absolute path of the archive file that failed. */
  failedPath: string;
  /** The message stored for it (the reader's InputError, which names the file). */
  failedError: string;
}

/** Fill `store`; scene paths lie under `archiveDir` (created): the pair in 2024/, the broken file (written) in 2023/. */
export async function seedHeatStore(store: Store, archiveDir: string): Promise<SeededStore> {
  await upsertDistricts(store, [
    { id: 'core', name: 'Core', geometry: sq(-35.6, 44.2), areaSquareMetres: 1e6 },
    { id: 'park', name: 'Park', geometry: sq(-35.58, 44.2), areaSquareMetres: 1e6 },
    { id: 'quay', name: FORMULA_NAME, geometry: sq(-35.56, 44.2), areaSquareMetres: 1e6 },
    { id: 'rural', name: 'rural reference', role: 'rural', geometry: sq(-35.7, 44.1), areaSquareMetres: 5e7 },
  ]);
  const year = path.join(archiveDir, '2024');
  mkdirSync(year, { recursive: true });
  const base = { kind: 'lst' as const, epsg: 32625, crsDefinition: null, width: 10, height: 10, pixelSizeMetres: 100, scale: 1, offset: 0, nodata: null };
  const day = await registerScene(store, { ...base, path: path.join(year, 'day-0714.tif'), contentHash: 'a'.repeat(64), acquiredAt: '2024-07-14T15:52:00Z', pass: 'day' });
  const night = await registerScene(store, { ...base, path: path.join(year, 'night-0715.tif'), contentHash: 'b'.repeat(64), acquiredAt: '2024-07-15T03:52:00Z', pass: 'night' });
  const z = (districtId: string, mean: number) => ({ districtId, pixels: 10, valid: 10, validFraction: 1, meanKelvin: mean, stdKelvin: 1, minKelvin: mean - 1, maxKelvin: mean + 1, medianKelvin: mean, p10Kelvin: mean - 1, p90Kelvin: mean + 1, nodataCount: 0, maskedCount: 0, implausibleCount: 0, coverageRule: 'centre' });
  await replaceZonalStats(store, day, [z('core', 315), z('park', 304), z('quay', 307.5), z('rural', 305)]);
  await replaceZonalStats(store, night, [z('core', 293), z('park', 288), z('quay', 290), z('rural', 289)]);
  const d = (districtId: string, tDay: number, tNight: number, albedo: number) => ({
    obsDate: '2024-07-14', districtId, daySceneId: day, nightSceneId: night, albedoSceneId: null, albedoSource: 'property' as const,
    tDayKelvin: tDay, tNightKelvin: tNight, albedo, atiPerKelvin: (1 - albedo) / (tDay - tNight), // Price 1977
    suhiDayKelvin: tDay - 305, suhiNightKelvin: tNight - 289, status: 'ok',
  });
  await replaceDerived(store, [d('core', 315, 293, 0.12), d('park', 304, 288, 0.18), d('quay', 307.5, 290, 0.15)]);

  // a file that is not a TIFF at all: the reader's own message is what gets stored
  const failedDir = path.join(archiveDir, '2023');
  mkdirSync(failedDir, { recursive: true });
  const failedPath = path.join(failedDir, 'broken.tif');
  writeFileSync(failedPath, 'this is not a raster, just text\n');
  let failedError = '';
  try {
    await (await openRaster(failedPath)).close();
  } catch (e) {
    failedError = (e as Error).message;
  }
  if (!failedError) throw new Error(`${failedPath} was expected to be refused by the reader`);
  await markSceneFailed(store, { path: failedPath, error: failedError });
  return { failedPath, failedError };
}
