/**
 * The bench scene: an invented 7000 x 7000 Landsat-like surface-temperature
 * raster (UInt16 DNs, Collection 2 ST scale/offset, 30 m pixels, WGS 84 /
 * UTM 25N over open ocean at about 35.2 N, 33 W) and its 1200 x 1200 centre
 * clip. Values are a smooth multi-scale field (regional gradient, value-noise
 * octaves, a heat island over the city) plus per-pixel sensor noise, so that
 * DEFLATE with predictor 2 compresses them about 2x as it does real scenes;
 * a rotated swath footprint leaves DN 0 (nodata) in the corners, a few
 * internal gaps are nodata too and a sprinkle of dropout DNs decodes below
 * the 170 K plausibility floor.
 */
import type { Affine } from '../../workers/core/raster/affine.js';
import type { Epsg, Kelvin, Metres } from '../../workers/core/units.js';
import { mulberry32, normalTable } from './random.js';

/** WGS 84 / UTM zone 25N. */
export const BENCH_EPSG: Epsg = 32625;
export const BENCH_UTM_PROJ4 = '+proj=utm +zone=25 +datum=WGS84 +units=m +no_defs';

/** Landsat Collection 2 Level-2 ST_B10: K = DN * 0.00341802 + 149, DN 0 = fill (USGS LSDS-1328, Collection 2 Level 2 Data Format Control Book). */
export const ST_SCALE = 0.00341802;
export const ST_OFFSET = 149;
export const ST_NODATA = 0;

export const PIXEL_METRES: Metres = 30;
export const FULL_SIZE = 7000;
export const CLIP_SIZE = 1200;
export const TILE_SIZE = 512;

/** Scene centre, UTM 25N metres: a pixel corner of the grid (3500 pixels from the origin). */
export const CENTRE_EASTING: Metres = 500000;
export const CENTRE_NORTHING: Metres = 3900000;

/** Geotransform of the full scene (north up, corner convention). */
export const FULL_TRANSFORM: Affine = {
  a: PIXEL_METRES, b: 0, c: CENTRE_EASTING - (FULL_SIZE / 2) * PIXEL_METRES,
  d: 0, e: -PIXEL_METRES, f: CENTRE_NORTHING + (FULL_SIZE / 2) * PIXEL_METRES,
};

/** First column/row of the centre clip in the full scene. */
export const CLIP_OFFSET = (FULL_SIZE - CLIP_SIZE) / 2;

/** Geotransform of the clip: the full grid, origin moved by CLIP_OFFSET pixels. */
export const CLIP_TRANSFORM: Affine = {
  ...FULL_TRANSFORM,
  c: FULL_TRANSFORM.c + CLIP_OFFSET * PIXEL_METRES,
  f: FULL_TRANSFORM.f - CLIP_OFFSET * PIXEL_METRES,
};

/** Swath footprint: a rectangle of this many pixels, turned by this angle about the scene centre. */
const FOOTPRINT = { widthPx: 5700, heightPx: 6000, angleDeg: 12 } as const;

/** Value-noise octaves: grid spacing in pixels and amplitude in K. */
const OCTAVES: ReadonlyArray<{ spacingPx: number; amplitudeK: number }> = [
  { spacingPx: 270, amplitudeK: 4 },
  { spacingPx: 60, amplitudeK: 2.5 },
  { spacingPx: 12, amplitudeK: 1.2 },
  { spacingPx: 3, amplitudeK: 0.6 },
];

const BASE_K: Kelvin = 300;
const GRADIENT_K = 3; // west-to-east across the scene
const HEAT_ISLAND_K = 5; // at the city centre
const HEAT_ISLAND_SIGMA_PX = 250;
/** Sensor noise, K (one sigma): about 35 DN, which sets the compression ratio. */
const NOISE_K = 0.12;
/** Fraction of pixels that are dropouts (DN below the 170 K floor). */
const DROPOUT_PER_65536 = 33;

function smoothstep(t: number): number {
  return t * t * (3 - 2 * t);
}

interface Octave {
  amplitudeK: number;
  gridWidth: number;
  grid: Float32Array;
  colIndex: Int32Array;
  colWeight: Float32Array;
  rowVector: Float32Array;
  spacingPx: number;
}

function makeOctave(spacingPx: number, amplitudeK: number, size: number, seed: number): Octave {
  const gridWidth = Math.ceil(size / spacingPx) + 2;
  const rnd = mulberry32(seed);
  const grid = new Float32Array(gridWidth * gridWidth);
  for (let i = 0; i < grid.length; i++) grid[i] = rnd() * 2 - 1;
  const colIndex = new Int32Array(size);
  const colWeight = new Float32Array(size);
  for (let c = 0; c < size; c++) {
    const g = (c + 0.5) / spacingPx;
    colIndex[c] = Math.floor(g);
    colWeight[c] = smoothstep(g - Math.floor(g));
  }
  return { amplitudeK, gridWidth, grid, colIndex, colWeight, rowVector: new Float32Array(gridWidth), spacingPx };
}

/** Interpolate the octave's grid along y for one row (the x interpolation then costs one lerp per pixel). */
function prepareRow(o: Octave, row: number): void {
  const g = (row + 0.5) / o.spacingPx;
  const iy = Math.floor(g);
  const w = smoothstep(g - iy);
  const a = iy * o.gridWidth, b = (iy + 1) * o.gridWidth;
  for (let j = 0; j < o.gridWidth; j++) o.rowVector[j] = (o.grid[a + j] * (1 - w) + o.grid[b + j] * w) * o.amplitudeK;
}

/** Internal nodata gaps (pixel centre and radius), some over the city. */
const GAPS: ReadonlyArray<[number, number, number]> = [
  [3300, 3250, 40], [3620, 3480, 25], [3720, 3150, 18], [3150, 3760, 30],
  [1800, 2500, 90], [5200, 4700, 60], [2600, 5400, 45], [4400, 1900, 70],
];

/**
 * The full scene's DNs, row-major (pixel (r, c) at r * FULL_SIZE + c).
 * Deterministic. About 98 MB; takes a few seconds.
 */
export function generateSceneDns(): Uint16Array {
  const n = FULL_SIZE;
  const out = new Uint16Array(n * n);
  const octaves = OCTAVES.map((o, i) => makeOctave(o.spacingPx, o.amplitudeK, n, 1000 + i));
  const normals = normalTable(1 << 16, 99);
  const centre = n / 2;
  const theta = (FOOTPRINT.angleDeg * Math.PI) / 180;
  const cos = Math.cos(theta), sin = Math.sin(theta);
  const halfW = FOOTPRINT.widthPx / 2, halfH = FOOTPRINT.heightPx / 2;
  const islandX = new Float32Array(n);
  for (let c = 0; c < n; c++) islandX[c] = Math.exp(-((c + 0.5 - centre) ** 2) / (2 * HEAT_ISLAND_SIGMA_PX ** 2));
  const rowK = new Float32Array(n);
  let state = 0x9e3779b9 | 0;
  const toDn = 1 / ST_SCALE;
  for (let r = 0; r < n; r++) {
    const dy = r + 0.5 - centre;
    const islandY = HEAT_ISLAND_K * Math.exp(-(dy * dy) / (2 * HEAT_ISLAND_SIGMA_PX ** 2));
    for (let c = 0; c < n; c++) rowK[c] = BASE_K + (GRADIENT_K * (c - centre)) / n + islandY * islandX[c];
    for (const o of octaves) {
      prepareRow(o, r);
      const rv = o.rowVector, ci = o.colIndex, cw = o.colWeight;
      for (let c = 0; c < n; c++) {
        const j = ci[c];
        rowK[c] += rv[j] + (rv[j + 1] - rv[j]) * cw[c];
      }
    }
    const base = r * n;
    const gaps = GAPS.filter(([, gr, rad]) => Math.abs(gr - r) <= rad);
    for (let c = 0; c < n; c++) {
      const dx = c + 0.5 - centre;
      // Footprint in the swath's own axes.
      const u = dx * cos + dy * sin;
      const v = -dx * sin + dy * cos;
      state ^= state << 13; state ^= state >>> 17; state ^= state << 5; // xorshift32 (Marsaglia 2003)
      if (u < -halfW || u > halfW || v < -halfH || v > halfH) { out[base + c] = ST_NODATA; continue; }
      let gap = false;
      for (const [gc, gr, rad] of gaps) if ((gc - c) ** 2 + (gr - r) ** 2 <= rad * rad) { gap = true; break; }
      if (gap) { out[base + c] = ST_NODATA; continue; }
      const bits = state >>> 0;
      if ((bits & 0xffff) < DROPOUT_PER_65536) { out[base + c] = 1 + ((bits >>> 16) % 5800); continue; }
      const kelvin = rowK[c] + NOISE_K * normals[bits >>> 16];
      const dn = Math.round((kelvin - ST_OFFSET) * toDn);
      out[base + c] = dn < 1 ? 1 : dn > 65535 ? 65535 : dn;
    }
  }
  return out;
}

/** The centre clip's DNs, copied out of the full scene. */
export function clipDns(full: Uint16Array): Uint16Array {
  const out = new Uint16Array(CLIP_SIZE * CLIP_SIZE);
  for (let r = 0; r < CLIP_SIZE; r++) {
    const src = (CLIP_OFFSET + r) * FULL_SIZE + CLIP_OFFSET;
    out.set(full.subarray(src, src + CLIP_SIZE), r * CLIP_SIZE);
  }
  return out;
}
