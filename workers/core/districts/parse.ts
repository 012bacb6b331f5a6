/**
 * GeoJSON district files -> validated {@link District}s.
 *
 * Accepted: a FeatureCollection of Polygon / MultiPolygon features (RFC 7946),
 * a single such Feature, or a bare Polygon / MultiPolygon geometry; the last two
 * are read as a one-district collection (a bare geometry gets id "1").
 *
 * Checks, each an InputError naming the file, the feature and the problem:
 * JSON and GeoJSON structure, geometry type, ids (present, unique), rings
 * (non-empty, >= 4 positions, closed - never silently closed), finite numeric
 * coordinates, coordinates that look projected (|lon| > 180 or |lat| > 90) or
 * swapped (|first| <= 90 < |second| <= 180: lat/lon order), zero-area rings,
 * self-intersections (selfintersect.ts: crossings and touchings between any two
 * rings of the district or within one, reported with the lon/lat of the first), and
 * a legacy "crs" member naming anything but CRS84 / EPSG:4326.
 *
 * Axis order: a legacy "crs" of EPSG:4326 is accepted and read lon/lat, as the
 * 2008 GeoJSON specification fixed (x, y) = (lon, lat) whatever the CRS and as
 * GDAL writes it. A lat/lon swap whose values all stay within +-90 cannot be told
 * from the numbers and is not detected.
 *
 * Repairs made silently: ring orientation (outer counter-clockwise, holes
 * clockwise) and consecutive repeated positions; a third (altitude) coordinate is dropped.
 */
import { readFileSync } from 'node:fs';
import { InputError } from '../errors.js';
import { ellipsoidalAreaSquareMetres, planarSignedArea } from './area.js';
import { orientPolygon } from './orient.js';
import { findSelfIntersections } from './selfintersect.js';
import type { District } from './types.js';

export interface ParseDistrictsOptions {
  /** Property holding the district id (then `feature.id` is tried). Default 'id'. */
  idField?: string;
  /** Property holding the display name. Default 'name'; the id when absent. */
  nameField?: string;
}

type Json = unknown;

/** Short printable form of a JSON value for messages. */
function show(v: Json): string {
  if (v === undefined) return 'nothing';
  let s: string;
  try {
    s = JSON.stringify(v) ?? String(v);
  } catch {
    s = String(v);
  }
  return s.length > 40 ? `${s.slice(0, 37)}...` : s;
}

function kindOf(v: Json): string {
  if (v === null) return 'null';
  if (Array.isArray(v)) return 'an array';
  return typeof v === 'object' ? 'an object' : `a ${typeof v}`;
}

function isObject(v: Json): v is Record<string, Json> {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

const CRS84 = /(^|[:/])CRS84$/i;
const EPSG4326 = /^(EPSG:4326|urn:ogc:def:crs:EPSG:[0-9.]*:4326|https?:\/\/www\.opengis\.net\/def\/crs\/EPSG\/[0-9.]+\/4326)$/i;

function checkLegacyCrs(root: Record<string, Json>, source: string): void {
  if (!('crs' in root) || root.crs === null) return;
  const crs = root.crs;
  const name = isObject(crs) && isObject(crs.properties) ? crs.properties.name : undefined;
  if (typeof name === 'string' && (CRS84.test(name.trim()) || EPSG4326.test(name.trim()))) return;
  const what = typeof name === 'string' ? `"${name}"` : show(crs);
  throw new InputError(
    `the legacy "crs" member names ${what}, but GeoJSON must be lon/lat WGS 84 (RFC 7946): reproject the file to EPSG:4326`,
    source,
  );
}

interface RawFeature {
  geometry: Json;
  properties: Json;
  id: Json;
  label: string; // "features[3]" or "the feature" / "the geometry"
}

function features(root: Record<string, Json>, source: string): RawFeature[] {
  switch (root.type) {
    case 'FeatureCollection': {
      if (!Array.isArray(root.features)) {
        throw new InputError(`the FeatureCollection has no "features" array (found ${kindOf(root.features)})`, source);
      }
      if (root.features.length === 0) throw new InputError('the FeatureCollection has no features', source);
      return root.features.map((f, i) => {
        const label = `features[${i}]`;
        if (!isObject(f) || f.type !== 'Feature') {
          const t = isObject(f) ? `type ${show(f.type)}` : kindOf(f);
          throw new InputError(`${label} is not a GeoJSON Feature (found ${t})`, source);
        }
        return { geometry: f.geometry, properties: f.properties, id: f.id, label };
      });
    }
    case 'Feature':
      return [{ geometry: root.geometry, properties: root.properties, id: root.id, label: 'the feature' }];
    case 'Polygon':
    case 'MultiPolygon':
      return [{ geometry: root, properties: {}, id: '1', label: 'the geometry' }];
    default:
      if (typeof root.type === 'string') {
        throw new InputError(
          `GeoJSON type "${root.type.slice(0, 40)}" found; a FeatureCollection of Polygon or MultiPolygon features is needed`,
          source,
        );
      }
      throw new InputError('not GeoJSON: the top-level object has no "type" member', source);
  }
}

/**
 * Validate position `i` of a ring; returns [lon, lat]: the parsed array itself
 * when it holds exactly two numbers (no copy per position), else a new pair.
 */
function position(p: Json, ringWhere: string, i: number, source: string): number[] {
  if (!Array.isArray(p) || p.length < 2) {
    throw new InputError(`${ringWhere}, position ${i}: a position must be an array of at least 2 numbers, found ${show(p)}`, source);
  }
  const x = p[0], y = p[1];
  if (typeof x !== 'number' || typeof y !== 'number') {
    throw new InputError(`${ringWhere}, position ${i}: coordinate ${show(p)} is not a pair of numbers`, source);
  }
  if (!Number.isFinite(x) || !Number.isFinite(y)) {
    throw new InputError(`${ringWhere}, position ${i}: coordinate [${x}, ${y}] is not finite`, source);
  }
  if (Math.abs(x) > 180 || Math.abs(y) > 90) {
    if (Math.abs(x) <= 90 && Math.abs(y) <= 180) {
      throw new InputError(
        `${ringWhere}, position ${i}: coordinate [${x}, ${y}] looks swapped (lat, lon); GeoJSON positions are [lon, lat] (RFC 7946)`,
        source,
      );
    }
    throw new InputError(
      `${ringWhere}, position ${i}: coordinate [${x}, ${y}] looks projected (metres?), GeoJSON must be lon/lat WGS 84 (RFC 7946)`,
      source,
    );
  }
  return p.length === 2 ? (p as number[]) : [x, y];
}

function ring(r: Json, where: string, source: string): number[][] {
  if (!Array.isArray(r)) throw new InputError(`${where} is not an array of positions (found ${kindOf(r)})`, source);
  if (r.length === 0) throw new InputError(`${where} is empty`, source);
  // checked in place: the array is this parse's own (JSON.parse made it), so a position
  // cut to [x, y] replaces its original there, and no copy of the ring is made
  const pts = r as number[][];
  let repeats = 0;
  for (let i = 0; i < r.length; i++) {
    const p = position(r[i], where, i, source);
    pts[i] = p;
    if (i > 0 && p[0] === pts[i - 1][0] && p[1] === pts[i - 1][1]) repeats++;
  }
  if (pts.length < 4) throw new InputError(`${where} has ${pts.length} positions; a closed ring needs at least 4`, source);
  const first = pts[0];
  const last = pts[pts.length - 1];
  if (first[0] !== last[0] || first[1] !== last[1]) {
    throw new InputError(
      `${where} is not closed: first position [${first}] differs from last [${last}]`,
      source,
    );
  }
  // Consecutive repeats carry no shape and make segment tests report false kinks.
  const clean = repeats === 0 ? pts : pts.filter((p, i) => i === 0 || p[0] !== pts[i - 1][0] || p[1] !== pts[i - 1][1]);
  if (clean.length < 4) {
    throw new InputError(`${where} has only ${clean.length - 1} distinct positions; a ring needs at least 3`, source);
  }
  return clean;
}

function polygon(p: Json, where: string, source: string): number[][][] {
  if (!Array.isArray(p)) throw new InputError(`${where} is not an array of rings (found ${kindOf(p)})`, source);
  if (p.length === 0) throw new InputError(`${where} has no rings`, source);
  return orientPolygon(p.map((r, i) => ring(r, `${where} ring ${i}`, source)));
}

function geometry(g: Json, label: string, source: string): number[][][][] {
  if (g === null || g === undefined) throw new InputError(`${label} has no geometry`, source);
  if (!isObject(g)) throw new InputError(`${label}: geometry is ${kindOf(g)}, not a GeoJSON geometry object`, source);
  if (g.type !== 'Polygon' && g.type !== 'MultiPolygon') {
    throw new InputError(
      `${label} has geometry type ${typeof g.type === 'string' ? g.type.slice(0, 40) : show(g.type)}; only Polygon and MultiPolygon are accepted`,
      source,
    );
  }
  const c = g.coordinates;
  if (!Array.isArray(c)) throw new InputError(`${label}: ${g.type} has no "coordinates" array`, source);
  if (g.type === 'Polygon') return [polygon(c, `${label} polygon`, source)];
  if (c.length === 0) throw new InputError(`${label}: MultiPolygon has no polygons`, source);
  return c.map((p, i) => polygon(p, `${label} polygon ${i}`, source));
}

function idOf(f: RawFeature, props: Record<string, Json>, idField: string, source: string): string {
  const raw = props[idField] ?? f.id;
  if (raw === undefined || raw === null) {
    throw new InputError(`${f.label} has no id (no "${idField}" property and no feature id)`, source);
  }
  if (typeof raw === 'number' && Number.isFinite(raw)) return String(raw);
  if (typeof raw === 'string' && raw.trim() !== '') return raw;
  throw new InputError(`${f.label} has id ${show(raw)}, which is not a non-empty string or a number`, source);
}

/**
 * Parse and validate a GeoJSON district file.
 *
 * @param text file contents (UTF-8 JSON)
 * @param source file name used in error messages
 * @param options idField (default 'id': property, then feature.id), nameField (default 'name')
 * @returns districts in file order, geometry as MultiPolygon lon/lat coordinates with
 *   RFC 7946 winding, area on the WGS 84 ellipsoid in square metres (computed when first read)
 * @throws InputError for every problem listed in the module comment
 * @example parseDistricts('{"type":"Polygon","coordinates":[[[0,0],[0.01,0],[0.01,0.01],[0,0]]]}', 'a.geojson')[0].id // '1'
 */
export function parseDistricts(text: string, source: string, options: ParseDistrictsOptions = {}): District[] {
  const idField = options.idField ?? 'id';
  const nameField = options.nameField ?? 'name';
  let root: Json;
  try {
    root = JSON.parse(text.charCodeAt(0) === 0xfeff ? text.slice(1) : text);
  } catch (e) {
    throw new InputError(`not JSON (${(e as Error).message})`, source);
  }
  if (!isObject(root)) throw new InputError(`not GeoJSON: the file holds ${kindOf(root)}, not an object`, source);
  checkLegacyCrs(root, source);

  const seen = new Map<string, string>();
  return features(root, source).map((f) => {
    if (f.properties !== null && f.properties !== undefined && !isObject(f.properties)) {
      throw new InputError(`${f.label}: "properties" is ${kindOf(f.properties)}, not an object`, source);
    }
    const props: Record<string, Json> = isObject(f.properties) ? f.properties : {};
    const id = idOf(f, props, idField, source);
    const label = `${f.label} (id "${id.slice(0, 40)}")`;
    const earlier = seen.get(id);
    if (earlier !== undefined) throw new InputError(`${label} repeats the id of ${earlier}`, source);
    seen.set(id, f.label);

    const coords = geometry(f.geometry, label, source);
    // Every ring against every ring of the district, polygons included (see selfintersect.ts).
    const crossings = findSelfIntersections(coords.flat());
    if (crossings !== null) {
      const [lon, lat] = crossings.first;
      throw new InputError(
        `${label} intersects itself at lon ${lon.toFixed(6)}, lat ${lat.toFixed(6)}${crossings.count > 1 ? ` (and ${crossings.count - 1} more)` : ''}`,
        source,
      );
    }
    // After the kinks test: a bow-tie also has zero signed area, but "intersects itself" says more.
    coords.forEach((p, i) =>
      p.forEach((r, j) => {
        if (planarSignedArea(r) === 0) {
          const where = f.geometry && isObject(f.geometry) && f.geometry.type === 'Polygon' ? 'polygon' : `polygon ${i}`;
          throw new InputError(`${label} ${where} ring ${j} has zero area (all its positions lie on one line)`, source);
        }
      }),
    );
    const rawName = props[nameField];
    const name = typeof rawName === 'string' && rawName !== '' ? rawName : typeof rawName === 'number' ? String(rawName) : id;
    // The ellipsoidal area is computed on first read (then kept): zonal
    // statistics never read it, and it is ~10 transcendental calls per vertex.
    let area: number | undefined;
    return {
      id,
      name,
      geometry: coords,
      properties: { ...props },
      get areaSquareMetres(): number {
        return (area ??= ellipsoidalAreaSquareMetres(coords));
      },
      set areaSquareMetres(value: number) {
        area = value;
      },
      role: 'district' as const,
    };
  });
}

/**
 * Read and validate a GeoJSON district file (see {@link parseDistricts}).
 * @param path file path; named in every error
 */
export async function readDistricts(path: string, options: ParseDistrictsOptions = {}): Promise<District[]> {
  let text: string;
  try {
    // one synchronous read: a district file is read once, before any work it could hold up
    // (against fs/promises' chunked read, 0.97x a bench `zonal` run's wall and CPU time)
    text = readFileSync(path, 'utf8');
  } catch (e) {
    const code = (e as NodeJS.ErrnoException).code;
    throw new InputError(`cannot read the district file (${code ?? (e as Error).message})`, path);
  }
  return parseDistricts(text, path, options);
}
