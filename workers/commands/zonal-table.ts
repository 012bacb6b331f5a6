/**
 * Zonal statistics of one raster for a district file (and an optional rural
 * reference): the computation behind `heatledger zonal`.
 */
import { InputError } from '../core/errors.js';
import { openRaster, type RasterFile } from '../core/raster/reader.js';
import { rasterCrs } from '../core/raster/placement.js';
// Modules are imported directly rather than through their index files: fewer
// files to load at start-up (the districts index would also bring in the
// rural-ring and adjacency code and their geometry libraries, unused here).
import { readDistricts } from '../core/districts/parse.js';
import { readRuralReference } from '../core/districts/merged.js';
import { GEOJSON_CRS } from '../core/crs/geojson.js';
import { reprojectFlat } from '../core/crs/transform.js';
import { windowOfBounds } from '../core/raster/affine.js';
import { zonalScene } from '../core/zonal/scene.js';
import type { ZonalStats, ZonalCounts } from '../core/zonal/types.js';
import type { RasterHeader } from '../core/raster/header.js';
import { sceneKind } from '../run/archive.js';

export interface ZonalTableOptions {
  rasterPath: string;
  districtsPath: string;
  ruralPath?: string;
  idField?: string;
  nameField?: string;
  qaPath?: string;
  qaMask?: number;
  qaValues?: number[];
  coverage?: 'centre' | 'fraction';
  /** Plausible LST range [min, max] in Kelvin; values outside are invalid. Null disables. */
  plausibleKelvin?: [number, number] | null;
}

export type ZonalRow = { district: string } & ZonalStats;

/**
 * What the statistics of a raster are: LST in Kelvin, albedo (a fraction, no
 * unit), or values of no known unit.
 */
export interface ZonalValues {
  /** 'K' for LST, null for albedo and values of no known unit. */
  unit: 'K' | null;
  kind: 'lst' | 'albedo' | 'unknown';
  /** One sentence: why the values have this unit. */
  reason: string;
}

/**
 * The unit of a raster's statistics, from its metadata: an albedo raster (a
 * KIND=albedo metadata item, or "albedo" in the file name) has none; an LST
 * raster is in Kelvin when it has a scale/offset (DN · scale + offset) or
 * floating-point samples (physical values as stored); integer samples without
 * scale/offset are digital numbers of no known unit.
 */
export function zonalValues(header: RasterHeader): ZonalValues {
  const kind = sceneKind(header, undefined, undefined);
  if (kind === 'albedo') return { unit: null, kind: 'albedo', reason: 'an albedo raster: values are fractions (0-1), no unit' };
  if (kind === 'lst' && (header.scale !== 1 || header.offset !== 0)) {
    return { unit: 'K', kind: 'lst', reason: `LST in K after the raster's scale ${header.scale} and offset ${header.offset}` };
  }
  if (kind === 'lst' && header.sampleFormat === 'float') return { unit: 'K', kind: 'lst', reason: 'LST in K as stored: floating-point samples' };
  return { unit: null, kind: 'unknown', reason: 'integer samples without scale/offset: values as stored, no unit known' };
}

export interface ZonalTableResult {
  /** Unit and kind of the statistics (mean, std, min, max, median, p10, p90). */
  values: ZonalValues;
  rows: ZonalRow[];
  counts: Array<{ district: string } & ZonalCounts>;
  /** Problems found while reading the raster that did not stop its use, each naming the file. */
  warnings: string[];
}

/** Field order of a zonal row; CSV and JSON follow it. */
export const ZONAL_FIELDS = ['district', 'pixels', 'valid', 'valid_fraction', 'mean', 'std', 'min', 'max', 'median', 'p10', 'p90'] as const;

/** Compute the table. Throws InputError for bad files or a raster that misses every district. */
export async function zonalTable(options: ZonalTableOptions): Promise<ZonalTableResult> {
  const districts = await readDistricts(options.districtsPath, { idField: options.idField, nameField: options.nameField });
  const rural = options.ruralPath ? await readRuralReference(options.ruralPath) : null;
  if (rural && districts.some((d) => d.id === 'rural')) {
    throw new InputError('a district is called "rural", which is reserved for the rural reference row', options.districtsPath);
  }
  const raster = await openRaster(options.rasterPath);
  let qa: RasterFile | null = null;
  try {
    // a Level-1 thermal DN scene needs its calibration and emissivity to become LST (ingest does that);
    // its digital numbers read as temperatures would all be implausible
    if (sceneKind(raster.header, undefined, undefined) === 'thermal') {
      throw new InputError(
        'is a Level-1 thermal DN scene, which zonal does not convert to LST; `heatledger ingest` converts thermal DN scenes ' +
          '(its --write-lst DIR writes their LST as GeoTIFFs that zonal reads)',
        options.rasterPath,
      );
    }
    const crs = rasterCrs(raster.header);
    const all = rural ? [...districts, rural] : districts;
    const targets = all.map((d) => ({ id: d.id, geometry: reprojectFlat(d.geometry, GEOJSON_CRS, crs) }));
    const { width, height, transform } = raster.header;
    if (targets.every((t) => windowOfBounds(transform, t.geometry.bbox, width, height) === null)) {
      throw new InputError(`does not overlap any district of ${options.districtsPath}`, options.rasterPath);
    }
    if (options.qaPath) qa = await openRaster(options.qaPath);
    const values = zonalValues(raster.header);
    const plausibleKelvin = options.plausibleKelvin === undefined ? [170, 360] as [number, number] : options.plausibleKelvin;
    const results = await zonalScene(raster, targets, {
      coverage: options.coverage ?? 'centre',
      // albedo is a fraction, not a temperature: the LST plausibility window does not apply
      plausibleKelvin: values.kind === 'albedo' ? [0, 1] : plausibleKelvin,
      qa: qa ? { raster: qa, maskBits: options.qaMask, maskValues: options.qaValues } : undefined,
    });
    return {
      values,
      rows: results.map((r) => ({ district: r.id, ...r.stats })),
      counts: results.map((r) => ({ district: r.id, ...r.counts })),
      warnings: [...raster.header.warnings, ...(qa?.header.warnings ?? [])],
    };
  } finally {
    await raster.close();
    if (qa) await qa.close();
  }
}
