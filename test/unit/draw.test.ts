/**
 * The shared drawing code (api/web/draw/): map, legend, ranked bars, series
 * chart, trend sentence. Inputs are invented; each expected value names where
 * it comes from.
 */
import { readdirSync, readFileSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { booleanPointInPolygon, centroid as turfCentroid, area as turfArea } from '@turf/turf';
import { describe, expect, it } from 'vitest';
import {
  colourClasses, classOf, drawLegend, drawMap, drawRankedBars, drawSeriesChart, formatValue, METRIC_NAMES, seriesValueExtent,
  toDisplay, trendSentence, unitLabel, type ChartSeries, type MapFeature,
} from '../../api/web/draw/index.js';
import { SERIES_METRICS } from '../../workers/store/series.js';
import proj4 from 'proj4';
import { ruralRing, subtractPolygons } from '../../workers/core/districts/index.js';

const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), '../..');

/** An axis-aligned lon/lat box as an RFC 7946 polygon (counter-clockwise exterior). */
const box = (w: number, s: number, e: number, n: number) => ({ type: 'Polygon' as const, coordinates: [[[w, s], [e, s], [e, n], [w, n], [w, s]]] });

// invented districts on the invented coordinates of the demo city (open ocean)
const FEATURES: MapFeature[] = [
  { id: 'A', name: 'Alder Quarter', role: 'district', geometry: box(-35.62, 44.2, -35.6, 44.21), value: 1.7 },
  { id: 'B', name: 'Brook End', role: 'district', geometry: box(-35.6, 44.2, -35.57, 44.21), value: -0.4 },
  { id: 'C', name: 'Cinder Lane', role: 'district', geometry: box(-35.62, 44.21, -35.57, 44.225), value: null },
  { id: 'D', name: 'Dockside <&>', role: 'district', geometry: box(-35.57, 44.2, -35.56, 44.225), value: 3.2 },
  { id: 'rural', name: 'rural reference', role: 'rural', geometry: { type: 'Polygon', coordinates: [
    [[-35.7, 44.15], [-35.48, 44.15], [-35.48, 44.28], [-35.7, 44.28], [-35.7, 44.15]],
    [[-35.63, 44.19], [-35.63, 44.235], [-35.55, 44.235], [-35.55, 44.19], [-35.63, 44.19]],
  ] }, value: null },
];

/** Attribute values of every element `tag` whose attribute list contains `marker`. */
function elements(svg: string, tag: string, marker = ''): Record<string, string>[] {
  const out: Record<string, string>[] = [];
  for (const m of svg.matchAll(new RegExp(`<${tag}\\b([^>]*)>`, 'g'))) {
    if (!m[1].includes(marker)) continue;
    out.push(Object.fromEntries([...m[1].matchAll(/([\w:-]+)="([^"]*)"/g)].map((a) => [a[1], a[2]])));
  }
  return out;
}

/** Planar area of an SVG path made of M/L/Z commands (shoelace formula, summed over subpaths). */
function pathArea(d: string): number {
  let total = 0;
  for (const sub of d.split(/Z/i).filter((x) => /\d/.test(x))) {
    const pts = [...sub.matchAll(/(-?[\d.]+),(-?[\d.]+)/g)].map((m) => [Number(m[1]), Number(m[2])]);
    let a = 0;
    for (let i = 0; i < pts.length; i++) {
      const [x1, y1] = pts[i];
      const [x2, y2] = pts[(i + 1) % pts.length];
      a += x1 * y2 - x2 * y1;
    }
    total += Math.abs(a) / 2;
  }
  return total;
}

describe('metrics', () => {
  it('names the same five metrics as the store and the API', () => {
    expect([...METRIC_NAMES]).toEqual([...SERIES_METRICS]);
  });
  it('converts absolute temperatures to °C and leaves differences alone', () => {
    // 0 °C = 273.15 K by definition of the Celsius scale (BIPM, SI Brochure, 9th ed., 2019, section 2.3.1)
    expect(toDisplay('lst_day', 303.15, 'C')).toBeCloseTo(30, 10);
    expect(toDisplay('suhi_night', 1.25, 'C')).toBe(1.25);
    expect(toDisplay('ati', 0.021, 'C')).toBe(0.021);
    expect(toDisplay('lst_night', null, 'C')).toBeNull();
    expect(unitLabel('lst_day', 'C')).toBe('\u00b0C');
    expect(unitLabel('ati', 'C')).toBe('1/K');
    expect(formatValue('suhi_day', -0.004)).toBe('0.00');
    expect(formatValue('suhi_day', -1.5)).toBe('\u22121.50');
  });
});

describe('palette', () => {
  it('diverging classes break at zero, cooler in blue and warmer in red (ColorBrewer RdBu)', () => {
    const c = colourClasses('diverging', [1.7, -0.4, null, 3.2], 'K');
    expect(c.breaks).toContain(0);
    // RdBu 8-class hex values as published by ColorBrewer (colorbrewer2.org; from memory):
    // #b2182b #d6604d #f4a582 #fddbc7 #d1e5f0 #92c5de #4393c3 #2166ac
    const cooler = c.colours[classOf(c, -0.4) as number];
    const warmer = c.colours[classOf(c, 0.1) as number];
    expect(cooler).toBe('#d1e5f0');
    expect(warmer).toBe('#fddbc7');
    expect(c.colours[classOf(c, 3.2) as number]).toBe('#b2182b');
    expect(c.labels.length).toBe(c.colours.length);
    expect(classOf(c, null)).toBeNull();
  });

  it('sequential classes break at quantiles rounded apart (ColorBrewer YlOrRd)', () => {
    const c = colourClasses('sequential-heat', [301.3, 309.8, 305], 'K');
    // Hyndman & Fan (1996) type 7: Q(p) = x[h] + (h − ⌊h⌋)(x[h+1] − x[h]), h = (n − 1)p (0-based):
    // p = 0.2, 0.4, 0.6, 0.8 → 302.78, 304.26, 305.96, 307.88, distinct at 0 decimals
    expect(c.breaks).toEqual([303, 304, 306, 308]);
    // YlOrRd 5-class as published by ColorBrewer (colorbrewer2.org; from memory)
    expect(c.colours).toEqual(['#ffffb2', '#fecc5c', '#fd8d3c', '#f03b20', '#bd0026']);
    expect(c.labels[0]).toBe('below 303 K');
    expect(c.labels[4]).toBe('308 K and above');
    expect(classOf(c, 301.3)).toBe(0);
    expect(classOf(c, 304)).toBe(2); // a value on a break belongs to the class above it
  });

  it('quantile breaks of skewed values keep the many small ones apart', () => {
    // invented: fifteen land districts near 0.05 1/K and two water districts near 0.7 1/K
    const v = [0.0425, 0.0436, 0.0474, 0.0475, 0.0491, 0.0498, 0.051, 0.0513, 0.0519, 0.0533, 0.0545, 0.0548, 0.0615, 0.0625, 0.0631, 0.355, 0.707];
    const c = colourClasses('sequential-inertia', v, '1/K');
    // type 7 (as above), n = 17: h = 3.2, 6.4, 9.6, 12.8 → 0.04782, 0.05112, 0.05402, 0.06230 (numpy.quantile agrees); apart at 3 decimals
    expect(c.breaks).toEqual([0.048, 0.051, 0.054, 0.062]);
    expect(c.labels[1]).toBe('0.048 to 0.051 1/K');
    // YlGnBu 5-class as published by ColorBrewer (colorbrewer2.org; from memory)
    expect(c.colours).toEqual(['#ffffcc', '#a1dab4', '#41b6c4', '#2c7fb8', '#253494']);
    expect(colourClasses('sequential-heat', [300, 300, 300]).breaks).toEqual([]);
  });
});

describe('map', () => {
  const classes = colourClasses('diverging', FEATURES.filter((f) => f.role === 'district').map((f) => f.value), 'K');
  const { svg } = drawMap(FEATURES, { width: 600, classes, formatValue: (v) => (v === null ? 'no data' : `${v} K`), title: 'Night SUHI, 2024', selectedId: 'B', spots: { A: 'hot', B: 'cold', D: 'none' } });
  const paths = elements(svg, 'path', 'hl-district');

  it('draws one path per district, each with the fill of its legend class', () => {
    expect(paths.map((p) => p['data-id'])).toEqual(['A', 'B', 'C', 'D']);
    const legend = drawLegend(classes, { title: 'Night SUHI, K' }).svg;
    const swatches = new Map(elements(legend, 'rect', 'hl-swatch').map((r) => [r['data-class'], r.fill]));
    for (const p of paths) {
      const f = FEATURES.find((x) => x.id === p['data-id']) as MapFeature;
      const cls = classOf(classes, f.value);
      expect(p['data-class']).toBe(cls === null ? 'none' : String(cls));
      if (cls === null) expect([p.fill, swatches.get('none')]).toEqual(['url(#hl-nodata)', 'url(#hl-legend-nodata)']); // both hatched
      else expect(swatches.get(p['data-class'])).toBe(p.fill);
    }
  });

  it('hatches and labels districts without a value, outlines the rural reference', () => {
    expect(paths.find((p) => p['data-id'] === 'C')?.fill).toBe('url(#hl-nodata)');
    expect(svg).toContain('<pattern id="hl-nodata"');
    expect((svg.match(/>no data<\/text>/g) ?? []).length).toBe(1);
    const rural = elements(svg, 'path', 'hl-rural');
    expect(rural).toHaveLength(1);
    expect(rural[0].fill).toBe('none');
  });

  it('outlines hot and cold spots and the selected district, and escapes names', () => {
    expect(elements(svg, 'path', 'hl-spot ').map((p) => [p['data-id'], p['data-spot']])).toEqual([['A', 'hot'], ['B', 'cold']]);
    expect(elements(svg, 'path', 'hl-selected"')[0]['data-id']).toBe('B');
    expect(svg).toContain('Dockside &#60;&#38;&#62;: 3.2 K');
    expect(svg).not.toContain('Dockside <&>');
  });

  it('keeps the districts’ relative areas (a conformal projection at city scale; areas by @turf/turf)', () => {
    // Reference: geodesic areas from @turf/turf's area(); the transverse Mercator's
    // area scale varies by well under 0.1 % across a few kilometres (Snyder 1987,
    // "Map Projections: A Working Manual", USGS PP 1395, p. 61, scale factor; from memory).
    const projected = new Map(paths.map((p) => [p['data-id'], pathArea(p.d)]));
    const geodesic = new Map(FEATURES.filter((f) => f.role === 'district').map((f) => [f.id, turfArea({ type: 'Feature', properties: {}, geometry: f.geometry as never })]));
    for (const id of ['B', 'C', 'D']) {
      const ratio = (projected.get(id) as number) / (projected.get('A') as number);
      const expected = (geodesic.get(id) as number) / (geodesic.get('A') as number);
      expect(Math.abs(ratio / expected - 1)).toBeLessThan(0.01); // coordinates are rounded to 0.1 px
    }
  });

  it('fits the drawing into the width asked and its own height', () => {
    const m = drawMap(FEATURES, { width: 320, classes, formatValue: String, title: 't', fit: 'districts' });
    const nums = elements(m.svg, 'path', 'hl-district').flatMap((p) => [...p.d.matchAll(/(-?[\d.]+),(-?[\d.]+)/g)].map((x) => [Number(x[1]), Number(x[2])]));
    expect(Math.min(...nums.map((n) => n[0]))).toBeGreaterThanOrEqual(0);
    expect(Math.max(...nums.map((n) => n[0]))).toBeLessThanOrEqual(320);
    expect(Math.max(...nums.map((n) => n[1]))).toBeLessThanOrEqual(m.height);
    // the inner edge (hole) of the rural reference stays in view; its outer edge may not
    const [rural] = elements(m.svg, 'path', 'hl-rural');
    const rings = rural.d.split(/Z/i).filter((x) => /\d/.test(x)).map((sub) => [...sub.matchAll(/(-?[\d.]+),(-?[\d.]+)/g)].map((x) => [Number(x[1]), Number(x[2])]));
    expect(rings).toHaveLength(2);
    const inView = (ring: number[][]) => ring.every(([x, y]) => x >= -0.5 && x <= 320.5 && y >= -0.5 && y <= m.height + 0.5);
    expect(rings.filter(inView)).toHaveLength(1);
  });
});

describe('the rural reference on a map fitted to the districts', () => {
  // an invented square city of about 4 km, its rural ring 2-10 km out (ruralRing's defaults), and a strip
  // of water running east from the city across the whole ring: the ring is cut open, so its inner edge is
  // part of its one outer ring and it has no hole
  const CITY = box(-35.625, 44.18, -35.575, 44.216);
  const city: MapFeature = { id: 'C1', name: 'Cinder Lane', role: 'district', geometry: CITY, value: 1 };
  const ring = ruralRing([{ id: 'C1', name: 'Cinder Lane', geometry: [CITY.coordinates], properties: {}, areaSquareMetres: 1 }]);
  const cut = subtractPolygons(ring, [box(-35.6, 44.196, -35.3, 44.2).coordinates]);
  const rural: MapFeature = { id: 'rural', name: 'rural reference', role: 'rural', geometry: { type: 'MultiPolygon', coordinates: cut.geometry }, value: null };
  const classes = colourClasses('diverging', [1], 'K');
  const WIDTH = 600;
  // ground coordinates: a transverse Mercator on the city's meridian (proj4, WGS 84), metres
  const tm = proj4('WGS84', '+proj=tmerc +lat_0=0 +lon_0=-35.6 +k=1 +x_0=0 +y_0=0 +ellps=WGS84 +units=m +no_defs');
  const ground = (c: number[]) => tm.forward(c as [number, number]) as [number, number];
  const [sw, se, , nw] = CITY.coordinates[0].map(ground);
  /** Distance (m) from a ground point to the city square's outline. */
  const toCity = ([x, y]: [number, number]) => {
    const dx = Math.max(sw[0] - x, 0, x - se[0]), dy = Math.max(sw[1] - y, 0, y - nw[1]);
    return Math.hypot(dx, dy);
  };
  const pathPoints = (d: string) => [...d.matchAll(/(-?[\d.]+),(-?[\d.]+)/g)].map((m) => [Number(m[1]), Number(m[2])]);

  it('shows the inner edge of a ring that water cut open, and says the outline is in view', () => {
    expect(cut.geometry.every((polygon) => polygon.length === 1)).toBe(true); // no hole left: the situation checked
    const m = drawMap([city, rural], { width: WIDTH, classes, formatValue: String, title: 't', fit: 'districts', margin: 0.02 });
    expect(m.ruralInView).toBe(true);
    // where the drawing puts a ground point: the city's drawn corners give the scale (a conformal projection
    // keeps ground proportions at city scale; Snyder 1987, USGS PP 1395, from memory)
    const [drawn] = elements(m.svg, 'path', 'hl-district');
    const px = pathPoints(drawn.d);
    const left = Math.min(...px.map((q) => q[0])), right = Math.max(...px.map((q) => q[0])), bottom = Math.max(...px.map((q) => q[1]));
    const scale = (right - left) / (se[0] - sw[0]);
    const toPx = ([x, y]: [number, number]) => [left + scale * (x - sw[0]), bottom - scale * (y - sw[1])];
    // the inner edge: the ring's vertices within 2.1 km of the city (its inner distance is 2 km)
    const inner = cut.geometry.flat(2).map(ground).filter((g) => toCity(g) <= 2100);
    expect(inner.length).toBeGreaterThan(20);
    for (const g of inner) {
      const [x, y] = toPx(g);
      // 2 px: the sphere of d3-geo against the ellipsoid of proj4 over a few kilometres
      expect(x, `${g}`).toBeGreaterThanOrEqual(-2);
      expect(x, `${g}`).toBeLessThanOrEqual(WIDTH + 2);
      expect(y, `${g}`).toBeGreaterThanOrEqual(-2);
      expect(y, `${g}`).toBeLessThanOrEqual(m.height + 2);
    }
    // and the view is no wider than that edge needs: the city (about 4 km) fills about 4 / (4 + 2 × 2) of it
    const cityWidth = se[0] - sw[0];
    expect((right - left) / WIDTH).toBeGreaterThan(0.9 * cityWidth / (cityWidth + 2 * 2000 + 0.04 * (cityWidth + 4000)));
    expect((right - left) / WIDTH).toBeLessThan(1.1 * cityWidth / (cityWidth + 2 * 2000));
  });

  it('fits the districts alone on request (the printed report), leaving the ring where it falls', () => {
    const m = drawMap([city, rural], { width: WIDTH, classes, formatValue: String, title: 't', fit: 'districts-only' });
    // the city fills the width (6 px padding each side), so the ring 2 km outside it is out of view
    const xs = pathPoints(elements(m.svg, 'path', 'hl-district')[0].d).map((q) => q[0]);
    expect(Math.max(...xs) - Math.min(...xs)).toBeGreaterThan(WIDTH - 2 * 6 - 1);
    expect(m.ruralInView).toBe(false);
    // the same features fitted with the ring's inner edge draw the city smaller
    const withEdge = drawMap([city, rural], { width: WIDTH, classes, formatValue: String, title: 't', fit: 'districts' });
    const xe = pathPoints(elements(withEdge.svg, 'path', 'hl-district')[0].d).map((q) => q[0]);
    expect(Math.max(...xe) - Math.min(...xe)).toBeLessThan(0.8 * (Math.max(...xs) - Math.min(...xs)));
  });

  it('leaves a reference far from the districts out of the view, and says so', () => {
    const far: MapFeature = { id: 'rural', name: 'rural reference', role: 'rural', geometry: box(-33.6, 44.18, -33.5, 44.26), value: null }; // about 160 km east
    const m = drawMap([city, far], { width: WIDTH, classes, formatValue: String, title: 't', fit: 'districts' });
    expect(m.ruralInView).toBe(false);
    const xs = pathPoints(elements(m.svg, 'path', 'hl-district')[0].d).map((q) => q[0]);
    expect(Math.max(...xs) - Math.min(...xs)).toBeGreaterThan(WIDTH - 2 * 6 - 1); // the city fills the width (6 px padding)
  });
});

describe('map labels', () => {
  // an invented U-shaped district: its centroid falls in the notch, outside the shape
  const U: MapFeature = { id: 'U', name: 'Upper Notch Gardens', role: 'district', value: 0.9, geometry: { type: 'Polygon', coordinates: [[
    [-35.66, 44.2], [-35.63, 44.2], [-35.63, 44.23], [-35.635, 44.23], [-35.635, 44.205], [-35.655, 44.205], [-35.655, 44.23], [-35.66, 44.23], [-35.66, 44.2],
  ]] } };
  const features = [U, ...FEATURES];
  const districts = features.filter((f) => f.role === 'district');
  const classes = colourClasses('diverging', districts.map((f) => f.value), 'K');
  const opts = { width: 1400, classes, formatValue: String, title: 't', spots: { A: 'hot' as const } };
  const drawn = drawMap(features, { ...opts, labels: true });
  const labelled = drawn.svg;
  /** The words of each label, its lines joined by a space, by district id. */
  const wordsOf = (svg: string) => new Map([...svg.matchAll(/<text class="hl-label[^"]*" data-id="(\w+)"[^>]*>(.*?)<\/text>/g)]
    .map((m) => [m[1], m[2].replace(/<title>.*?<\/title>/g, '').replace(/<tspan[^>]*>/g, ' ').replace(/<\/tspan>/g, '')]));
  /** Rings of a district's drawn path (M/L/Z commands), pixels. */
  const ringsOf = (d: string) => d.split(/Z/i).filter((x) => /\d/.test(x))
    .map((sub) => { const r = [...sub.matchAll(/(-?[\d.]+),(-?[\d.]+)/g)].map((m) => [Number(m[1]), Number(m[2])]); return [...r, r[0]]; });
  const labels = elements(labelled, 'text', 'hl-label"');

  it('are off unless asked for', () => {
    expect(elements(drawMap(features, opts).svg, 'text', 'hl-label"')).toHaveLength(0);
  });

  it('writes one label per district (none for the rural reference), with its name, escaped', () => {
    expect(labels.map((l) => l['data-id']).sort()).toEqual(districts.map((f) => f.id).sort());
    // at this size every name fits inside its district
    expect(drawn.key).toEqual([]);
    expect(Object.fromEntries(wordsOf(labelled))).toEqual({
      U: 'Upper Notch Gardens', A: 'Alder Quarter', B: 'Brook End', D: 'Dockside &#60;&#38;&#62;',
      C: 'Cinder Lane no data', // the district without a value says so under its name
    });
    expect((labelled.match(/>no data<\/tspan>/g) ?? []).length).toBe(1);
    expect(labelled).not.toMatch(/>no data<\/text>/);
  });

  it('puts each label inside its own district, also where the centroid is outside (point in polygon by @turf/turf)', () => {
    const paths = new Map(elements(labelled, 'path', 'hl-district').map((p) => [p['data-id'], p.d]));
    for (const l of labels) {
      const at = [Number(l['data-x']), Number(l['data-y'])];
      const poly = { type: 'Polygon' as const, coordinates: ringsOf(paths.get(l['data-id']) as string) };
      expect(booleanPointInPolygon(at, poly), l['data-id']).toBe(true);
      // and not in any other district
      for (const [id, d] of paths) if (id !== l['data-id']) expect(booleanPointInPolygon(at, { type: 'Polygon', coordinates: ringsOf(d) }), `${l['data-id']} in ${id}`).toBe(false);
    }
    // the check can fail: the U's own centroid (turf's mean of vertices, the same in lon/lat) lies outside it
    const c = turfCentroid({ type: 'Feature', properties: {}, geometry: U.geometry as never });
    expect(booleanPointInPolygon(c, U.geometry as never)).toBe(false);
  });

  it('puts the label of a concave district in its widest part, not near an edge', () => {
    // In the 1400 px drawing (0.22° of longitude) the U's arms are 0.005° wide, ~32 px, and its base
    // 0.005° of latitude tall, ~44 px: the point farthest from the edges lies mid-base, ~22 px from
    // the nearest edge, or mid-arm, ~16 px (Garcia-Castellanos & Lombardo 2007, pole of
    // inaccessibility; planar point-to-segment distance, common practice, no source).
    const paths = new Map(elements(labelled, 'path', 'hl-district').map((p) => [p['data-id'], p.d]));
    const u = labels.find((l) => l['data-id'] === 'U') as Record<string, string>;
    const ring = ringsOf(paths.get('U') as string)[0];
    const [x, y] = [Number(u['data-x']), Number(u['data-y'])];
    let nearest = Infinity;
    for (let i = 0; i + 1 < ring.length; i++) {
      const [ax, ay] = ring[i]; const [bx, by] = ring[i + 1];
      const t = Math.max(0, Math.min(1, ((x - ax) * (bx - ax) + (y - ay) * (by - ay)) / ((bx - ax) ** 2 + (by - ay) ** 2 || 1)));
      nearest = Math.min(nearest, Math.hypot(x - (ax + t * (bx - ax)), y - (ay + t * (by - ay))));
    }
    expect(nearest).toBeGreaterThan(12);
  });

  it('writes a number where a name does not fit, and the key names its district', () => {
    const small = drawMap(features, { ...opts, width: 300, labels: true });
    const words = wordsOf(small.svg);
    expect([...words.keys()].sort()).toEqual(districts.map((f) => f.id).sort());
    // at 300 px the U's arms are ~7 px wide: its name cannot sit inside it
    expect(small.key.map((k) => k.id)).toContain('U');
    expect(small.key.map((k) => k.label)).toEqual(small.key.map((_, i) => String(i + 1)));
    for (const [id, w] of words) {
      const f = districts.find((x) => x.id === id) as MapFeature;
      const k = small.key.find((x) => x.id === id);
      const text = k ? k.label : f.name.replace(/[&<>]/g, (c) => `&#${c.charCodeAt(0)};`);
      expect(w, id).toBe(f.value === null ? `${text} no data` : text);
      if (k) expect(k.name).toBe(f.name);
    }  });
});

describe('ranked bars', () => {
  it('orders bars by value with the largest first and puts no data last', () => {
    const classes = colourClasses('diverging', [1.7, -0.4, 3.2]);
    const { svg } = drawRankedBars(FEATURES.filter((f) => f.role === 'district'), { width: 500, classes, formatValue: (v) => String(v ?? 'no data'), title: 't', unit: 'K' });
    expect(elements(svg, 'g', 'hl-bar-row').map((g) => g['data-id'])).toEqual(['D', 'A', 'B', 'C']);
    const bars = elements(svg, 'rect', 'hl-bar');
    // a negative bar ends at the zero line, a positive one starts there
    const zero = Number(bars[0].x);
    expect(Number(bars[2].x) + Number(bars[2].width)).toBeCloseTo(zero, 0);
    expect(Number(bars[1].width) / Number(bars[0].width)).toBeCloseTo(1.7 / 3.2, 1);
  });
});

describe('series chart', () => {
  const years = [2016, 2017, 2018, 2019, 2020, 2021, 2022, 2023, 2024];
  const trend = { pivot_year: 2020, pivot_value: 2.5, slope_per_year: 0.09, slope_ci_lower: 0.04, slope_ci_upper: 0.13 };
  const { svg } = drawSeriesChart([
    { key: 'day', label: 'Day', points: years.map((y, i) => ({ year: y, value: 2 + 0.1 * i + (i % 2) * 0.2 })), trend, colour: '#b2182b', marker: 'circle' },
    { key: 'night', label: 'Night', points: years.map((y, i) => ({ year: y, value: i === 3 ? null : 1 + 0.02 * i })), trend: null, colour: '#2166ac', marker: 'square' },
  ], { width: 520, title: 't', unit: 'K', formatValue: String });

  it('draws one point per year with a value', () => {
    expect(elements(svg, 'circle', 'hl-point').map((c) => Number(c['data-year']))).toEqual(years);
    expect(elements(svg, 'rect', 'hl-point')).toHaveLength(years.length - 1);
  });

  it('draws the Sen line through the pivot with the slope given, and the band meets it there', () => {
    // Sen line value(y) = pivot_value + slope × (y − pivot_year) (Sen 1968; intercept through the medians, Conover 1980)
    const pts = elements(svg, 'circle', 'hl-point');
    // recover the chart's linear value → y mapping from two drawn points
    const [p, q] = [pts[0], pts[8]];
    const k = (Number(q.cy) - Number(p.cy)) / (Number(q['data-value']) - Number(p['data-value']));
    const vy = (v: number) => Number(p.cy) + (v - Number(p['data-value'])) * k;
    const kx = (Number(q.cx) - Number(p.cx)) / (2024 - 2016);
    const yx = (y: number) => Number(p.cx) + (y - 2016) * kx;
    const [line] = elements(svg, 'line', 'hl-sen');
    const x1 = Number(line.x1), y1 = Number(line.y1), x2 = Number(line.x2), y2 = Number(line.y2);
    const atPivot = y1 + ((yx(2020) - x1) / (x2 - x1)) * (y2 - y1);
    expect(atPivot).toBeCloseTo(vy(2.5), 0);
    expect((y2 - y1) / (x2 - x1)).toBeCloseTo((0.09 * k) / kx, 3);
    const [band] = elements(svg, 'polygon', 'hl-band');
    const corners = band.points.split(' ').map((s) => s.split(',').map(Number));
    expect(corners[1][0]).toBeCloseTo(yx(2020), 0);
    expect(corners[1][1]).toBeCloseTo(vy(2.5), 0);
    // at the last year the band spans the lower to the upper interval slope
    expect(corners[2][1]).toBeCloseTo(vy(2.5 + 0.13 * 4), 0);
    expect(corners[3][1]).toBeCloseTo(vy(2.5 + 0.04 * 4), 0);
  });
});

describe('series charts sharing one vertical scale', () => {
  const years = [2019, 2020, 2021, 2022, 2023];
  // two invented districts: one low and flat, one high and rising
  const low: ChartSeries[] = [{ key: 'night', label: 'Night', colour: '#2166ac', marker: 'circle', trend: null, points: years.map((y, i) => ({ year: y, value: 0.5 + 0.01 * i })) }];
  const high: ChartSeries[] = [{ key: 'night', label: 'Night', colour: '#2166ac', marker: 'circle', points: years.map((y, i) => ({ year: y, value: 4 + 0.3 * i })),
    trend: { pivot_year: 2021, pivot_value: 4.6, slope_per_year: 0.3, slope_ci_lower: 0.2, slope_ci_upper: 0.4 } }];
  const base = { width: 240, height: 170, title: 't', unit: '°C', formatValue: String };
  /** The value axis: [value, y of its grid line] per tick label (the label sits 4 px below the line). */
  const axis = (svg: string) => [...svg.matchAll(/<text x="46" y="([\d.-]+)" text-anchor="end"[^>]*>([^<]+)<\/text>/g)]
    .map((m) => [Number(m[2].replace('\u2212', '-')), Number(m[1]) - 4]);
  /** The drawn y of a value, from the first and last grid line. */
  const yOf = (svg: string) => {
    const t = axis(svg);
    const [[v0, y0], [v1, y1]] = [t[0], t[t.length - 1]];
    return (v: number) => y0 + ((v - v0) * (y1 - y0)) / (v1 - v0);
  };

  it('the extent covers the points and the Sen line with its band at both ends (value = pivot + slope × years; Sen 1968)', () => {
    expect(seriesValueExtent(low)).toEqual([0.5, 0.54]);
    const [lo, hi] = seriesValueExtent(high) as [number, number];
    expect(lo).toBeCloseTo(Math.min(4, 4.6 - 0.4 * 2), 12); // 2019 on the steepest interval line
    expect(hi).toBeCloseTo(4.6 + 0.4 * 2, 12); // 2023 on the steepest interval line
    expect(seriesValueExtent([])).toBeNull();
  });

  it('with a shared range, a value sits at the same height in every chart; without, each chart fills its own height', () => {
    const e = [seriesValueExtent(low), seriesValueExtent(high)] as [number, number][];
    const range: [number, number] = [Math.min(e[0][0], e[1][0]), Math.max(e[0][1], e[1][1])];
    const a = drawSeriesChart(low, { ...base, valueRange: range }).svg;
    const b = drawSeriesChart(high, { ...base, valueRange: range }).svg;
    expect(axis(a).length).toBeGreaterThan(2);
    expect(axis(a)).toEqual(axis(b));
    // each chart's points sit where that common axis puts their values
    for (const svg of [a, b]) {
      for (const c of elements(svg, 'circle', 'hl-point')) expect(Number(c.cy)).toBeCloseTo(yOf(svg)(Number(c['data-value'])), 0);
    }
    // without it, each chart spreads its own values over its height: a rise of 1 °C is far taller in the flat one
    const ownA = yOf(drawSeriesChart(low, base).svg);
    const ownB = yOf(drawSeriesChart(high, base).svg);
    expect((ownA(1) - ownA(2)) / (ownB(1) - ownB(2))).toBeGreaterThan(10);
  });

  it('a shared range narrower than a chart\'s own values widens to them (nothing drawn outside the frame)', () => {
    const svg = drawSeriesChart(high, { ...base, valueRange: [0, 1] }).svg;
    for (const c of elements(svg, 'circle', 'hl-point')) {
      expect(Number(c.cy)).toBeGreaterThanOrEqual(0);
      expect(Number(c.cy)).toBeLessThanOrEqual(170);
    }
  });
});

describe('trend sentence', () => {
  const base = { n: 12, alpha: 0.05, districts_tested: 24, note: null };
  it('says a rise and its interval when the change is more than chance', () => {
    expect(trendSentence('Night SUHI', 'K', { ...base, slope_per_decade: 0.91, slope_ci_lower_per_decade: 0.4, slope_ci_upper_per_decade: 1.3, direction: 'increasing' }))
      .toBe('Night SUHI rose by 0.9 K per decade (95 % interval 0.4 to 1.3); this is more than chance after accounting for the city\'s 24 districts.');
  });
  it('says a fall in the sense of the verb', () => {
    expect(trendSentence('Day LST', '\u00b0C', { ...base, slope_per_decade: -0.6, slope_ci_lower_per_decade: -1.1, slope_ci_upper_per_decade: -0.2, direction: 'decreasing' }))
      .toBe('Day LST fell by 0.6 \u00b0C per decade (95 % interval 0.2 to 1.1); this is more than chance after accounting for the city\'s 24 districts.');
  });
  it('says no trend can be told from chance', () => {
    expect(trendSentence('Night SUHI', 'K', { ...base, slope_per_decade: 0.2, slope_ci_lower_per_decade: -0.3, slope_ci_upper_per_decade: 0.6, direction: 'none' }))
      .toBe('No trend in night SUHI can be told from chance after accounting for the city\'s 24 districts (Sen slope 0.2 K per decade, 95 % interval \u22120.3 to 0.6).');
  });
  it('says when the series is too short', () => {
    expect(trendSentence('ATI', '1/K', { ...base, n: 3, slope_per_decade: null, slope_ci_lower_per_decade: null, slope_ci_upper_per_decade: null, direction: null, note: 'only 3 years with a value; a trend needs at least 4' }))
      .toBe('The series is too short to tell whether ATI is changing: only 3 years with a value; a trend needs at least 4.');
  });
});

describe('drawing modules stay pure', () => {
  it('touch no DOM and no browser globals (the report runs them in Node)', () => {
    const dir = join(ROOT, 'api', 'web', 'draw');
    const files = readdirSync(dir).filter((f) => f.endsWith('.ts'));
    expect(files.length).toBeGreaterThanOrEqual(7);
    for (const f of files) {
      const text = readFileSync(join(dir, f), 'utf8').replace(/\/\*[\s\S]*?\*\/|\/\/.*$/gm, '');
      expect(text, f).not.toMatch(/\b(document|window|globalThis|navigator|localStorage|fetch)\b/);
    }
  });
});
