/**
 * The bench districts: 60 invented wards tiling a 30 x 30 km city centred on
 * the bench scene. The city is a 6 x 10 grid of 5 km x 3 km cells in UTM 25N
 * metres; every cell side is a wiggly polyline of 150 segments shared by the
 * two cells it separates, so neighbours share exact vertices and the wards
 * tile the city without gaps or overlaps. Each ward ring has 600 distinct
 * vertices (601 positions with the closing one).
 */
import proj4 from 'proj4';
import type { Metres } from '../../workers/core/units.js';
import { mulberry32 } from './random.js';
import { BENCH_UTM_PROJ4, CENTRE_EASTING, CENTRE_NORTHING } from './scene.js';

export const CITY_COLS = 6;
export const CITY_ROWS = 10;
export const CELL_WIDTH_METRES: Metres = 5000;
export const CELL_HEIGHT_METRES: Metres = 3000;
export const SEGMENTS_PER_SIDE = 150;
/** City's south-west corner, UTM 25N metres. */
export const CITY_WEST: Metres = CENTRE_EASTING - (CITY_COLS * CELL_WIDTH_METRES) / 2;
export const CITY_SOUTH: Metres = CENTRE_NORTHING - (CITY_ROWS * CELL_HEIGHT_METRES) / 2;

/** Wiggle terms (amplitude m, cycles per side); their sum (150 m) stays well under half a cell. */
const WIGGLES: ReadonlyArray<[number, number]> = [[80, 2], [45, 5], [25, 9]];

type Pt = [number, number];

/**
 * One cell side from node a to node b (UTM metres): points displaced
 * perpendicular to the side by sin^2(pi t) * sum of sines. The sin^2 envelope
 * makes the polyline leave its end nodes tangentially, so sides meeting at a
 * node never cross. Ends are the exact node coordinates.
 */
function side(a: Pt, b: Pt, seed: number): Pt[] {
  const rnd = mulberry32(seed);
  const phases = WIGGLES.map(() => rnd() * 2 * Math.PI);
  const sign = rnd() < 0.5 ? -1 : 1;
  const dx = b[0] - a[0], dy = b[1] - a[1];
  const len = Math.hypot(dx, dy);
  const nx = -dy / len, ny = dx / len;
  const pts: Pt[] = [a];
  for (let k = 1; k < SEGMENTS_PER_SIDE; k++) {
    const t = k / SEGMENTS_PER_SIDE;
    let w = 0;
    WIGGLES.forEach(([amp, cycles], m) => { w += amp * Math.sin(2 * Math.PI * cycles * t + phases[m]); });
    w *= sign * Math.sin(Math.PI * t) ** 2;
    pts.push([a[0] + dx * t + nx * w, a[1] + dy * t + ny * w]);
  }
  pts.push(b);
  return pts;
}

export interface WardFeature {
  type: 'Feature';
  properties: { id: string; name: string; cell_col: number; cell_row: number };
  geometry: { type: 'Polygon'; coordinates: number[][][] };
}

export interface WardCollection {
  type: 'FeatureCollection';
  features: WardFeature[];
}

/**
 * Ward rings in UTM 25N metres, counter-clockwise, closed; index = row * CITY_COLS + col
 * (row 0 is the southernmost).
 */
export function wardRingsUtm(): Pt[][] {
  const node = (i: number, j: number): Pt => [CITY_WEST + i * CELL_WIDTH_METRES, CITY_SOUTH + j * CELL_HEIGHT_METRES];
  const horizontal = new Map<string, Pt[]>();
  const vertical = new Map<string, Pt[]>();
  for (let j = 0; j <= CITY_ROWS; j++) for (let i = 0; i < CITY_COLS; i++) horizontal.set(`${i},${j}`, side(node(i, j), node(i + 1, j), 1 + j * 97 + i));
  for (let j = 0; j < CITY_ROWS; j++) for (let i = 0; i <= CITY_COLS; i++) vertical.set(`${i},${j}`, side(node(i, j), node(i, j + 1), 50000 + j * 97 + i));
  const rings: Pt[][] = [];
  for (let j = 0; j < CITY_ROWS; j++) {
    for (let i = 0; i < CITY_COLS; i++) {
      const south = horizontal.get(`${i},${j}`)!;
      const east = vertical.get(`${i + 1},${j}`)!;
      const north = [...horizontal.get(`${i},${j + 1}`)!].reverse();
      const west = [...vertical.get(`${i},${j}`)!].reverse();
      // Each side without its last point (the next side starts there), then close.
      const ring = [...south.slice(0, -1), ...east.slice(0, -1), ...north.slice(0, -1), ...west.slice(0, -1)];
      ring.push(ring[0]);
      rings.push(ring);
    }
  }
  return rings;
}

/** Degrees rounded to 1e-9 (0.1 mm): the same UTM vertex always gives the same text. */
const round9 = (x: number): number => Math.round(x * 1e9) / 1e9;

/**
 * The wards as a GeoJSON FeatureCollection in lon/lat WGS 84 (RFC 7946:
 * outer rings counter-clockwise), ids W01..W60.
 * @example wardCollection().features.length // 60
 */
export function wardCollection(): WardCollection {
  const toLonLat = proj4(BENCH_UTM_PROJ4, 'WGS84');
  const cache = new Map<string, number[]>();
  const conv = ([x, y]: Pt): number[] => {
    const key = `${x},${y}`;
    let p = cache.get(key);
    if (!p) {
      const [lon, lat] = toLonLat.forward([x, y]);
      p = [round9(lon), round9(lat)];
      cache.set(key, p);
    }
    return p;
  };
  const features = wardRingsUtm().map((ring, k): WardFeature => {
    const id = `W${String(k + 1).padStart(2, '0')}`;
    return {
      type: 'Feature',
      properties: { id, name: `Ward ${k + 1}`, cell_col: k % CITY_COLS, cell_row: Math.floor(k / CITY_COLS) },
      geometry: { type: 'Polygon', coordinates: [ring.map(conv)] },
    };
  });
  return { type: 'FeatureCollection', features };
}
