/**
 * A store for the API route tests: an invented 3 × 3 grid of districts (edges
 * shared, so queen contiguity gives each 3 to 8 neighbours) and a rural
 * reference, with day/night pairs on three July dates and one January date of
 * every year from FIRST_YEAR to LAST_YEAR, drawn from a seeded generator with
 * a warming drift that differs by district. One scene file failed, one
 * district has no valid pixel in one scene.
 *
 * The raw derived values are returned, so tests can compute every expected
 * number from the inputs with an outside reference (NumPy, SciPy).
 */
import path from 'node:path';
import { mulberry32 } from '../../workers/core/prng.js';
import type { Store } from '../../workers/store/store.js';
import {
  markSceneFailed, registerScene, replaceDerived, replaceZonalStats, setEmissivitySources, setSceneThermal, setSceneWarnings, upsertDistricts,
  type ThermalSceneInput,
} from '../../workers/store/index.js';

export const FIRST_YEAR = 2015;
export const LAST_YEAR = 2023;
export const GRID_IDS = ['a1', 'a2', 'a3', 'b1', 'b2', 'b3', 'c1', 'c2', 'c3'];
/** July dates (three) and one January date per year. */
export const MONTH_DAYS = ['01-20', '07-04', '07-15', '07-27'];
const CELL = 0.01;

/** One derived row as stored: date, district and the five metrics (K, ATI 1/K). */
export interface RawDerived {
  date: string;
  district: string;
  lst_day_k: number;
  lst_night_k: number;
  suhi_day_k: number;
  suhi_night_k: number;
  ati_per_k: number;
}

export interface ApiStore {
  derived: RawDerived[];
  /** Every scene written: id, path, time, pass. */
  scenes: { id: number; path: string; acquiredAt: string | null; pass: 'day' | 'night' | null; failed: boolean }[];
  failedPath: string;
  /** The scene and district with no valid pixel. */
  emptyScene: { id: number; district: string };
}

const square = (col: number, row: number) => {
  const x = -35.6 + col * CELL, y = 44.2 + row * CELL;
  return [[[[x, y], [x + CELL, y], [x + CELL, y + CELL], [x, y + CELL], [x, y]]]];
};

/** Fill `store` with the grid, scenes under `archiveDir` (not written) and derived rows. */
export async function seedApiStore(store: Store, archiveDir: string, options: { seed?: number; lastYear?: number } = {}): Promise<ApiStore> {
  const rand = mulberry32(options.seed ?? 20240711);
  const lastYear = options.lastYear ?? LAST_YEAR;
  await upsertDistricts(store, [
    ...GRID_IDS.map((id, i) => ({ id, name: `Ward ${id.toUpperCase()}`, geometry: square(i % 3, Math.floor(i / 3)), areaSquareMetres: 8.9e5 + i * 1000, properties: { albedo: 0.15 } })),
    { id: 'rural', name: 'rural reference', role: 'rural' as const, geometry: square(6, 6), areaSquareMetres: 5e7 },
  ]);
  const base = { kind: 'lst' as const, epsg: 32625, crsDefinition: null, width: 10, height: 10, pixelSizeMetres: 100, scale: 1, offset: 0, nodata: null };
  const out: ApiStore = { derived: [], scenes: [], failedPath: '', emptyScene: { id: 0, district: '' } };
  let hash = 0;
  const nextHash = () => (++hash).toString(16).padStart(64, '0');
  for (let year = FIRST_YEAR; year <= lastYear; year++) {
    const rows = [];
    for (const md of MONTH_DAYS) {
      const date = `${year}-${md}`;
      const dayAt = `${date}T11:40:00.000Z`;
      const nightAt = `${date}T23:10:00.000Z`;
      const dayPath = path.join(archiveDir, String(year), `day-${md}.tif`);
      const nightPath = path.join(archiveDir, String(year), `night-${md}.tif`);
      const day = await registerScene(store, { ...base, path: dayPath, contentHash: nextHash(), acquiredAt: dayAt, pass: 'day', sensor: 'invented-tir' });
      const night = await registerScene(store, { ...base, path: nightPath, contentHash: nextHash(), acquiredAt: nightAt, pass: 'night', sensor: 'invented-tir' });
      out.scenes.push({ id: day, path: dayPath, acquiredAt: dayAt, pass: 'day', failed: false }, { id: night, path: nightPath, acquiredAt: nightAt, pass: 'night', failed: false });
      const summer = md.startsWith('07');
      const ruralDay = (summer ? 303 : 278) + rand() * 2;
      const ruralNight = (summer ? 289 : 268) + rand() * 2;
      const zDay = [], zNight = [];
      for (const [k, id] of GRID_IDS.entries()) {
        const drift = (k - 3) * 0.04 * (year - FIRST_YEAR);
        const tDay = ruralDay + 2 + k * 0.6 + drift + (rand() - 0.5) * 1.5;
        const tNight = ruralNight + 1 + k * 0.3 + drift * 0.7 + (rand() - 0.5) * 1.0;
        const albedo = 0.12 + 0.01 * (k % 4);
        const r: RawDerived = {
          date, district: id, lst_day_k: tDay, lst_night_k: tNight, suhi_day_k: tDay - ruralDay, suhi_night_k: tNight - ruralNight,
          ati_per_k: (1 - albedo) / (tDay - tNight), // Price 1977
        };
        out.derived.push(r);
        rows.push({
          obsDate: date, districtId: id, daySceneId: day, nightSceneId: night, albedoSceneId: null, albedoSource: 'property' as const,
          tDayKelvin: tDay, tNightKelvin: tNight, albedo, atiPerKelvin: r.ati_per_k, suhiDayKelvin: r.suhi_day_k, suhiNightKelvin: r.suhi_night_k, status: 'ok',
        });
        zDay.push(zonal(id, tDay, 0.9 + rand() * 0.1));
        zNight.push(zonal(id, tNight, 0.9 + rand() * 0.1));
      }
      zDay.push(zonal('rural', ruralDay, 1));
      zNight.push(zonal('rural', ruralNight, 1));
      await replaceZonalStats(store, day, zDay);
      await replaceZonalStats(store, night, zNight);
    }
    await replaceDerived(store, rows);
  }
  // one scene with a district that had no valid pixel (its zonal mean is null), and a stored warning
  const emptyPath = path.join(archiveDir, String(lastYear), 'night-08-02.tif');
  const emptyAt = `${lastYear}-08-02T23:05:00.000Z`;
  const empty = await registerScene(store, { ...base, path: emptyPath, contentHash: nextHash(), acquiredAt: emptyAt, pass: 'night', sensor: 'invented-tir' });
  await replaceZonalStats(store, empty, [
    { ...zonal('a1', 290, 0.95) },
    { ...zonal('a2', 0, 0), meanKelvin: null, stdKelvin: null, minKelvin: null, maxKelvin: null, medianKelvin: null, p10Kelvin: null, p90Kelvin: null, valid: 0, nodataCount: 100 },
  ]);
  await setSceneWarnings(store, empty, [`${emptyPath}: GDAL_METADATA could not be parsed`]);
  out.scenes.push({ id: empty, path: emptyPath, acquiredAt: emptyAt, pass: 'night', failed: false });
  out.emptyScene = { id: empty, district: 'a2' };
  // a file that could not be read at all: no time, no pass
  out.failedPath = path.join(archiveDir, 'broken', 'unreadable.tif');
  await markSceneFailed(store, { path: out.failedPath, error: `${out.failedPath}: not a TIFF file (no byte-order mark)` });
  const [failed] = await store.query<{ id: number }>('SELECT id FROM scenes WHERE path = $1', [out.failedPath]);
  out.scenes.push({ id: Number(failed.id), path: out.failedPath, acquiredAt: null, pass: null, failed: true });
  return out;
}

function zonal(districtId: string, mean: number, validFraction: number) {
  return {
    districtId, pixels: 100, valid: 100 * validFraction, validFraction, meanKelvin: mean, stdKelvin: 1, minKelvin: mean - 1, maxKelvin: mean + 1,
    medianKelvin: mean, p10Kelvin: mean - 1, p90Kelvin: mean + 1, nodataCount: 100 - 100 * validFraction, maskedCount: 0, implausibleCount: 0, coverageRule: 'centre',
  };
}

/** One thermal pass written by {@link addThermalPasses}: what ingest would have decided for it. */
export interface SeededThermalPass {
  id: number;
  path: string;
  acquiredAt: string;
  thermal: ThermalSceneInput;
  emissivitySource: string;
}

/**
 * Two night passes delivered as Level-1 thermal DN (kind 'thermal'), stored through the
 * functions ingest uses: one corrected for the atmosphere (the radiative transfer equation
 * with invented transmittance and path radiances), one with the emissivity correction alone.
 * Their metadata file lies under `archiveDir`, so the API must show it relative to the root.
 * No derived rows: the district means stay those of {@link seedApiStore}.
 */
export async function addThermalPasses(store: Store, archiveDir: string, year = LAST_YEAR): Promise<SeededThermalPass[]> {
  const base = { kind: 'thermal' as const, epsg: 32625, crsDefinition: null, width: 10, height: 10, pixelSizeMetres: 100, scale: 1, offset: 0, nodata: 0, sensor: 'invented-tir' };
  const plans = [
    {
      md: '09-10', at: `${year}-09-10T22:50:00.000Z`, emissivitySource: 'constant 0.97 (default)',
      thermal: { lstMethod: 'rte', atmosphere: { transmittance: 0.88, upwellingRadiance: 0.61, downwellingRadiance: 1.02 }, constantsSource: 'manifest' },
    },
    {
      md: '09-26', at: `${year}-09-26T22:55:00.000Z`, emissivitySource: 'district property emissivity',
      thermal: { lstMethod: 'emissivity_only', atmosphere: null, constantsSource: `metadata file ${path.join(archiveDir, String(year), 'thermal-09-26_MTL.txt')}` },
    },
  ] as const;
  const out: SeededThermalPass[] = [];
  for (const [k, p] of plans.entries()) {
    const file = path.join(archiveDir, String(year), `thermal-${p.md}_B10.tif`);
    const id = await registerScene(store, { ...base, path: file, contentHash: `${'e'.repeat(62)}${String(k).padStart(2, '0')}`, acquiredAt: p.at, pass: 'night' });
    await setSceneThermal(store, id, p.thermal);
    await replaceZonalStats(store, id, GRID_IDS.map((d, i) => zonal(d, 288 + i * 0.2, 0.8 + i * 0.02)));
    await setEmissivitySources(store, id, p.emissivitySource, Object.fromEntries(GRID_IDS.map((d) => [d, p.emissivitySource])));
    out.push({ id, path: file, acquiredAt: p.at, thermal: p.thermal, emissivitySource: p.emissivitySource });
  }
  return out;
}
