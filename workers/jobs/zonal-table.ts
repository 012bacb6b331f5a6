/**
 * Zonal statistics of one raster for a district file (and an optional rural
 * reference): the computation behind `heatledger zonal`.
 */
import { readFile } from 'node:fs/promises';
import { InputError } from '../core/errors.js';
import { openRaster, type RasterFile } from '../core/raster/reader.js';
import type { RasterHeader } from '../core/raster/header.js';
// Modules are imported directly rather than through their index files: fewer
// files to load at start-up (the districts index would also bring in the
// rural-ring and adjacency code and their geometry libraries, unused here).
import { parseDistricts, readDistricts } from '../core/districts/parse.js';
import type { District } from '../core/districts/types.js';
import { crsDefinitionForEpsg } from '../core/crs/epsg.js';
import { reprojectGeometry } from '../core/crs/transform.js';
import { windowOfBounds, type BBox } from '../core/raster/affine.js';
import { zonalScene } from '../core/zonal/scene.js';
import type { ZonalStats, ZonalCounts } from '../core/zonal/types.js';

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
export interface ZonalTableResult {
  rows: ZonalRow[];
  counts: Array<{ district: string } & ZonalCounts>;
  /** Problems found while reading the raster that did not stop its use, each naming the file. */
  warnings: string[];
}

/** Field order of a zonal row; CSV and JSON follow it. */
export const ZONAL_FIELDS = ['district', 'pixels', 'valid', 'valid_fraction', 'mean', 'std', 'min', 'max', 'median', 'p10', 'p90'] as const;

/** The WGS 84 lon/lat definition GeoJSON coordinates are in (RFC 7946). */
export const GEOJSON_CRS = crsDefinitionForEpsg(4326);

/**
 * Read a GeoJSON file of any polygons, ids optional, merged into one
 * MultiPolygon district (a rural reference, water to cut out, ...).
 * @param what what the file is, for messages (e.g. "rural reference")
 */
export async function readMergedPolygons(path: string, id: string, what: string): Promise<District> {
  let text: string;
  try {
    text = await readFile(path, 'utf8');
  } catch (e) {
    throw new InputError(`cannot read the ${what} file (${(e as NodeJS.ErrnoException).code ?? (e as Error).message})`, path);
  }
  let doc: unknown;
  try {
    doc = JSON.parse(text);
  } catch {
    throw new InputError(`is not JSON, so not a GeoJSON ${what}`, path);
  }
  if (doc && typeof doc === 'object' && (doc as { type?: unknown }).type === 'FeatureCollection' && Array.isArray((doc as { features?: unknown }).features)) {
    (doc as { features: unknown[] }).features.forEach((f, i) => {
      if (f && typeof f === 'object') {
        const feat = f as { properties?: Record<string, unknown> | null };
        feat.properties = { ...(feat.properties ?? {}), id: `${id}-${i + 1}` };
      }
    });
  }
  const parts = parseDistricts(JSON.stringify(doc), path, { idField: 'id' });
  if (parts.length === 0) throw new InputError(`holds no ${what} polygon`, path);
  return {
    id,
    name: what,
    geometry: parts.flatMap((p) => p.geometry),
    properties: {},
    areaSquareMetres: parts.reduce((s, p) => s + p.areaSquareMetres, 0),
  };
}

/** A rural reference file: its polygons as one district with id "rural". */
export async function readRuralReference(path: string): Promise<District> {
  const d = await readMergedPolygons(path, 'rural', 'rural reference');
  return { ...d, properties: { role: 'rural' } };
}

/** Bounding box of MultiPolygon coordinates. */
export function geometryBBox(geometry: number[][][][]): BBox {
  let x0 = Infinity, y0 = Infinity, x1 = -Infinity, y1 = -Infinity;
  for (const poly of geometry) for (const ring of poly) for (const [x, y] of ring) {
    if (x < x0) x0 = x;
    if (x > x1) x1 = x;
    if (y < y0) y0 = y;
    if (y > y1) y1 = y;
  }
  return [x0, y0, x1, y1];
}

/**
 * The raster's CRS definition, or an InputError naming the file. The header
 * has one whenever it has an EPSG code (an unknown code fails when it is read),
 * so no CRS here means no GeoKeys at all.
 */
export function rasterCrs(header: RasterHeader): string {
  if (header.crsDefinition) return header.crsDefinition;
  throw new InputError('has no coordinate reference system (no GeoKeys); assign one, e.g. with an EPSG code', header.path);
}

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
    const crs = rasterCrs(raster.header);
    const all = rural ? [...districts, rural] : districts;
    const targets = all.map((d) => ({ id: d.id, geometry: reprojectGeometry(d.geometry, GEOJSON_CRS, crs) }));
    const { width, height, transform } = raster.header;
    if (targets.every((t) => windowOfBounds(transform, geometryBBox(t.geometry), width, height) === null)) {
      throw new InputError(`does not overlap any district of ${options.districtsPath}`, options.rasterPath);
    }
    if (options.qaPath) qa = await openRaster(options.qaPath);
    const results = await zonalScene(raster, targets, {
      coverage: options.coverage ?? 'centre',
      plausibleKelvin: options.plausibleKelvin === undefined ? [170, 360] : options.plausibleKelvin,
      qa: qa ? { raster: qa, maskBits: options.qaMask, maskValues: options.qaValues } : undefined,
    });
    return {
      rows: results.map((r) => ({ district: r.id, ...r.stats })),
      counts: results.map((r) => ({ district: r.id, ...r.counts })),
      warnings: [...raster.header.warnings, ...(qa?.header.warnings ?? [])],
    };
  } finally {
    await raster.close();
    if (qa) await qa.close();
  }
}
