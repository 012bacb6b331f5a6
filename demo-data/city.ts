/**
 * Corvenmouth: an invented harbour city for demos and tests. Its geography is
 * made up and it sits at invented coordinates over open ocean (centre about
 * 44.2 N, 35.6 W, UTM zone 25N), so it overlaps no real place.
 *
 * Made-up geography: the Corven River runs north to south through the city into
 * a harbour basin on the southern coast; a dense old core straddles the river
 * just north of the quays; industry sits on the east bank by the coast with two
 * older works elsewhere; a large park with a mere lies west of the river;
 * suburbs ring the centre, a new suburb grows on the northern edge, and
 * farmland surrounds everything.
 *
 * Districts are unions of 300 m blocks on a grid in UTM metres, so they tile the
 * city without gaps or overlaps by construction; their outlines are traced from
 * the blocks and converted to lon/lat with proj4.
 */
import { mkdir, writeFile } from 'node:fs/promises';
import { dirname } from 'node:path';
import proj4 from 'proj4';
import type { Epsg, Metres } from '../workers/core/units.js';

export const CITY_NAME = 'Corvenmouth';
/** Lower-case name used in file names. */
export const CITY_SLUG = 'corvenmouth';
/** WGS 84 / UTM zone 25N, the CRS of every demo raster. */
export const CITY_EPSG: Epsg = 32625;
export const UTM_25N_PROJ4 = '+proj=utm +zone=25 +datum=WGS84 +units=m +no_defs';

/** The block grid in UTM 25N metres; block (col, row) has its lower-left corner at (originX + col*block, originY + row*block). */
export const CITY_GRID = {
  originXMetres: 286200 as Metres,
  originYMetres: 4892100 as Metres,
  blockMetres: 300 as Metres,
  cols: 40,
  rows: 34,
} as const;

export type LandUse = 'dense_core' | 'industrial' | 'harbour' | 'park' | 'suburban' | 'water' | 'farmland';

export interface DistrictSpec {
  id: string;
  name: string;
  landUse: LandUse;
  /** Broadband surface albedo (0-1), typical of the land use. */
  albedo: number;
  /** Warming built into the generated archive, Kelvin per year (demo truth for trend checks). */
  trendKelvinPerYear: number;
}

// Albedo ranges per land use are common practice, no source: dense core 0.12-0.15,
// industrial ~0.15, parks 0.18-0.20, suburbs 0.16-0.18, water 0.06-0.08, crops ~0.20.
export const DISTRICTS: readonly DistrictSpec[] = [
  { id: 'D01', name: 'Old Corven', landUse: 'dense_core', albedo: 0.12, trendKelvinPerYear: 0.08 },
  { id: 'D02', name: 'Chandlery Row', landUse: 'dense_core', albedo: 0.13, trendKelvinPerYear: 0.08 },
  { id: 'D03', name: 'Bellfounders Yard', landUse: 'dense_core', albedo: 0.14, trendKelvinPerYear: 0.08 },
  { id: 'D04', name: 'Ironreach', landUse: 'industrial', albedo: 0.15, trendKelvinPerYear: 0.08 },
  { id: 'D05', name: 'Slagmoor Works', landUse: 'industrial', albedo: 0.15, trendKelvinPerYear: 0.08 },
  { id: 'D06', name: 'Corven Quays', landUse: 'harbour', albedo: 0.14, trendKelvinPerYear: 0 },
  { id: 'D07', name: 'Inner Basin', landUse: 'water', albedo: 0.06, trendKelvinPerYear: 0 },
  { id: 'D08', name: 'Corven River', landUse: 'water', albedo: 0.07, trendKelvinPerYear: 0 },
  { id: 'D09', name: 'Vantry Park', landUse: 'park', albedo: 0.19, trendKelvinPerYear: 0 },
  { id: 'D10', name: 'Stillglass Mere', landUse: 'water', albedo: 0.08, trendKelvinPerYear: 0 },
  { id: 'D11', name: "Tanner's Rise", landUse: 'suburban', albedo: 0.16, trendKelvinPerYear: 0 },
  { id: 'D12', name: 'Larchholt', landUse: 'suburban', albedo: 0.17, trendKelvinPerYear: 0 },
  { id: 'D13', name: 'Ostrel Heath', landUse: 'suburban', albedo: 0.18, trendKelvinPerYear: 0 },
  { id: 'D14', name: 'Calbrisk', landUse: 'suburban', albedo: 0.17, trendKelvinPerYear: 0 },
  { id: 'D15', name: 'Tennoch Shore', landUse: 'suburban', albedo: 0.16, trendKelvinPerYear: 0 },
  { id: 'D16', name: 'Merrowin Vale', landUse: 'suburban', albedo: 0.17, trendKelvinPerYear: 0.15 },
  { id: 'D17', name: 'Quillen Fields', landUse: 'farmland', albedo: 0.2, trendKelvinPerYear: 0 },
];

const IDX = Object.fromEntries(DISTRICTS.map((d, i) => [d.id, i])) as Record<string, number>;

/**
 * Easting of the river's centreline at a northing (both UTM 25N metres). The
 * river meanders gently north to south through the city and on through the farmland.
 */
export function riverCentreX(northingMetres: number): Metres {
  const y = northingMetres - CITY_GRID.originYMetres;
  return CITY_GRID.originXMetres + 6300 + 700 * Math.sin(y / 1800) - 400 * Math.cos(y / 3100);
}

/** Northing of the coast (UTM 25N metres): open sea south of it. */
export const COAST_NORTHING_METRES = (CITY_GRID.originYMetres - 4000) as Metres;
/** Half-width of the estuary that joins the harbour basin to the open sea, metres. */
export const ESTUARY_HALF_WIDTH_METRES = 1500 as Metres;
/** Half-width of the river outside the city, metres. */
export const RIVER_HALF_WIDTH_METRES = 120 as Metres;

/** Surfaces outside the districts. */
export type OuterSurface = 'sea' | 'water' | 'farmland';

/**
 * Surface of a UTM 25N point (metres) outside the districts: the open sea
 * south of the coast and the estuary from the harbour basin to it, the river
 * through the farmland, and farmland everywhere else.
 */
export function outerSurfaceAt(eastingMetres: number, northingMetres: number): OuterSurface {
  const mouthX = riverCentreX(CITY_GRID.originYMetres);
  if (northingMetres < COAST_NORTHING_METRES) return 'sea';
  if (northingMetres < CITY_GRID.originYMetres && Math.abs(eastingMetres - mouthX) < ESTUARY_HALF_WIDTH_METRES) return 'sea';
  if (Math.abs(eastingMetres - riverCentreX(northingMetres)) < RIVER_HALF_WIDTH_METRES) return 'water';
  return 'farmland';
}

/** District index (into DISTRICTS) of a city-relative point X, Y in metres from the grid origin; -1 outside the city. */
function districtOfCityPoint(X: number, Y: number): number {
  const W = CITY_GRID.cols * CITY_GRID.blockMetres;
  const H = CITY_GRID.rows * CITY_GRID.blockMetres;
  if (X < 0 || Y < 0 || X >= W || Y >= H) return -1;
  const p = (X - W / 2) / (W / 2);
  const q = (Y - H / 2) / (H / 2);
  // Rounded outline, flat along the southern coast.
  if (q >= -0.6 && Math.abs(p) ** 3.5 + Math.abs(q) ** 3.5 > 1) return -1;
  const dr = X - (riverCentreX(Y + CITY_GRID.originYMetres) - CITY_GRID.originXMetres);
  const westOfRiver = dr < 0;
  if (Y < 900 && Math.abs(dr) < 1500) return IDX.D07;
  if (Math.abs(dr) < 260) return IDX.D08;
  if ((X - 3300) ** 2 + (Y - 5700) ** 2 < 350 ** 2) return IDX.D10;
  if (((X - 3300) / 1300) ** 2 + ((Y - 5700) / 1000) ** 2 < 1) return IDX.D09;
  if (X > 8400 && Y < 1500) return IDX.D15;
  if (Y < 1800 && Math.abs(dr) < 2700) return IDX.D06;
  if (((X - 6700) / 1800) ** 2 + ((Y - 3300) / 1500) ** 2 < 1) {
    return westOfRiver ? IDX.D01 : Y < 3300 ? IDX.D02 : IDX.D03;
  }
  if (X > 8400 && Y < 4200) return IDX.D04;
  if ((X > 600 && X < 2400 && Y > 600 && Y < 2100) || (X > 8400 && X < 9600 && Y > 7200 && Y < 8100)) return IDX.D05;
  if (p > 0.43 && q > 0.45) return IDX.D17;
  if (((X - 6700) / 2700) ** 2 + ((Y - 3400) / 2400) ** 2 < 1) return IDX.D11;
  if (Y > 7800 && Math.abs(X - 6000) < 2600) return IDX.D16;
  if (westOfRiver) return Y >= 6600 ? IDX.D12 : IDX.D14;
  return Y >= 4200 ? IDX.D13 : IDX.D15;
}

const WATER = new Set([IDX.D07, IDX.D08, IDX.D10]);

/**
 * Block assignment, decided at block centres, then cleaned so that no district
 * touches itself only at a block corner (a "pinch"): where two blocks of a
 * district meet diagonally and the other two blocks of the 2 x 2 window are
 * not theirs, one of those (never a water block, so the river stays whole)
 * joins the district. Outlines then never touch themselves at a point.
 */
function buildBlockGrid(): Int16Array {
  const { cols, rows, blockMetres: b } = CITY_GRID;
  const g = new Int16Array(cols * rows);
  for (let r = 0; r < rows; r++) for (let c = 0; c < cols; c++) g[r * cols + c] = districtOfCityPoint((c + 0.5) * b, (r + 0.5) * b);
  const at = (c: number, r: number): number => g[r * cols + c];
  for (let pass = 0; pass < 20; pass++) {
    let changed = false;
    for (let r = 0; r + 1 < rows; r++) {
      for (let c = 0; c + 1 < cols; c++) {
        // Window cells: p = (c, r), q = (c+1, r), s = (c, r+1), t = (c+1, r+1).
        const pairs: [number, number, [number, number][]][] = [
          [at(c, r), at(c + 1, r + 1), [[c + 1, r], [c, r + 1]]],
          [at(c + 1, r), at(c, r + 1), [[c, r], [c + 1, r + 1]]],
        ];
        for (const [x, y, others] of pairs) {
          if (x !== y || x < 0) continue;
          if (others.some(([oc, or]) => at(oc, or) === x)) continue;
          const target = others.find(([oc, or]) => !WATER.has(at(oc, or)));
          if (!target) continue;
          g[target[1] * cols + target[0]] = x;
          changed = true;
        }
      }
    }
    if (!changed) break;
  }
  return g;
}

let blockGrid: Int16Array | null = null;

/** District index of block (col, row) of CITY_GRID; -1 outside the city. */
export function districtOfBlock(col: number, row: number): number {
  if (col < 0 || row < 0 || col >= CITY_GRID.cols || row >= CITY_GRID.rows) return -1;
  blockGrid ??= buildBlockGrid();
  return blockGrid[row * CITY_GRID.cols + col];
}

/**
 * District index of a UTM 25N point (metres): the district whose block holds
 * the point, or -1 outside the city. Consistent with the traced outlines.
 */
export function districtAt(eastingMetres: number, northingMetres: number): number {
  const col = Math.floor((eastingMetres - CITY_GRID.originXMetres) / CITY_GRID.blockMetres);
  const row = Math.floor((northingMetres - CITY_GRID.originYMetres) / CITY_GRID.blockMetres);
  if (col < 0 || row < 0 || col >= CITY_GRID.cols || row >= CITY_GRID.rows) return -1;
  return districtOfBlock(col, row);
}

type Pt = [number, number];

/**
 * Outlines of a set of grid blocks as rings in grid-corner coordinates
 * (x east, y north): outer rings counter-clockwise, holes clockwise. Where two
 * blocks meet only at a corner the tracer turns left, so such blocks get
 * separate rings that touch at one point and no ring touches itself.
 */
function traceRings(inSet: (col: number, row: number) => boolean): Pt[][] {
  const { cols, rows } = CITY_GRID;
  const key = (x: number, y: number): number => y * (cols + 1) + x;
  // Directed boundary edges with the set on their left, by start vertex.
  const out = new Map<number, Pt[]>();
  const add = (x0: number, y0: number, x1: number, y1: number): void => {
    const k = key(x0, y0);
    const list = out.get(k);
    if (list) list.push([x1, y1]);
    else out.set(k, [[x1, y1]]);
  };
  for (let r = 0; r < rows; r++) {
    for (let c = 0; c < cols; c++) {
      if (!inSet(c, r)) continue;
      if (r === 0 || !inSet(c, r - 1)) add(c, r, c + 1, r); // south side, eastwards
      if (c === cols - 1 || !inSet(c + 1, r)) add(c + 1, r, c + 1, r + 1); // east side, northwards
      if (r === rows - 1 || !inSet(c, r + 1)) add(c + 1, r + 1, c, r + 1); // north side, westwards
      if (c === 0 || !inSet(c - 1, r)) add(c, r + 1, c, r); // west side, southwards
    }
  }
  const rings: Pt[][] = [];
  for (;;) {
    let start: number | undefined;
    for (const [k, v] of out) if (v.length > 0) { start = k; break; }
    if (start === undefined) break;
    const sx = start % (cols + 1);
    const sy = Math.floor(start / (cols + 1));
    const ring: Pt[] = [[sx, sy]];
    let [px, py] = [sx, sy];
    let dir: Pt | null = null;
    for (;;) {
      const list = out.get(key(px, py));
      if (!list || list.length === 0) break;
      let pick = 0;
      if (list.length > 1 && dir) {
        // Leftmost turn: largest cross product with the incoming direction.
        let best = -Infinity;
        list.forEach(([nx, ny], i) => {
          const dx = nx - px, dy = ny - py;
          const turn = dir![0] * dy - dir![1] * dx;
          const score = turn > 0 ? 2 : turn === 0 ? 1 : 0;
          if (score > best) { best = score; pick = i; }
        });
      }
      const [nx, ny] = list.splice(pick, 1)[0];
      dir = [nx - px, ny - py];
      [px, py] = [nx, ny];
      ring.push([px, py]);
      if (px === sx && py === sy) break;
    }
    rings.push(ring);
  }
  return rings;
}

function signedArea(ring: Pt[]): number {
  let s = 0;
  for (let i = 0; i + 1 < ring.length; i++) s += ring[i][0] * ring[i + 1][1] - ring[i + 1][0] * ring[i][1];
  return s / 2;
}

function pointInRing(x: number, y: number, ring: Pt[]): boolean {
  let inside = false;
  for (let i = 0, j = ring.length - 1; i < ring.length; j = i++) {
    const [xi, yi] = ring[i];
    const [xj, yj] = ring[j];
    if (yi > y !== yj > y && x < ((xj - xi) * (y - yi)) / (yj - yi) + xi) inside = !inside;
  }
  return inside;
}

/** Polygons (outer ring then holes) in grid-corner coordinates for one district. */
function districtPolygonsInGrid(index: number): Pt[][][] {
  const rings = traceRings((c, r) => districtOfBlock(c, r) === index);
  const outers = rings.filter((r) => signedArea(r) > 0);
  const holes = rings.filter((r) => signedArea(r) < 0);
  const polys: Pt[][][] = outers.map((o) => [o]);
  for (const h of holes) {
    // A point just on the district's side of the hole's first edge lies in the shell that holds the hole.
    const [x0, y0] = h[0];
    const [x1, y1] = h[1];
    const tx = (x0 + x1) / 2 - (y1 - y0) * 0.25;
    const ty = (y0 + y1) / 2 + (x1 - x0) * 0.25;
    let best = -1;
    let bestArea = Infinity;
    outers.forEach((o, i) => {
      const a = signedArea(o);
      if (a < bestArea && pointInRing(tx, ty, o)) { best = i; bestArea = a; }
    });
    if (best >= 0) polys[best].push(h);
  }
  return polys;
}

export interface DistrictFeature {
  type: 'Feature';
  properties: { id: string; name: string; albedo: number; land_use: LandUse };
  geometry: { type: 'Polygon'; coordinates: number[][][] } | { type: 'MultiPolygon'; coordinates: number[][][][] };
}

export interface DistrictCollection {
  type: 'FeatureCollection';
  features: DistrictFeature[];
}

const round7 = (x: number): number => Math.round(x * 1e7) / 1e7;

/**
 * The city's districts as a GeoJSON FeatureCollection (lon/lat WGS 84, RFC
 * 7946 winding: outer rings counter-clockwise, holes clockwise), with
 * properties id, name, albedo and land_use. Deterministic.
 * @example districtCollection().features.length // 17
 */
export function districtCollection(): DistrictCollection {
  const toLonLat = proj4(UTM_25N_PROJ4, 'WGS84');
  const b = CITY_GRID.blockMetres;
  const conv = ([gx, gy]: Pt): number[] => {
    const [lon, lat] = toLonLat.forward([CITY_GRID.originXMetres + gx * b, CITY_GRID.originYMetres + gy * b]);
    return [round7(lon), round7(lat)];
  };
  const features: DistrictFeature[] = DISTRICTS.map((d, i) => {
    const polys = districtPolygonsInGrid(i).map((rings) => rings.map((ring) => ring.map(conv)));
    const properties = { id: d.id, name: d.name, albedo: d.albedo, land_use: d.landUse };
    return polys.length === 1
      ? { type: 'Feature', properties, geometry: { type: 'Polygon', coordinates: polys[0] } }
      : { type: 'Feature', properties, geometry: { type: 'MultiPolygon', coordinates: polys } };
  });
  return { type: 'FeatureCollection', features };
}

/**
 * Write the districts GeoJSON (see {@link districtCollection}) to `path`,
 * creating its folder.
 * @example await writeDistrictsGeoJson('demo-data/.generated/corvenmouth_districts.geojson')
 */
export async function writeDistrictsGeoJson(path: string): Promise<void> {
  await mkdir(dirname(path), { recursive: true });
  await writeFile(path, JSON.stringify(districtCollection()) + '\n');
}

/** Points every `stepMetres` or closer from a to b, a included, b not. */
function densify(a: [number, number], b: [number, number], stepMetres: number): [number, number][] {
  const n = Math.max(1, Math.ceil(Math.hypot(b[0] - a[0], b[1] - a[1]) / stepMetres));
  return Array.from({ length: n }, (_, i) => [a[0] + ((b[0] - a[0]) * i) / n, a[1] + ((b[1] - a[1]) * i) / n] as [number, number]);
}

export interface WaterFeature {
  type: 'Feature';
  properties: { name: string };
  geometry: { type: 'Polygon'; coordinates: number[][][] };
}

/**
 * The water outside the districts (see {@link outerSurfaceAt}) as a GeoJSON
 * FeatureCollection (lon/lat WGS 84, outer rings counter-clockwise): the open
 * sea with the estuary, and the river north of the city, both reaching
 * `marginMetres` beyond the block grid. Straight edges are split every 500 m
 * (the coast and estuary banks) or 50 m (the meandering river banks) so that
 * their lon/lat chords stay within a metre of the UTM lines. Deterministic.
 * @example waterCollection(12000).features.length // 2
 */
export function waterCollection(marginMetres: number): { type: 'FeatureCollection'; features: WaterFeature[] } {
  const toLonLat = proj4(UTM_25N_PROJ4, 'WGS84');
  const conv = ([x, y]: [number, number]): number[] => {
    const [lon, lat] = toLonLat.forward([x, y]);
    return [round7(lon), round7(lat)];
  };
  const ring = (corners: [number, number][], stepMetres: number): number[][] => {
    const pts = corners.flatMap((p, i) => densify(p, corners[(i + 1) % corners.length], stepMetres));
    const out = pts.map(conv);
    out.push(out[0]);
    return out;
  };
  const west = CITY_GRID.originXMetres - marginMetres;
  const east = CITY_GRID.originXMetres + CITY_GRID.cols * CITY_GRID.blockMetres + marginMetres;
  const south = CITY_GRID.originYMetres - marginMetres;
  const north = CITY_GRID.originYMetres + CITY_GRID.rows * CITY_GRID.blockMetres + marginMetres;
  const mouthX = riverCentreX(CITY_GRID.originYMetres);
  const coast = COAST_NORTHING_METRES;
  const half = ESTUARY_HALF_WIDTH_METRES;
  // Counter-clockwise: along the southern edge eastwards, then back west along the coast and around the estuary.
  const sea: [number, number][] = [
    [west, south], [east, south], [east, coast], [mouthX + half, coast],
    [mouthX + half, CITY_GRID.originYMetres], [mouthX - half, CITY_GRID.originYMetres], [mouthX - half, coast], [west, coast],
  ];
  // The river from the middle of the city (inside the districts, so the cut is not changed by it) to the northern edge:
  // up the east bank, down the west bank.
  const riverFrom = CITY_GRID.originYMetres + (CITY_GRID.rows * CITY_GRID.blockMetres) / 2;
  const steps = Math.ceil((north - riverFrom) / 50);
  const northings = Array.from({ length: steps + 1 }, (_, i) => riverFrom + ((north - riverFrom) * i) / steps);
  const river: number[][] = [
    ...northings.map((y) => conv([riverCentreX(y) + RIVER_HALF_WIDTH_METRES, y])),
    ...northings.slice().reverse().map((y) => conv([riverCentreX(y) - RIVER_HALF_WIDTH_METRES, y])),
  ];
  river.push(river[0]);
  return {
    type: 'FeatureCollection',
    features: [
      { type: 'Feature', properties: { name: 'open sea and estuary' }, geometry: { type: 'Polygon', coordinates: [ring(sea, 500)] } },
      { type: 'Feature', properties: { name: 'Corven River outside the city' }, geometry: { type: 'Polygon', coordinates: [river] } },
    ],
  };
}

/**
 * Write the water GeoJSON (see {@link waterCollection}) to `path`, creating its folder.
 * @example await writeWaterGeoJson('demo-data/.generated/corvenmouth_water.geojson', 12000)
 */
export async function writeWaterGeoJson(path: string, marginMetres: number): Promise<void> {
  await mkdir(dirname(path), { recursive: true });
  await writeFile(path, JSON.stringify(waterCollection(marginMetres)) + '\n');
}
