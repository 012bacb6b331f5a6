/**
 * Polygon files that are not district lists: a rural reference, water to cut
 * out of the rural ring, ... Their polygons, ids optional, are merged into one
 * MultiPolygon district.
 */
import { readFile } from 'node:fs/promises';
import { InputError } from '../errors.js';
import { parseDistricts } from './parse.js';
import type { District } from './types.js';

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
