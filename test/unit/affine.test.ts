/**
 * raster/affine.ts: geotransform arithmetic and read windows.
 *
 * Sources named beside the checks:
 * - GDAL Geotransform Tutorial (gdal.org/tutorials/geotransforms_tut.html) and
 *   GDAL Raster Data Model (gdal.org/user/raster_data_model.html):
 *   X_geo = GT(0) + X_pixel * GT(1) + Y_line * GT(2),
 *   Y_geo = GT(3) + X_pixel * GT(4) + Y_line * GT(5);
 *   pixel/line (0, 0) is the top-left CORNER of the top-left pixel, whose
 *   centre is therefore (0.5, 0.5).
 * - GDAL 3.6 itself (Debian python3-gdal via /usr/bin/python3):
 *   gdal.ApplyGeoTransform and gdal.InvGeoTransform, run once per file on a
 *   batch of transforms and points; those checks skip with a message when
 *   GDAL is missing.
 */
import { spawnSync } from 'node:child_process';
import { describe, expect, it } from 'vitest';
import {
  fromGdal,
  intersectWindows,
  invert,
  mapToPixel,
  pixelSize,
  pixelToMap,
  toGdal,
  unionWindows,
  windowBounds,
  windowOfBounds,
  type Affine,
  type Window,
} from '../../workers/core/raster/affine.js';
import { InputError } from '../../workers/core/errors.js';
import { pythonModulesAvailable } from '../support/services.js';

type Gt = [number, number, number, number, number, number];

/** Invented grids. GDAL order [GT0..GT5] = [c, a, b, f, d, e]. */
const NORTH_UP: Gt = [500000, 30, 0, 4200000, 0, -30];
const GEOGRAPHIC: Gt = [12.4, 0.00025, 0, 47.2, 0, -0.00025];
const SOUTH_UP: Gt = [1000, 10, 0, 2000, 0, 10];
const MIRRORED: Gt = [0, -5, 0, 0, 0, -5];
/** 30 m pixels turned 30 degrees: a = 30 cos 30°, b = -30 sin 30°, d = -30 sin 30°, e = -30 cos 30°. */
const ROTATED: Gt = [440720, 30 * Math.cos(Math.PI / 6), -15, 3751320, -15, -30 * Math.cos(Math.PI / 6)];
const SHEARED: Gt = [100, 2, 0.5, 200, 0.25, -3];
const TRANSFORMS: Record<string, Gt> = { NORTH_UP, GEOGRAPHIC, SOUTH_UP, MIRRORED, ROTATED, SHEARED };

/** Pixel-space points: corner, centre, unit steps, fractional, far, negative; 0, 7, 8, 9 are the corners of window (0, 0, 7, 7). */
const PIXELS: [number, number][] = [[0, 0], [0.5, 0.5], [1, 0], [0, 1], [123.25, 77.75], [10000, 10000], [-3.5, 2.5], [7, 7], [7, 0], [0, 7]];

/** Transforms with no inverse: all zero, parallel pixel axes, zero pixel height. */
const SINGULAR: Gt[] = [[0, 0, 0, 0, 0, 0], [0, 1, 2, 0, 2, 4], [0, 1, 0, 0, 0, 0]];

const PYTHON = '/usr/bin/python3';
const HAVE_GDAL = await pythonModulesAvailable(['osgeo.gdal'], 'affine against GDAL');

interface GdalAnswers {
  /** Per transform: ApplyGeoTransform of each PIXELS point, InvGeoTransform, and the inverse applied to the forward results. */
  cases: Record<string, { forward: [number, number][]; inverse: Gt | null; back: [number, number][] }>;
  /** InvGeoTransform of each SINGULAR transform (null when GDAL refuses it). */
  singular: (Gt | null)[];
}

const GDAL_SCRIPT = `
import json, sys
from osgeo import gdal
q = json.load(sys.stdin)
out = {'cases': {}, 'singular': []}
for name, gt in q['transforms'].items():
    fwd = [list(gdal.ApplyGeoTransform(gt, c, r)) for c, r in q['pixels']]
    inv = gdal.InvGeoTransform(gt)
    back = [list(gdal.ApplyGeoTransform(inv, x, y)) for x, y in fwd] if inv else []
    out['cases'][name] = {'forward': fwd, 'inverse': list(inv) if inv else None, 'back': back}
for gt in q['singular']:
    inv = gdal.InvGeoTransform(gt)
    out['singular'].append(list(inv) if inv else None)
json.dump(out, sys.stdout)
`;

function askGdal(): GdalAnswers {
  const input = JSON.stringify({ transforms: TRANSFORMS, pixels: PIXELS, singular: SINGULAR });
  const r = spawnSync(PYTHON, ['-c', GDAL_SCRIPT], { input, encoding: 'utf8' });
  if (r.status !== 0) throw new Error(`GDAL reference script failed: ${r.stderr}`);
  return JSON.parse(r.stdout) as GdalAnswers;
}

/** |got - want| within `rel` of the larger of |want| and 1. */
function near(got: number, want: number, rel = 1e-12): void {
  expect(Math.abs(got - want)).toBeLessThanOrEqual(rel * Math.max(1, Math.abs(want)));
}

describe('fromGdal / toGdal', () => {
  it('reorders GDAL [GT0..GT5] as [c, a, b, f, d, e] and back', () => {
    // GDAL Geotransform Tutorial: GT(0) x of the upper-left corner, GT(1) pixel width,
    // GT(2) row rotation, GT(3) y of the upper-left corner, GT(4) column rotation, GT(5) pixel height.
    const t = fromGdal(ROTATED);
    expect([t.c, t.a, t.b, t.f, t.d, t.e]).toEqual(ROTATED);
    expect(toGdal(t)).toEqual(ROTATED);
  });

  it('refuses an array that is not 6 numbers with an InputError naming the file', () => {
    // Six coefficients: GDAL Geotransform Tutorial.
    expect(() => fromGdal([1, 2, 3, 4, 5], 'scene.tif')).toThrow(InputError);
    expect(() => fromGdal([1, 2, 3, 4, 5], 'scene.tif')).toThrow(/^scene\.tif: a geotransform needs 6 numbers, got 5/);
  });
});

describe('pixel corner and centre convention', () => {
  const t = fromGdal(NORTH_UP);

  it('pixel (0, 0) is the upper-left corner of the upper-left pixel', () => {
    // GDAL Geotransform Tutorial: (0.0, 0.0) is the top left corner of the top left pixel, at (GT(0), GT(3)).
    expect(pixelToMap(t, 0, 0)).toEqual([500000, 4200000]);
  });

  it('the centre of pixel (i, j) is at (i + 0.5, j + 0.5)', () => {
    // GDAL Geotransform Tutorial: the centre of the top left pixel is (0.5, 0.5);
    // with 30 m pixels that is 15 m east and 15 m south of the corner.
    expect(pixelToMap(t, 0.5, 0.5)).toEqual([500015, 4199985]);
    expect(pixelToMap(t, 2.5, 3.5)).toEqual([500075, 4199895]);
    // and back: a map point on a pixel centre lands exactly on x.5 (north-up inverse taken per axis)
    expect(mapToPixel(t, 500075, 4199895)).toEqual([2.5, 3.5]);
  });

  it('the bottom-right corner of the raster is (width, height)', () => {
    // GDAL Geotransform Tutorial: (width_in_pixels, height_in_pixels) is the bottom right corner of the bottom right pixel.
    expect(pixelToMap(t, 100, 50)).toEqual([503000, 4198500]);
    expect(windowBounds(t, { colOff: 0, rowOff: 0, width: 100, height: 50 })).toEqual([500000, 4198500, 503000, 4200000]);
  });

  it('a map point on a pixel edge maps to a whole column / row', () => {
    // Derived from the geotransform equations of the GDAL Geotransform Tutorial: x = GT0 + 30 col.
    expect(mapToPixel(t, 500090, 4199940)).toEqual([3, 2]);
  });
});

describe('pixelSize', () => {
  it('is the length of one column step and one row step in map units', () => {
    // Derived from the geotransform equations (GDAL Geotransform Tutorial): one column
    // moves (GT1, GT4), one row (GT2, GT5); the rotated grid keeps its 30 m pixels.
    expect(pixelSize(fromGdal(NORTH_UP))).toEqual({ x: 30, y: 30 });
    const r = pixelSize(fromGdal(ROTATED));
    near(r.x, 30);
    near(r.y, 30);
    const s = pixelSize(fromGdal(SHEARED));
    near(s.x, Math.hypot(2, 0.25));
    near(s.y, Math.hypot(0.5, 3));
  });
});

describe('windowOfBounds', () => {
  const t = fromGdal(NORTH_UP);
  // Pixel edges of this grid: x = 500000 + 30 col, y = 4200000 - 30 row (GDAL Geotransform Tutorial equations).
  const x = (col: number) => 500000 + 30 * col;
  const y = (row: number) => 4200000 - 30 * row;
  const EPS = 1e-6;

  it('a box on exact pixel edges covers exactly those pixels', () => {
    // Columns 2..3 and rows 3..4: edges x(2), x(4), y(5), y(3).
    expect(windowOfBounds(t, [x(2), y(5), x(4), y(3)], 100, 50)).toEqual({ colOff: 2, rowOff: 3, width: 2, height: 2 });
  });

  it('a box just inside those edges still needs the same pixels', () => {
    expect(windowOfBounds(t, [x(2) + EPS, y(5) + EPS, x(4) - EPS, y(3) - EPS], 100, 50))
      .toEqual({ colOff: 2, rowOff: 3, width: 2, height: 2 });
  });

  it('a box just outside those edges takes one more pixel on every side', () => {
    expect(windowOfBounds(t, [x(2) - EPS, y(5) - EPS, x(4) + EPS, y(3) + EPS], 100, 50))
      .toEqual({ colOff: 1, rowOff: 2, width: 4, height: 4 });
  });

  it('a box inside one pixel gives that pixel', () => {
    expect(windowOfBounds(t, [x(7) + 1, y(9) + 1, x(8) - 1, y(8) - 1], 100, 50)).toEqual({ colOff: 7, rowOff: 8, width: 1, height: 1 });
  });

  it('is clamped to the raster', () => {
    expect(windowOfBounds(t, [x(-10), y(60), x(5), y(45)], 100, 50)).toEqual({ colOff: 0, rowOff: 45, width: 5, height: 5 });
    expect(windowOfBounds(t, [x(-10), y(60), x(110), y(-10)], 100, 50)).toEqual({ colOff: 0, rowOff: 0, width: 100, height: 50 });
  });

  it('is null for a box off the raster or only touching its edge', () => {
    expect(windowOfBounds(t, [x(-5), y(10), x(-1), y(5)], 100, 50)).toBeNull();
    expect(windowOfBounds(t, [x(-5), y(10), x(0), y(5)], 100, 50)).toBeNull(); // touches the west edge
    expect(windowOfBounds(t, [x(-5), y(10), x(0) + EPS, y(5)], 100, 50)).toEqual({ colOff: 0, rowOff: 5, width: 1, height: 5 });
    expect(windowOfBounds(t, [x(10), y(55), x(20), y(50)], 100, 50)).toBeNull(); // touches the south edge
  });

  it('on a south-up grid rows grow with y', () => {
    // SOUTH_UP: y = 2000 + 10 row (GDAL Geotransform Tutorial equations, GT5 > 0).
    expect(windowOfBounds(fromGdal(SOUTH_UP), [1020, 2030, 1040, 2050], 20, 20)).toEqual({ colOff: 2, rowOff: 3, width: 2, height: 2 });
  });

  it('on a rotated grid covers every pixel the box corners fall in', () => {
    // Box of the map positions of pixel-space points (4.5, 6.5) and (8.5, 9.5): its corners
    // reach pixel-space columns/rows beyond those two points, so the window is checked
    // against the corners' own pixel positions (derived from mapToPixel, checked against GDAL below).
    const r = fromGdal(ROTATED);
    const [xa, ya] = pixelToMap(r, 4.5, 6.5);
    const [xb, yb] = pixelToMap(r, 8.5, 9.5);
    const box = [Math.min(xa, xb), Math.min(ya, yb), Math.max(xa, xb), Math.max(ya, yb)] as const;
    const corners = [[box[0], box[1]], [box[2], box[1]], [box[0], box[3]], [box[2], box[3]]].map(([px, py]) => mapToPixel(r, px, py));
    const cols = corners.map((p) => p[0]);
    const rows = corners.map((p) => p[1]);
    const c0 = Math.floor(Math.min(...cols)), c1 = Math.ceil(Math.max(...cols));
    const r0 = Math.floor(Math.min(...rows)), r1 = Math.ceil(Math.max(...rows));
    expect(windowOfBounds(r, box, 1000, 1000)).toEqual({ colOff: c0, rowOff: r0, width: c1 - c0, height: r1 - r0 });
    // Both pixel centres lie inside the window.
    const w = windowOfBounds(r, box, 1000, 1000)!;
    for (const [c, q] of [[4, 6], [8, 9]]) {
      expect(c >= w.colOff && c < w.colOff + w.width && q >= w.rowOff && q < w.rowOff + w.height).toBe(true);
    }
  });
});

describe('intersectWindows / unionWindows', () => {
  // Set arithmetic on half-open pixel ranges [off, off + size): common practice, no source.
  const A: Window = { colOff: 0, rowOff: 0, width: 10, height: 10 };
  const B: Window = { colOff: 5, rowOff: 7, width: 10, height: 10 };

  it('intersects overlapping windows', () => {
    expect(intersectWindows(A, B)).toEqual({ colOff: 5, rowOff: 7, width: 5, height: 3 });
    expect(intersectWindows(B, A)).toEqual({ colOff: 5, rowOff: 7, width: 5, height: 3 });
  });

  it('a window inside another is its own intersection', () => {
    const inner: Window = { colOff: 2, rowOff: 3, width: 4, height: 5 };
    expect(intersectWindows(A, inner)).toEqual(inner);
  });

  it('windows that only share an edge or a corner, or are apart, have no intersection', () => {
    expect(intersectWindows(A, { colOff: 10, rowOff: 0, width: 5, height: 5 })).toBeNull(); // shared edge
    expect(intersectWindows(A, { colOff: 0, rowOff: 10, width: 5, height: 5 })).toBeNull(); // shared edge
    expect(intersectWindows(A, { colOff: 10, rowOff: 10, width: 5, height: 5 })).toBeNull(); // shared corner
    expect(intersectWindows(A, { colOff: 20, rowOff: 20, width: 5, height: 5 })).toBeNull(); // apart
    expect(intersectWindows(A, { colOff: 3, rowOff: 3, width: 0, height: 4 })).toBeNull(); // empty window
  });

  it('unions to the bounding window', () => {
    expect(unionWindows([A, B])).toEqual({ colOff: 0, rowOff: 0, width: 15, height: 17 });
    expect(unionWindows([B])).toEqual(B);
    expect(unionWindows([{ colOff: 20, rowOff: 1, width: 2, height: 2 }, A])).toEqual({ colOff: 0, rowOff: 0, width: 22, height: 10 });
    expect(unionWindows([])).toBeNull();
  });
});

describe('singular transforms', () => {
  it('invert, mapToPixel and windowOfBounds refuse them with an InputError naming the file', () => {
    // A transform with zero or parallel pixel axes has no inverse (determinant a e - b d = 0).
    for (const gt of SINGULAR) {
      const t = fromGdal(gt);
      expect(() => invert(t, 'scene.tif')).toThrow(InputError);
      expect(() => invert(t, 'scene.tif')).toThrow(/^scene\.tif: the raster geotransform is singular/);
      expect(() => mapToPixel(t, 1, 1, 'scene.tif')).toThrow(/^scene\.tif: .*singular/);
      expect(() => windowOfBounds(t, [0, 0, 1, 1], 10, 10, 'scene.tif')).toThrow(/^scene\.tif: .*singular/);
    }
  });

  it('refuses a transform with a non-finite coefficient', () => {
    // Not a geotransform at all: common practice, no source.
    const t: Affine = { ...fromGdal(NORTH_UP), c: Number.NaN };
    expect(() => invert(t, 'scene.tif')).toThrow(/^scene\.tif: .*not finite/);
  });
});

if (!HAVE_GDAL) {
  console.log('affine: GDAL checks not run: /usr/bin/python3 with osgeo (python3-gdal) is missing');
} else {
  describe('against GDAL (ApplyGeoTransform / InvGeoTransform)', () => {
    const gdal = askGdal();

    for (const [name, gt] of Object.entries(TRANSFORMS)) {
      it(`${name}: pixelToMap equals gdal.ApplyGeoTransform`, () => {
        // GDAL 3.6 gdal.ApplyGeoTransform(gt, col, row).
        const t = fromGdal(gt);
        PIXELS.forEach(([c, r], i) => {
          const [x, y] = pixelToMap(t, c, r);
          near(x, gdal.cases[name].forward[i][0]);
          near(y, gdal.cases[name].forward[i][1]);
        });
      });

      it(`${name}: invert equals gdal.InvGeoTransform`, () => {
        // GDAL 3.6 gdal.InvGeoTransform(gt).
        const want = gdal.cases[name].inverse;
        expect(want).not.toBeNull();
        const got = toGdal(invert(fromGdal(gt)));
        got.forEach((v, k) => near(v, want![k], 1e-12));
      });

      it(`${name}: pixel -> map -> pixel round trip matches GDAL and returns the start`, () => {
        // GDAL 3.6 gdal.ApplyGeoTransform(gdal.InvGeoTransform(gt), x, y) of the forward results.
        const t = fromGdal(gt);
        PIXELS.forEach(([c, r], i) => {
          const [x, y] = gdal.cases[name].forward[i];
          const [pc, pr] = mapToPixel(t, x, y);
          near(pc, gdal.cases[name].back[i][0], 1e-9);
          near(pr, gdal.cases[name].back[i][1], 1e-9);
          near(pc, c, 1e-9);
          near(pr, r, 1e-9);
        });
      });

      it(`${name}: windowBounds spans GDAL's map positions of the window corners`, () => {
        // Corners of window {0, 0, 7, 7} are PIXELS[0], [8], [9], [7]; GDAL 3.6 gdal.ApplyGeoTransform of each.
        const corners = [0, 8, 9, 7].map((i) => gdal.cases[name].forward[i]);
        const b = windowBounds(fromGdal(gt), { colOff: 0, rowOff: 0, width: 7, height: 7 });
        near(b[0], Math.min(...corners.map((p) => p[0])));
        near(b[1], Math.min(...corners.map((p) => p[1])));
        near(b[2], Math.max(...corners.map((p) => p[0])));
        near(b[3], Math.max(...corners.map((p) => p[1])));
      });
    }

    it('north-up pixel centres land exactly where GDAL puts them (x.5), not just near', () => {
      // GDAL 3.6: ApplyGeoTransform(InvGeoTransform(gt), ...) of a centre is exactly 0.5 / 123.25 ... for NORTH_UP.
      const t = fromGdal(NORTH_UP);
      PIXELS.forEach((_, i) => {
        const [x, y] = gdal.cases.NORTH_UP.forward[i];
        expect(mapToPixel(t, x, y)).toEqual(gdal.cases.NORTH_UP.back[i]);
      });
    });

    it('GDAL refuses the same singular transforms', () => {
      // GDAL 3.6 gdal.InvGeoTransform returns None for each SINGULAR transform; invert throws for each (above).
      expect(gdal.singular).toEqual(SINGULAR.map(() => null));
      for (const gt of SINGULAR) expect(() => invert(fromGdal(gt))).toThrow(InputError);
    });
  });
}
