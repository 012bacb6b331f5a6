/**
 * Inputs of the pipeline bench in test/bench/.work/pipeline/: an invented
 * archive of 200 LST scenes (100 day + 100 night passes, one pair about every
 * 7.3 days over two years) and 20 districts, written once and reused while
 * the generator version matches.
 *
 * Scenes: 1000 x 1000 pixels of 30 m on WGS 84 / UTM 25N over open ocean
 * (the same invented spot as the zonal bench scene), UInt16 DNs with the
 * Landsat Collection 2 ST scale/offset, DN 0 = nodata, tiled 256 x 256,
 * DEFLATE with predictor 2, ACQUISITION_TIME (UTC) and KIND=lst metadata.
 * Values: a smooth field (value-noise octaves plus a heat island that is
 * stronger by day), a seasonal cycle, per-pixel noise, and on about four
 * scenes in ten some round cloud gaps written as nodata.
 *
 * Districts: a 5 x 4 grid of 2.4 km squares centred on the scene, as lon/lat
 * GeoJSON (RFC 7946 winding), ten vertices per side so that reprojecting
 * them back to UTM follows the square closely.
 */
import { mkdir, readFile, stat, writeFile } from 'node:fs/promises';
import { basename, join } from 'node:path';
import proj4 from 'proj4';
import { writeGeoTiff } from '../../workers/core/raster/write.js';
import type { Affine } from '../../workers/core/raster/affine.js';
import type { Kelvin, Metres } from '../../workers/core/units.js';
import { mulberry32, normalTable } from './random.js';
import { BENCH_EPSG, BENCH_UTM_PROJ4, CENTRE_EASTING, CENTRE_NORTHING, ST_NODATA, ST_OFFSET, ST_SCALE } from './scene.js';

/** Bump when anything that changes the generated files changes. */
export const PIPELINE_DATA_VERSION = 1;

export const PIPELINE_SCENE_SIZE = 1000;
export const PIPELINE_PIXEL_METRES: Metres = 30;
export const PIPELINE_TILE = 256;
export const PIPELINE_PAIRS = 100;
export const DISTRICT_COLS = 5;
export const DISTRICT_ROWS = 4;
export const DISTRICT_CELL_METRES: Metres = 2400;
const VERTICES_PER_SIDE = 10;

/** Upper-left corner convention, north up, centred on the bench scene centre. */
export const PIPELINE_TRANSFORM: Affine = {
  a: PIPELINE_PIXEL_METRES, b: 0, c: CENTRE_EASTING - (PIPELINE_SCENE_SIZE / 2) * PIPELINE_PIXEL_METRES,
  d: 0, e: -PIPELINE_PIXEL_METRES, f: CENTRE_NORTHING + (PIPELINE_SCENE_SIZE / 2) * PIPELINE_PIXEL_METRES,
};

export interface PipelineBenchData {
  /** Folder holding only the scene files. */
  archiveDir: string;
  districts: string;
  scenes: number;
  /** Sum of the scene file sizes, bytes. */
  archiveBytes: number;
  generated: boolean;
  generateSeconds: number;
}

interface Manifest {
  version: number;
  files: string[];
  archiveBytes: number;
}

/**
 * Acquisition times of the archive, UTC ISO 8601. The scene centre is at
 * 33 W, so local solar time is about UTC - 2.2 h: day passes at 12:42Z are
 * about 10:30 solar time, night passes at 00:42Z about 22:30 solar time of
 * the evening before, 12 h before the day pass of the same UTC date.
 */
export function acquisitionTimes(pairs = PIPELINE_PAIRS): { day: string; night: string }[] {
  const first = Date.UTC(2023, 2, 1); // 2023-03-01
  const spacingMs = 7.3 * 86_400_000;
  const out: { day: string; night: string }[] = [];
  for (let i = 0; i < pairs; i++) {
    const midnight = Math.floor((first + i * spacingMs) / 86_400_000) * 86_400_000;
    const iso = (ms: number) => new Date(ms).toISOString().replace('.000Z', 'Z');
    out.push({ day: iso(midnight + (12 * 60 + 42) * 60_000), night: iso(midnight + 42 * 60_000) });
  }
  return out;
}

/** District (col, row) of a UTM point, or null outside the grid. Row 0 is the southern row. */
function districtCell(easting: number, northing: number): [number, number] | null {
  const west = CENTRE_EASTING - (DISTRICT_COLS * DISTRICT_CELL_METRES) / 2;
  const south = CENTRE_NORTHING - (DISTRICT_ROWS * DISTRICT_CELL_METRES) / 2;
  const col = Math.floor((easting - west) / DISTRICT_CELL_METRES);
  const row = Math.floor((northing - south) / DISTRICT_CELL_METRES);
  return col >= 0 && row >= 0 && col < DISTRICT_COLS && row < DISTRICT_ROWS ? [col, row] : null;
}

/**
 * A closed lon/lat ring through the four UTM `corners` in the order given,
 * `VERTICES_PER_SIDE` vertices per side, degrees rounded to 1e-7.
 */
function lonLatRing(corners: [number, number][]): number[][] {
  const toLonLat = proj4(BENCH_UTM_PROJ4, 'EPSG:4326');
  const ring: number[][] = [];
  for (let k = 0; k < 4; k++) {
    const [ax, ay] = corners[k];
    const [bx, by] = corners[(k + 1) % 4];
    for (let s = 0; s < VERTICES_PER_SIDE; s++) {
      const t = s / VERTICES_PER_SIDE;
      const [lon, lat] = toLonLat.forward([ax + (bx - ax) * t, ay + (by - ay) * t]);
      ring.push([Math.round(lon * 1e7) / 1e7, Math.round(lat * 1e7) / 1e7]);
    }
  }
  ring.push(ring[0]);
  return ring;
}

/** The districts as a lon/lat GeoJSON FeatureCollection. */
export function districtCollection(): object {
  const west = CENTRE_EASTING - (DISTRICT_COLS * DISTRICT_CELL_METRES) / 2;
  const south = CENTRE_NORTHING - (DISTRICT_ROWS * DISTRICT_CELL_METRES) / 2;
  const features = [];
  for (let row = 0; row < DISTRICT_ROWS; row++) {
    for (let col = 0; col < DISTRICT_COLS; col++) {
      const x0 = west + col * DISTRICT_CELL_METRES, y0 = south + row * DISTRICT_CELL_METRES;
      const x1 = x0 + DISTRICT_CELL_METRES, y1 = y0 + DISTRICT_CELL_METRES;
      // counter-clockwise exterior (RFC 7946 section 3.1.6): SW -> SE -> NE -> NW -> SW
      const ring = lonLatRing([[x0, y0], [x1, y0], [x1, y1], [x0, y1]]);
      const n = row * DISTRICT_COLS + col + 1;
      // broadband albedo 0.12-0.20 (the district-property fallback of derive), so ATI rows are complete
      const albedo = Math.round((0.12 + 0.08 * (((n * 7) % 20) / 19)) * 1000) / 1000;
      features.push({
        type: 'Feature',
        properties: { id: `W${String(n).padStart(2, '0')}`, name: `Grid ward ${String.fromCharCode(65 + row)}${col + 1}`, albedo },
        geometry: { type: 'Polygon', coordinates: [ring] },
      });
    }
  }
  return { type: 'FeatureCollection', features };
}

/**
 * A rural reference for the archive bench: the square ring from `innerMetres`
 * to `outerMetres` outside the district grid (UTM), as one lon/lat Polygon
 * with a hole (RFC 7946 winding: exterior counter-clockwise, hole clockwise),
 * `VERTICES_PER_SIDE` vertices per side.
 */
export function ruralRingCollection(innerMetres = 2000, outerMetres = 6000): object {
  const halfW = (DISTRICT_COLS * DISTRICT_CELL_METRES) / 2, halfH = (DISTRICT_ROWS * DISTRICT_CELL_METRES) / 2;
  const square = (margin: number, clockwise: boolean): number[][] => {
    const x0 = CENTRE_EASTING - halfW - margin, x1 = CENTRE_EASTING + halfW + margin;
    const y0 = CENTRE_NORTHING - halfH - margin, y1 = CENTRE_NORTHING + halfH + margin;
    const ccw: [number, number][] = [[x0, y0], [x1, y0], [x1, y1], [x0, y1]];
    return lonLatRing(clockwise ? [...ccw].reverse() : ccw);
  };
  return {
    type: 'FeatureCollection',
    features: [{ type: 'Feature', properties: { id: 'rural', name: 'Rural ring' }, geometry: { type: 'Polygon', coordinates: [square(outerMetres, false), square(innerMetres, true)] } }],
  };
}

/** Smooth value noise in [-1, 1]: bilinear between hashed lattice values (spacing in pixels). */
function valueNoise(size: number, spacing: number, seed: number): Float32Array {
  const n = Math.ceil(size / spacing) + 2;
  const rnd = mulberry32(seed);
  const lattice = new Float32Array(n * n);
  for (let i = 0; i < lattice.length; i++) lattice[i] = rnd() * 2 - 1;
  const out = new Float32Array(size * size);
  for (let r = 0; r < size; r++) {
    const gy = r / spacing, iy = Math.floor(gy), fy = gy - iy;
    for (let c = 0; c < size; c++) {
      const gx = c / spacing, ix = Math.floor(gx), fx = gx - ix;
      const a = lattice[iy * n + ix], b = lattice[iy * n + ix + 1];
      const d = lattice[(iy + 1) * n + ix], e = lattice[(iy + 1) * n + ix + 1];
      out[r * size + c] = (a + (b - a) * fx) * (1 - fy) + (d + (e - d) * fx) * fy;
    }
  }
  return out;
}

/** Day and night base fields, Kelvin above the scene's seasonal level. */
function baseFields(size: number): { day: Float32Array; night: Float32Array } {
  const day = new Float32Array(size * size);
  const night = new Float32Array(size * size);
  const octaves: [number, number, number][] = [[200, 3, 11], [50, 1.5, 12], [12, 0.7, 13]];
  for (const [spacing, amplitude, seed] of octaves) {
    const v = valueNoise(size, spacing, seed);
    for (let i = 0; i < v.length; i++) { day[i] += amplitude * v[i]; night[i] += 0.5 * amplitude * v[i]; }
  }
  // Heat island: each district its own excess (denser wards hotter), smoothed at the edges by the noise above.
  const rnd = mulberry32(21);
  const excessDay: number[] = [], excessNight: number[] = [];
  for (let k = 0; k < DISTRICT_COLS * DISTRICT_ROWS; k++) { excessDay.push(2 + 6 * rnd()); excessNight.push(1 + 2.5 * rnd()); }
  const t = PIPELINE_TRANSFORM;
  for (let r = 0; r < size; r++) {
    const northing = t.f + (r + 0.5) * t.e;
    for (let c = 0; c < size; c++) {
      const cell = districtCell(t.c + (c + 0.5) * t.a, northing);
      if (!cell) continue;
      const k = cell[1] * DISTRICT_COLS + cell[0];
      day[r * size + c] += excessDay[k];
      night[r * size + c] += excessNight[k];
    }
  }
  return { day, night };
}

/** DN of a temperature: K = DN * scale + offset, so DN = (K - offset) / scale, kept off the nodata DN. */
function dnOf(kelvin: Kelvin | number): number {
  const dn = Math.round((kelvin - ST_OFFSET) / ST_SCALE);
  return dn < 1 ? 1 : dn > 65535 ? 65535 : dn;
}

/** One scene's DNs. */
function sceneDns(base: Float32Array, levelKelvin: number, noise: Float32Array, noiseShift: number, seed: number, size: number): Uint16Array {
  const out = new Uint16Array(size * size);
  const sigmaKelvin = 0.25;
  const nn = noise.length;
  for (let i = 0; i < out.length; i++) {
    out[i] = dnOf(levelKelvin + base[i] + sigmaKelvin * noise[(i + noiseShift) % nn]);
  }
  // Cloud gaps on about 4 scenes in 10: 1 to 6 round gaps, radius 40-220 px.
  const rnd = mulberry32(seed);
  if (rnd() < 0.4) {
    const gaps = 1 + Math.floor(rnd() * 6);
    for (let g = 0; g < gaps; g++) {
      const cx = rnd() * size, cy = rnd() * size, radius = 40 + rnd() * 180;
      const r0 = Math.max(0, Math.floor(cy - radius)), r1 = Math.min(size - 1, Math.ceil(cy + radius));
      for (let r = r0; r <= r1; r++) {
        const half = Math.sqrt(Math.max(0, radius * radius - (r + 0.5 - cy) ** 2));
        const c0 = Math.max(0, Math.ceil(cx - half - 0.5)), c1 = Math.min(size - 1, Math.floor(cx + half - 0.5));
        if (c1 >= c0) out.fill(ST_NODATA, r * size + c0, r * size + c1 + 1);
      }
    }
  }
  return out;
}

/** What every scene is made from (computed once per archive). */
export interface SceneFields {
  day: Float32Array;
  night: Float32Array;
  noise: Float32Array;
  times: { day: string; night: string }[];
}

/** The base fields, noise table and acquisition times of the archive. */
export function sceneFields(): SceneFields {
  const size = PIPELINE_SCENE_SIZE;
  return { ...baseFields(size), noise: normalTable(size * size + 7919, 5), times: acquisitionTimes() };
}

/**
 * Write scene number `k` of the archive (even k: day pass of pair k/2, odd k:
 * its night pass) into `dir`; returns the file path.
 */
export async function writePipelineScene(dir: string, k: number, fields: SceneFields): Promise<string> {
  const size = PIPELINE_SCENE_SIZE;
  const pair = fields.times[k >> 1];
  const pass = k % 2 === 0 ? 'day' : 'night';
  const season = Math.sin((2 * Math.PI * (Date.parse(pair.day) - Date.UTC(2023, 3, 20))) / (365.25 * 86_400_000));
  const acquiredAt = pair[pass];
  const level = pass === 'day' ? 296 + 10 * season : 283 + 6 * season;
  const dns = sceneDns(pass === 'day' ? fields.day : fields.night, level, fields.noise, (k * 104_729) % (size * size), 1000 + k, size);
  const path = join(dir, `lst_${acquiredAt.replace(/[-:]/g, '')}_${pass}.tif`);
  await writeGeoTiff(path, {
    width: size, height: size, data: dns, transform: PIPELINE_TRANSFORM, epsg: BENCH_EPSG,
    nodata: ST_NODATA, scale: ST_SCALE, offset: ST_OFFSET,
    metadata: { ACQUISITION_TIME: acquiredAt, KIND: 'lst' },
    layout: { tiled: true, tileWidth: PIPELINE_TILE, tileHeight: PIPELINE_TILE },
    compression: 'deflate', predictor: 2,
  });
  return path;
}

async function exists(path: string): Promise<boolean> {
  try { await stat(path); return true; } catch { return false; }
}

/**
 * Make sure the pipeline bench inputs exist under `workDir` (created when
 * missing); write them when missing or written by another generator version.
 * @param workDir e.g. test/bench/.work/pipeline
 * @param log progress lines
 */
export async function ensurePipelineData(workDir: string, log: (line: string) => void): Promise<PipelineBenchData> {
  const archiveDir = join(workDir, 'archive');
  const districts = join(workDir, 'districts.geojson');
  const manifestPath = join(workDir, 'manifest.json');
  // the districts file is cheap and deterministic: written when its content differs
  const districtsText = JSON.stringify(districtCollection()) + '\n';
  const current = (await exists(districts)) ? await readFile(districts, 'utf8') : null;
  if (current !== districtsText) {
    await mkdir(workDir, { recursive: true });
    await writeFile(districts, districtsText);
  }
  if (await exists(manifestPath)) {
    try {
      const m = JSON.parse(await readFile(manifestPath, 'utf8')) as Manifest;
      if (m.version === PIPELINE_DATA_VERSION) {
        const present = await Promise.all(m.files.map((f) => exists(join(archiveDir, f))));
        if (present.every(Boolean)) {
          return { archiveDir, districts, scenes: m.files.length, archiveBytes: m.archiveBytes, generated: false, generateSeconds: 0 };
        }
      }
    } catch {
      // unreadable manifest: write everything again
    }
  }
  const t0 = performance.now();
  log(`pipeline bench: writing ${2 * PIPELINE_PAIRS} scenes of ${PIPELINE_SCENE_SIZE} x ${PIPELINE_SCENE_SIZE} and ${DISTRICT_COLS * DISTRICT_ROWS} districts to ${workDir} (once) ...`);
  await mkdir(archiveDir, { recursive: true });
  const fields = sceneFields();
  const files: string[] = [];
  let archiveBytes = 0;
  for (let k = 0; k < 2 * PIPELINE_PAIRS; k++) {
    const path = await writePipelineScene(archiveDir, k, fields);
    archiveBytes += (await stat(path)).size;
    files.push(basename(path));
  }
  await writeFile(manifestPath, JSON.stringify({ version: PIPELINE_DATA_VERSION, files, archiveBytes } satisfies Manifest) + '\n');
  return { archiveDir, districts, scenes: files.length, archiveBytes, generated: true, generateSeconds: (performance.now() - t0) / 1000 };
}
