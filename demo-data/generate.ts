/**
 * Seeded generator of a demo archive for the invented city (city.ts): day and
 * night LST scenes and yearly albedo scenes as real GeoTIFFs in UTM 25N
 * (EPSG 32625), UInt16 with Landsat Collection 2 ST scaling
 * (K = DN * 0.00341802 + 149.0, DN 0 = nodata; USGS LSDS-1328), tiled 256 x 256,
 * DEFLATE with predictor 2.
 *
 * The surface model is invented but physically ordered: by day the industrial
 * zone and the dense core are hottest, parks and water coolest, farmland in
 * between; by night built-up areas and water stay warm and farmland cools
 * (the night heat island of stored heat). Each date gets a regional weather
 * anomaly and a contrast factor, each pixel a fixed texture and per-scene
 * noise, and some districts warm slowly (trendKelvinPerYear in city.ts) while
 * others do not, so trend checks on the demo have a known answer.
 *
 * Usage: `node dist/demo-data/generate.js [outDir]` (default demo-data/.generated).
 */
import { mkdir } from 'node:fs/promises';
import { basename, join, resolve } from 'node:path';
import { pathToFileURL } from 'node:url';
import { InputError, isInputError } from '../workers/core/errors.js';
import type { Affine } from '../workers/core/raster/affine.js';
import { writeGeoTiff } from '../workers/core/raster/write.js';
import type { Kelvin, Metres } from '../workers/core/units.js';
import { CITY_EPSG, CITY_GRID, CITY_NAME, CITY_SLUG, DISTRICTS, districtAt, outerSurfaceAt, writeDistrictsGeoJson, writeWaterGeoJson, type LandUse } from './city.js';
import { mulberry32 } from '../workers/core/prng.js';
export { mulberry32 };

export interface ArchiveOptions {
  /** PRNG seed; the same seed gives byte-identical files. Default 20190601. */
  seed?: number;
  /** First year of the archive. Default 2019. */
  firstYear?: number;
  /** Number of years. Default 6 (2019-2024). */
  years?: number;
  /** Day/night scene pairs per summer (June to mid-September). Default 10. */
  pairsPerYear?: number;
  /** Pixel size, metres. Default 100. */
  pixelSizeMetres?: number;
  /** Rural margin around the city grid, metres. Default 12000. */
  ruralMarginMetres?: number;
  /**
   * Warming built into the archive, Kelvin per year by district id; when given it
   * replaces the city's own (`trendKelvinPerYear` in city.ts) and districts not
   * listed do not warm. Default: the city's own.
   */
  trendsKelvinPerYear?: Record<string, number>;
}

export interface ArchiveResult {
  /** Written GeoTIFFs, in date order. */
  files: string[];
  /** The districts GeoJSON written beside them. */
  districtsPath: string;
  /** The water outside the districts (sea, estuary, river) as GeoJSON, written beside them. */
  waterPath: string;
}

/** Landsat Collection 2 Level-2 ST scaling (USGS LSDS-1328). */
export const ST_SCALE = 0.00341802;
export const ST_OFFSET_KELVIN = 149.0;
export const ALBEDO_SCALE = 0.0001;

/** Longitude of the city centre (degrees east), for pass times in local solar time. */
const CITY_LONGITUDE = -35.6;


/** Standard normal deviates from a uniform source (Box & Muller 1958, Ann. Math. Stat. 29:610-611; citation from memory). */
function normalSource(rand: () => number): () => number {
  let spare: number | null = null;
  return () => {
    if (spare !== null) {
      const s = spare;
      spare = null;
      return s;
    }
    const u = 1 - rand();
    const v = rand();
    const m = Math.sqrt(-2 * Math.log(u));
    spare = m * Math.sin(2 * Math.PI * v);
    return m * Math.cos(2 * Math.PI * v);
  };
}

/** Integer hash of a lattice point and a seed, to [0, 1). */
function hash2(ix: number, iy: number, seed: number): number {
  let h = Math.imul(ix, 0x27d4eb2d) ^ Math.imul(iy, 0x165667b1) ^ Math.imul(seed, 0x9e3779b1);
  h = Math.imul(h ^ (h >>> 15), 0x85ebca6b);
  h = Math.imul(h ^ (h >>> 13), 0xc2b2ae35);
  return ((h ^ (h >>> 16)) >>> 0) / 4294967296;
}

/**
 * Smooth value noise in [-1, 1] with features about `cellMetres` across: lattice values
 * blended with the cubic fade 3t^2 - 2t^3 (common practice, no source).
 */
function valueNoise(x: number, y: number, cellMetres: number, seed: number): number {
  const gx = x / cellMetres;
  const gy = y / cellMetres;
  const ix = Math.floor(gx);
  const iy = Math.floor(gy);
  const fx = gx - ix;
  const fy = gy - iy;
  const sx = fx * fx * (3 - 2 * fx);
  const sy = fy * fy * (3 - 2 * fy);
  const v00 = hash2(ix, iy, seed), v10 = hash2(ix + 1, iy, seed);
  const v01 = hash2(ix, iy + 1, seed), v11 = hash2(ix + 1, iy + 1, seed);
  const top = v00 + (v10 - v00) * sx;
  const bottom = v01 + (v11 - v01) * sx;
  return 2 * (top + (bottom - top) * sy) - 1;
}

type Surface = LandUse | 'sea';

// Summer clear-sky surface temperatures of the invented climate (Kelvin), day pass
// ~13:30 and night pass ~01:30 local solar time. Invented values, ordered as
// surface heat islands usually are (common practice, no source).
const DAY_K: Record<Surface, number> = {
  industrial: 312.0, dense_core: 309.5, harbour: 307.5, suburban: 306.0, farmland: 303.0, park: 300.5, water: 296.0, sea: 293.5,
};
const NIGHT_K: Record<Surface, number> = {
  industrial: 291.0, dense_core: 291.5, harbour: 290.5, suburban: 289.0, farmland: 286.5, park: 287.5, water: 293.0, sea: 292.5,
};
const RURAL_ALBEDO: Record<'farmland' | 'water' | 'sea', number> = { farmland: 0.2, water: 0.07, sea: 0.06 };

/** Static description of every pixel: surface, district, base temperatures, trend, albedo. */
interface Scenery {
  width: number;
  height: number;
  transform: Affine;
  dayBaseK: Float32Array;
  nightBaseK: Float32Array;
  trendKPerYear: Float32Array;
  albedo: Float32Array;
}

function buildScenery(pixel: number, margin: number, seed: number, trends: readonly number[]): Scenery {
  const gridW = CITY_GRID.cols * CITY_GRID.blockMetres;
  const gridH = CITY_GRID.rows * CITY_GRID.blockMetres;
  const x0 = CITY_GRID.originXMetres - margin;
  const y1 = CITY_GRID.originYMetres + gridH + margin;
  const width = Math.ceil((gridW + 2 * margin) / pixel);
  const height = Math.ceil((gridH + 2 * margin) / pixel);
  const n = width * height;
  const dayBaseK = new Float32Array(n);
  const nightBaseK = new Float32Array(n);
  const trendKPerYear = new Float32Array(n);
  const albedo = new Float32Array(n);
  // A small per-district offset so districts of one land use differ a little.
  const districtDayOffset = DISTRICTS.map((_, i) => (hash2(i, 1, seed) - 0.5) * 1.4);
  const districtNightOffset = DISTRICTS.map((_, i) => (hash2(i, 2, seed) - 0.5) * 0.6);
  for (let r = 0; r < height; r++) {
    const y = y1 - (r + 0.5) * pixel;
    for (let c = 0; c < width; c++) {
      const x = x0 + (c + 0.5) * pixel;
      const k = r * width + c;
      const d = districtAt(x, y);
      let surface: Surface;
      let dayOff = 0, nightOff = 0, alb: number;
      if (d >= 0) {
        const spec = DISTRICTS[d];
        surface = spec.landUse;
        dayOff = districtDayOffset[d];
        nightOff = districtNightOffset[d];
        alb = spec.albedo;
        trendKPerYear[k] = trends[d];
      } else {
        surface = outerSurfaceAt(x, y); // open sea and estuary, the river, or farmland
        alb = RURAL_ALBEDO[surface];
        if (surface === 'farmland') {
          // Fields of about 600 m: bare or harvested fields run hotter by day than green crops.
          const field = hash2(Math.floor(x / 600), Math.floor(y / 600), seed + 7) - 0.5;
          dayOff = 5 * field;
          nightOff = -1.2 * field;
          alb = RURAL_ALBEDO.farmland - 0.05 * field;
        }
      }
      const isWater = surface === 'water' || surface === 'sea';
      const texture = valueNoise(x, y, 900, seed + 11) + 0.5 * valueNoise(x, y, 250, seed + 13);
      dayBaseK[k] = DAY_K[surface] + dayOff + (isWater ? 0.15 : 0.4) * texture;
      nightBaseK[k] = NIGHT_K[surface] + nightOff + (isWater ? 0.08 : 0.2) * texture;
      albedo[k] = alb + (isWater ? 0.003 : 0.008) * texture;
    }
  }
  const transform: Affine = { a: pixel, b: 0, c: x0, d: 0, e: -pixel, f: y1 };
  return { width, height, transform, dayBaseK, nightBaseK, trendKPerYear, albedo };
}

/**
 * UTC instant at a local solar hour on a calendar day: local mean solar time = UTC + lon/15 h
 * (the definition; common practice, no source). The equation of time (at most ~16 min over
 * the year; common practice, no source) is left out: invented scenes need no better.
 */
function utcAtLocalSolar(year: number, dayOfYear: number, localSolarHour: number, jitterMinutes: number): Date {
  const utcHours = localSolarHour - CITY_LONGITUDE / 15;
  const ms = Date.UTC(year, 0, dayOfYear) + Math.round((utcHours * 60 + jitterMinutes)) * 60_000;
  return new Date(ms);
}

function isoMinute(d: Date): string {
  return d.toISOString().slice(0, 16) + ':00Z';
}

function fileStamp(d: Date): string {
  const s = d.toISOString();
  return `${s.slice(0, 4)}${s.slice(5, 7)}${s.slice(8, 10)}T${s.slice(11, 13)}${s.slice(14, 16)}`;
}

function tiffDateTime(d: Date): string {
  const s = d.toISOString();
  return `${s.slice(0, 4)}:${s.slice(5, 7)}:${s.slice(8, 10)} ${s.slice(11, 19)}`;
}

/** Cloud mask: the `fraction` of pixels where a blobby noise field is highest. */
function cloudMask(s: Scenery, fraction: number, seed: number): Uint8Array {
  const n = s.width * s.height;
  const mask = new Uint8Array(n);
  if (fraction <= 0) return mask;
  const field = new Float32Array(n);
  const { a: px, c: x0, f: y1 } = s.transform;
  for (let r = 0; r < s.height; r++) {
    for (let c = 0; c < s.width; c++) {
      const x = x0 + (c + 0.5) * px;
      const y = y1 - (r + 0.5) * px;
      field[r * s.width + c] = valueNoise(x, y, 4000, seed) + 0.5 * valueNoise(x, y, 1300, seed + 1) + 0.25 * valueNoise(x, y, 400, seed + 2);
    }
  }
  const sorted = field.slice().sort();
  const threshold = sorted[Math.min(n - 1, Math.floor((1 - fraction) * n))];
  for (let k = 0; k < n; k++) if (field[k] >= threshold) mask[k] = 1;
  return mask;
}

function kelvinToDn(t: Kelvin): number {
  const dn = Math.round((t - ST_OFFSET_KELVIN) / ST_SCALE);
  return dn < 1 ? 1 : dn > 65535 ? 65535 : dn;
}

function checkOptions(o: ArchiveOptions): Required<ArchiveOptions> {
  const r: Required<ArchiveOptions> = {
    trendsKelvinPerYear: o.trendsKelvinPerYear ?? Object.fromEntries(DISTRICTS.map((d) => [d.id, d.trendKelvinPerYear])),
    seed: o.seed ?? 20190601,
    firstYear: o.firstYear ?? 2019,
    years: o.years ?? 6,
    pairsPerYear: o.pairsPerYear ?? 10,
    pixelSizeMetres: o.pixelSizeMetres ?? 100,
    ruralMarginMetres: o.ruralMarginMetres ?? 12000,
  };
  const where = 'demo archive options';
  if (!Number.isInteger(r.seed)) throw new InputError(`seed must be an integer, got ${r.seed}`, where);
  if (!Number.isInteger(r.firstYear) || r.firstYear < 1980 || r.firstYear > 2100) throw new InputError(`firstYear must be a year 1980-2100, got ${r.firstYear}`, where);
  if (!Number.isInteger(r.years) || r.years < 1 || r.years > 50) throw new InputError(`years must be an integer 1-50, got ${r.years}`, where);
  if (!Number.isInteger(r.pairsPerYear) || r.pairsPerYear < 1 || r.pairsPerYear > 50) throw new InputError(`pairsPerYear must be an integer 1-50, got ${r.pairsPerYear}`, where);
  if (!(r.pixelSizeMetres >= 10 && r.pixelSizeMetres <= 1000)) throw new InputError(`pixelSizeMetres must be 10-1000, got ${r.pixelSizeMetres}`, where);
  if (!(r.ruralMarginMetres >= 0 && r.ruralMarginMetres <= 50000)) throw new InputError(`ruralMarginMetres must be 0-50000, got ${r.ruralMarginMetres}`, where);
  for (const [id, k] of Object.entries(r.trendsKelvinPerYear)) {
    if (!DISTRICTS.some((d) => d.id === id)) throw new InputError(`trendsKelvinPerYear names no district "${id}" (the city has ${DISTRICTS.map((d) => d.id).join(', ')})`, where);
    if (!(Number.isFinite(k) && Math.abs(k) <= 2)) throw new InputError(`trendsKelvinPerYear for ${id} must be within ±2 K per year, got ${k}`, where);
  }
  return r;
}

/**
 * Generate the demo archive into `outDir` (created if needed): for every
 * summer `pairsPerYear` day scenes (~13:30 local solar time) each followed by a
 * night scene the following night (~01:30 local solar time), one albedo scene
 * per year, the districts GeoJSON and the water outside the districts as GeoJSON
 * (`corvenmouth_water.geojson`, for `--water`). File names:
 * `corvenmouth_<yyyymmdd>T<hhmm>_lst_day.tif`, `..._lst_night.tif`, `..._albedo.tif`
 * (UTC). Metadata: KIND (lst / albedo), PASS (day / night), ACQUISITION_TIME
 * (UTC ISO 8601), CLOUD_COVER (percent), CITY.
 *
 * `onProgress` is told each scene written, with the number of scenes the
 * archive will hold (years × (2 × pairsPerYear + 1)).
 *
 * @returns written files in date order and the districts path
 * @throws InputError for options out of range
 * @example const { files } = await generateArchive('demo-data/.generated', { years: 2, pairsPerYear: 3 });
 */
export async function generateArchive(
  outDir: string, options: ArchiveOptions = {}, onProgress?: (written: number, total: number) => void,
): Promise<ArchiveResult> {
  const o = checkOptions(options);
  const totalScenes = o.years * (2 * o.pairsPerYear + 1);
  let written = 0;
  const wrote = (): void => { written++; onProgress?.(written, totalScenes); };
  await mkdir(outDir, { recursive: true });
  const scenery = buildScenery(o.pixelSizeMetres as Metres, o.ruralMarginMetres, o.seed, DISTRICTS.map((d) => o.trendsKelvinPerYear[d.id] ?? 0));
  const n = scenery.width * scenery.height;
  const rand = mulberry32(o.seed);
  const normal = normalSource(rand);
  const files: string[] = [];
  const ruralDay = DAY_K.farmland;
  const ruralNight = NIGHT_K.farmland;
  const epochMs = Date.UTC(o.firstYear, 0, 1);
  const base = {
    width: scenery.width,
    height: scenery.height,
    transform: scenery.transform,
    epsg: CITY_EPSG,
    nodata: 0,
    layout: { tiled: true as const, tileWidth: 256, tileHeight: 256 },
    compression: 'deflate' as const,
    predictor: 2 as const,
  };
  const pending: Promise<void>[] = [];
  const flush = async (): Promise<void> => {
    await Promise.all(pending.splice(0));
  };

  for (let yi = 0; yi < o.years; yi++) {
    const year = o.firstYear + yi;
    // Summer dates from 1 June (day 152) to about 10 September, spread evenly with jitter.
    const span = 100;
    const days: number[] = [];
    for (let i = 0; i < o.pairsPerYear; i++) {
      const d = 152 + Math.floor(((i + 0.5) * span) / o.pairsPerYear + (rand() - 0.5) * Math.min(6, span / o.pairsPerYear - 1));
      days.push(Math.max(days.length ? days[days.length - 1] + 1 : 0, d));
    }
    for (const doy of days) {
      for (const pass of ['day', 'night'] as const) {
        const when = pass === 'day'
          ? utcAtLocalSolar(year, doy, 13.5, (rand() - 0.5) * 16)
          : utcAtLocalSolar(year, doy + 1, 1.5, (rand() - 0.5) * 16); // the following night
        const years = (when.getTime() - epochMs) / (365.25 * 86400_000);
        // Regional weather: warmest in late July, random spells on top; contrast shrinks on windy/hazy days.
        const season = Math.cos((2 * Math.PI * (doy - 205)) / 365);
        const anomaly = pass === 'day' ? 3 * season + 2.0 * normal() : 2 * season + 1.2 * normal();
        const contrast = 1 + 0.03 * normal();
        const cloudy = rand() < 0.35 ? 0 : 0.02 + 0.38 * rand();
        const mask = cloudMask(scenery, cloudy, (o.seed ^ Math.floor(when.getTime() / 60000)) | 0);
        const baseK = pass === 'day' ? scenery.dayBaseK : scenery.nightBaseK;
        const rural = pass === 'day' ? ruralDay : ruralNight;
        const dn = new Uint16Array(n);
        let clouded = 0;
        for (let k = 0; k < n; k++) {
          if (mask[k]) {
            clouded++;
            continue; // DN 0 = nodata
          }
          const t = rural + anomaly + contrast * (baseK[k] - rural) + scenery.trendKPerYear[k] * years + 0.25 * normal();
          dn[k] = kelvinToDn(t);
        }
        const path = join(outDir, `${CITY_SLUG}_${fileStamp(when)}_lst_${pass}.tif`);
        files.push(path);
        pending.push(writeGeoTiff(path, {
          ...base,
          data: dn,
          scale: ST_SCALE,
          offset: ST_OFFSET_KELVIN,
          metadata: {
            KIND: 'lst',
            PASS: pass,
            ACQUISITION_TIME: isoMinute(when),
            CLOUD_COVER: ((100 * clouded) / n).toFixed(1),
            CITY: CITY_NAME,
          },
          dateTime: tiffDateTime(when),
        }).then(wrote));
        if (pending.length >= 4) await flush();
      }
    }
    // One summer albedo composite per year, stamped mid-July at the day pass.
    const when = utcAtLocalSolar(year, 196, 13.5, 0);
    const alb = new Uint16Array(n);
    for (let k = 0; k < n; k++) {
      const a = scenery.albedo[k] + 0.002 * normal();
      alb[k] = Math.max(1, Math.min(65535, Math.round(a / ALBEDO_SCALE)));
    }
    const path = join(outDir, `${CITY_SLUG}_${fileStamp(when)}_albedo.tif`);
    files.push(path);
    pending.push(writeGeoTiff(path, {
      ...base,
      data: alb,
      scale: ALBEDO_SCALE,
      offset: 0,
      metadata: {
        KIND: 'albedo',
        ACQUISITION_TIME: isoMinute(when),
        PERIOD_START: `${year}-06-01`,
        PERIOD_END: `${year}-09-15`,
        CITY: CITY_NAME,
      },
      dateTime: tiffDateTime(when),
    }).then(wrote));
  }
  await flush();
  const districtsPath = join(outDir, `${CITY_SLUG}_districts.geojson`);
  await writeDistrictsGeoJson(districtsPath);
  const waterPath = join(outDir, `${CITY_SLUG}_water.geojson`);
  await writeWaterGeoJson(waterPath, o.ruralMarginMetres + 1000);
  const stamp = (p: string): string => basename(p).split('_')[1];
  files.sort((p, q) => (stamp(p) < stamp(q) ? -1 : stamp(p) > stamp(q) ? 1 : 0));
  return { files, districtsPath, waterPath };
}

/** Default output folder, relative to the working directory (the repository root under `npm run`). */
export function defaultArchiveDir(): string {
  return resolve('demo-data', '.generated');
}

/** Command-line entry: `node dist/demo-data/generate.js [outDir]`. */
export async function main(argv: string[] = process.argv.slice(2)): Promise<number> {
  const outDir = resolve(argv[0] ?? defaultArchiveDir());
  try {
    const t0 = Date.now();
    const { files, districtsPath, waterPath } = await generateArchive(outDir);
    console.log(`${CITY_NAME}: wrote ${files.length} scenes, ${districtsPath} and ${waterPath} into ${outDir} in ${((Date.now() - t0) / 1000).toFixed(1)} s`);
    return 0;
  } catch (e) {
    console.error(e instanceof Error ? e.message : String(e));
    return isInputError(e) ? 2 : 1;
  }
}

if (process.argv[1] && import.meta.url === pathToFileURL(resolve(process.argv[1])).href) {
  main().then((code) => { process.exitCode = code; });
}
