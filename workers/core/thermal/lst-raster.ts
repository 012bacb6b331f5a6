/**
 * A Level-1 thermal DN scene seen as an LST raster, block by block: each DN
 * block becomes float32 Kelvin (radiance L = ML * DN + AL, then the RTE
 * inversion of rte.ts with the pixel's emissivity), so zonal statistics, masks
 * and the pixel rule run through the same code as for LST scenes, and no
 * intermediate file is written. DN 0 (fill) and the header's nodata become NaN
 * (nodata); the scene's own mask passes through.
 */
import { InputError } from '../errors.js';
import { sameGrid, type Window } from '../raster/affine.js';
import { clampWindow, type RasterBlock, type RasterFile, type RasterHeader, type TypedArray } from '../raster/index.js';
import { ndviThresholdEmissivity, ndvi as ndviOf } from './emissivity.js';
import { NO_ATMOSPHERE, surfaceBlackbodyRadiance, type AtmosphereParameters } from './rte.js';
import type { TirsBandConstants } from './sensors.js';

/** Emissivity must lie in (EMISSIVITY_MIN_EXCLUSIVE, 1]: below ~0.8 no natural or built surface emits in 10-12 um (common practice, no source). */
export const EMISSIVITY_MIN_EXCLUSIVE = 0.8;

/** Whether an emissivity lies in (0.8, 1]. */
export function emissivityInRange(e: number): boolean {
  return e > EMISSIVITY_MIN_EXCLUSIVE && e <= 1;
}

/**
 * Check one emissivity value (a constant, a manifest field, a district property).
 * @throws InputError naming `source` for a value outside (0.8, 1]
 */
export function checkEmissivity(value: unknown, source: string): number {
  if (typeof value !== 'number' || !emissivityInRange(value)) {
    throw new InputError(`emissivity ${String(value)} is outside (${EMISSIVITY_MIN_EXCLUSIVE}, 1]`, source);
  }
  return value;
}

/** Where a pixel's emissivity comes from. */
export type EmissivityField =
  | { kind: 'constant'; value: number }
  | { kind: 'raster'; raster: RasterFile }
  | { kind: 'ndvi'; ndvi: RasterFile }
  | { kind: 'reflectance'; red: RasterFile; nir: RasterFile };

/** Per-pixel atmosphere rasters, opened (see AtmosphereRasterPaths). */
export interface AtmosphereRasters {
  kind: 'rasters';
  transmittance: RasterFile;
  upwelling: RasterFile;
  downwelling: RasterFile;
}

export interface ThermalLstPlan {
  constants: TirsBandConstants;
  /** null: the emissivity correction alone (no atmospheric correction). */
  atmosphere: AtmosphereParameters | AtmosphereRasters | null;
  emissivity: EmissivityField;
}

/** NDVI-threshold options of the thermal path: the published defaults, and water below NDVI 0 (common practice, no source). */
const NDVI_OPTIONS = { waterNdviBelow: 0 } as const;
/** The NDVI-threshold emissivity of NDVI_OPTIONS, its options checked once here rather than per pixel. */
const emissivityNdviRed = ndviThresholdEmissivity(NDVI_OPTIONS);
/** Soil emissivity below the soil NDVI threshold when no red reflectance is at hand: eps_s of Sobrino et al. 2004 (RSE 90:434-440, from memory). */
const SOIL_EMISSIVITY_NDVI_ONLY = 0.97;
const NDVI_SOIL = 0.2;

/**
 * Emissivity from NDVI alone (no red reflectance for the soil line) by the NDVI-threshold
 * method (Sobrino et al. 2004, simplified form, see emissivity.ts): water below NDVI 0,
 * soil emissivity 0.97 below the soil threshold 0.2, the vegetation mixture above it.
 * @example emissivityFromNdviOnly(0.35) // 0.987
 */
export function emissivityFromNdviOnly(ndviValue: number): number {
  if (ndviValue < NDVI_OPTIONS.waterNdviBelow || ndviValue >= NDVI_SOIL) return emissivityNdviRed(ndviValue, 0);
  return SOIL_EMISSIVITY_NDVI_ONLY;
}

/**
 * Refuse an auxiliary raster not on the scene's grid: emissivity inputs are not
 * resampled (a resampled emissivity would silently smear edges, where urban LST changes most).
 * @throws InputError naming the auxiliary file
 */
export function requireSameGrid(scene: RasterHeader, aux: RasterHeader, role: string): void {
  const sameCrs = scene.epsg !== null && aux.epsg !== null ? scene.epsg === aux.epsg : scene.crsDefinition === aux.crsDefinition;
  if (aux.width !== scene.width || aux.height !== scene.height || !sameGrid(aux.transform, scene.transform) || !sameCrs) {
    throw new InputError(
      `${role} raster (${aux.width} x ${aux.height} pixels, EPSG ${aux.epsg ?? 'none'}) is not on the grid of the thermal scene ${scene.path} ` +
        `(${scene.width} x ${scene.height}, EPSG ${scene.epsg ?? 'none'}); emissivity inputs are not resampled, so give one on the scene's grid`,
      aux.path,
    );
  }
}

function physical(h: RasterHeader, v: number): number {
  return h.nodata !== null && (v === h.nodata || (Number.isNaN(h.nodata) && v !== v)) ? NaN : v * h.scale + h.offset;
}

/** Where pixel `i` of `window` lies, for messages. */
function pixelPlace(window: Window, i: number): string {
  return `row ${window.rowOff + Math.floor(i / window.width)}, column ${window.colOff + (i % window.width)}`;
}

/**
 * The physical values of `raster` over `window` (NaN where nodata), each mapped by `map`;
 * a value `ok` refuses is an InputError naming the raster, the pixel and `what ... is not range`.
 */
async function mapWindow(raster: RasterFile, window: Window, n: number, what: string, ok: (x: number) => boolean, range: string,
  map: (x: number) => number = (x) => x): Promise<Float64Array> {
  const h = raster.header;
  const v = await raster.readWindow(window);
  const out = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const x = physical(h, v[i]);
    if (x !== x) { out[i] = NaN; continue; }
    if (!ok(x)) throw new InputError(`${what} ${x} at ${pixelPlace(window, i)} is ${range}`, h.path);
    out[i] = map(x);
  }
  return out;
}

/** Emissivity of every pixel of `window` (NaN where an input is nodata). */
async function emissivityWindow(field: EmissivityField, window: Window, n: number): Promise<Float64Array | number> {
  if (field.kind === 'constant') return field.value;
  if (field.kind === 'raster') {
    return mapWindow(field.raster, window, n, 'emissivity', emissivityInRange, `outside (${EMISSIVITY_MIN_EXCLUSIVE}, 1]`);
  }
  if (field.kind === 'ndvi') {
    return mapWindow(field.ndvi, window, n, 'NDVI', (x) => x >= -1 && x <= 1, 'outside [-1, 1] (unscaled values? set the raster\'s scale)', emissivityFromNdviOnly);
  }
  const out = new Float64Array(n);
  const hr = field.red.header, hn = field.nir.header;
  const [red, nir] = await Promise.all([field.red.readWindow(window), field.nir.readWindow(window)]);
  for (let i = 0; i < n; i++) {
    const r = physical(hr, red[i]), q = physical(hn, nir[i]);
    const x = r === r && q === q ? ndviOf(q, r) : null;
    if (x === null) { out[i] = NaN; continue; }
    if (!(r >= -0.5 && r <= 1.5)) throw new InputError(`red reflectance ${r} at ${pixelPlace(window, i)} is not a reflectance (unscaled values? set the raster's scale)`, hr.path);
    out[i] = emissivityNdviRed(x, r);
  }
  return out;
}

/** Per-pixel transmittance and path radiances of `window` (NaN where an input is nodata), checked. */
async function atmosphereWindow(a: AtmosphereRasters, window: Window, n: number): Promise<[Float64Array, Float64Array, Float64Array]> {
  return Promise.all([
    mapWindow(a.transmittance, window, n, 'atmospheric transmittance', (x) => x > 0 && x <= 1, 'not in (0, 1]'),
    mapWindow(a.upwelling, window, n, 'upwelling radiance', (x) => x >= 0 && Number.isFinite(x), 'not a finite number >= 0'),
    mapWindow(a.downwelling, window, n, 'downwelling radiance', (x) => x >= 0 && Number.isFinite(x), 'not a finite number >= 0'),
  ]);
}

/**
 * LST (K, float32) of the pixels of a DN array: `dn` row-major with `stride`, `width` x `height`.
 * Fill DN 0 and the header's nodata give NaN; a pixel whose corrected radiance is not
 * positive gives 0 K (counted implausible downstream).
 */
function convert(dn: TypedArray, stride: number, width: number, height: number, h: RasterHeader, plan: ThermalLstPlan, eps: Float64Array | number,
  perPixel: [Float64Array, Float64Array, Float64Array] | null): Float32Array {
  const out = new Float32Array(width * height);
  const { ml, al, k1, k2 } = plan.constants;
  const fixed = plan.atmosphere === null ? NO_ATMOSPHERE : 'kind' in plan.atmosphere ? null : plan.atmosphere;
  const atm = { ...(fixed ?? NO_ATMOSPHERE) };
  const nodata = h.nodata;
  for (let r = 0; r < height; r++) {
    for (let c = 0; c < width; c++) {
      const v = dn[r * stride + c];
      const i = r * width + c;
      const e = typeof eps === 'number' ? eps : eps[i];
      if (v === 0 || v !== v || (nodata !== null && v === nodata) || e !== e) { out[i] = NaN; continue; }
      if (perPixel !== null) {
        atm.transmittance = perPixel[0][i]; atm.upwellingRadiance = perPixel[1][i]; atm.downwellingRadiance = perPixel[2][i];
        if (atm.transmittance !== atm.transmittance || atm.upwellingRadiance !== atm.upwellingRadiance || atm.downwellingRadiance !== atm.downwellingRadiance) { out[i] = NaN; continue; }
      }
      const b = surfaceBlackbodyRadiance(ml * v + al, e, atm);
      // Planck inversion with the band's constants (see sensors.ts), inlined: it runs per pixel
      out[i] = b > 0 ? k2 / Math.log(k1 / b + 1) : 0;
    }
  }
  return out;
}

/**
 * The thermal DN scene `dn` as a float32 LST raster (Kelvin, nodata NaN, scale 1, offset 0).
 * Emissivity rasters must share the scene's grid ({@link requireSameGrid}).
 * @throws InputError naming the auxiliary file when it is on another grid; while reading,
 *   InputError naming it for an emissivity outside (0.8, 1] or an NDVI outside [-1, 1]
 */
export function thermalLstRaster(dn: RasterFile, plan: ThermalLstPlan): RasterFile {
  const h = dn.header;
  const f = plan.emissivity;
  if (f.kind === 'constant') checkEmissivity(f.value, `${h.path} (emissivity)`);
  if (f.kind === 'raster') requireSameGrid(h, f.raster.header, 'emissivity');
  if (f.kind === 'ndvi') requireSameGrid(h, f.ndvi.header, 'NDVI');
  if (f.kind === 'reflectance') { requireSameGrid(h, f.red.header, 'red reflectance'); requireSameGrid(h, f.nir.header, 'near-infrared reflectance'); }
  const rasters = plan.atmosphere !== null && 'kind' in plan.atmosphere ? plan.atmosphere : null;
  if (rasters) {
    requireSameGrid(h, rasters.transmittance.header, 'transmittance');
    requireSameGrid(h, rasters.upwelling.header, 'upwelling radiance');
    requireSameGrid(h, rasters.downwelling.header, 'downwelling radiance');
  }
  const atmosphereOf = (w: Window) => (rasters ? atmosphereWindow(rasters, w, w.width * w.height) : Promise.resolve(null));
  const header: RasterHeader = { ...h, sampleFormat: 'float', bitsPerSample: 32, nodata: null, scale: 1, offset: 0 };
  return {
    header,
    async *blocks(window: Window, band = 0): AsyncIterable<RasterBlock> {
      for await (const block of dn.blocks(window, band)) {
        const w = block.window;
        const eps = await emissivityWindow(f, w, w.width * w.height);
        yield { window: w, data: convert(block.data, block.stride, w.width, w.height, h, plan, eps, await atmosphereOf(w)), stride: w.width };
      }
    },
    async readWindow(window: Window, band = 0): Promise<TypedArray> {
      const data = await dn.readWindow(window, band);
      const w = clampWindow(window, h.width, h.height, h.path) ?? { colOff: 0, rowOff: 0, width: 0, height: 0 };
      const eps = await emissivityWindow(f, w, w.width * w.height);
      return convert(data, w.width, w.width, w.height, h, plan, eps, await atmosphereOf(w));
    },
    validMask: (window: Window, band?: number) => dn.validMask(window, band),
    close: () => dn.close(),
  };
}

