/**
 * The district map as an SVG string: one filled path per district coloured by
 * its class, districts without a value hatched and labelled "no data", the
 * rural reference as a dashed outline, optional hot/cold spot outlines and a
 * selected district drawn on top, and on request each district's name written
 * inside it. Projection and path come from d3-geo (a
 * transverse Mercator centred on the area, conformal and nearly free of
 * distortion at city scale); nothing here touches a DOM.
 */
import type { Feature, FeatureCollection, Geometry } from 'geojson';
import { geoArea, geoContains, geoPath, geoTransverseMercator, type GeoProjection } from 'd3-geo';
import polylabel from 'polylabel';
import { classOf, type ColourClasses } from './palette.js';
import { attrs, esc, px } from './svg.js';

export interface MapFeature {
  id: string;
  name: string;
  role: 'district' | 'rural';
  /** GeoJSON geometry, lon/lat (RFC 7946). */
  geometry: Geometry | null;
  /** The value shown, in the unit shown; null = no data. */
  value: number | null;
}

export type SpotKind = 'hot' | 'cold' | 'none';

export interface MapOptions {
  /** Width of the drawing in px; the height follows the area's shape. */
  width: number;
  /** Largest height in px (a tall area is fitted into it). Default 1.2 × width. */
  maxHeight?: number;
  classes: ColourClasses;
  /** Text of a value for the hover title ("31.20 °C"). */
  formatValue: (value: number | null) => string;
  /** Accessible title of the whole map. */
  title: string;
  selectedId?: string | null;
  /** Hot and cold spots to outline, by district id. */
  spots?: Record<string, SpotKind>;
  /** Prefix of ids inside the SVG (pattern), unique per document. Default "hl". */
  idPrefix?: string;
  /**
   * Fit the view to the districts and the inner edge of the rural reference ('districts': the part
   * of its outline nearest the districts, see {@link ruralInnerEdge}; the rest of the reference is
   * drawn where it falls inside the view), to the districts alone ('districts-only': the largest
   * districts a page allows, as a printed report wants; the reference shows only where it falls
   * inside that view) or to all of it ('all', default).
   */
  fit?: 'districts' | 'districts-only' | 'all';
  /** Space around the fitted area as a fraction of the width (default 0; at least 6 px). */
  margin?: number;
  /**
   * Write each district's name inside it (true, or options); off by default. Each label sits at
   * the point of the district farthest from its edges, in black on a white halo.
   */
  labels?: boolean | MapLabelOptions;
}

export interface MapLabelOptions {
  /** Text of a district's label; default its name. */
  text?: (feature: MapFeature) => string;
  /** Font size in px (default 10). */
  fontSize?: number;
}

/** Where a district's label goes: a point inside it (px) and the distance from there to its nearest edge (px). */
export interface LabelPoint {
  x: number;
  y: number;
  clearance: number;
}

export interface DrawnMap {
  svg: string;
  width: number;
  height: number;
  /** With labels: the districts labelled by a number (their name did not fit), for a key beside the map. */
  key: LabelKeyEntry[];
  /** Whether part of the rural reference's outline lies in the view (a legend names it only then). */
  ruralInView: boolean;
}

/** A district labelled on the map by a number instead of its name. */
export interface LabelKeyEntry {
  id: string;
  name: string;
  /** The number written on the map. */
  label: string;
}

/** Stroke used for outlines and the hatch (dark grey, readable on every class colour). */
export const MAP_INK = '#2b2b2b';
/** Hot and cold spot outlines: told apart by line pattern (solid / dashed), not by colour; a white halo keeps them visible on every fill. */
export const SPOT_STYLE = {
  hot: { stroke: '#111111', width: 2.6, dash: null },
  cold: { stroke: '#111111', width: 2.6, dash: '6 3' },
} as const;
const HALO = '#ffffff';

/**
 * d3-geo takes polygons on the sphere with clockwise exterior rings (the
 * reverse of RFC 7946). A ring in the other order would mean "the whole globe
 * but this polygon": a feature whose spherical area exceeds a hemisphere has
 * its rings reversed (the usual d3 practice).
 */
export function forD3(feature: Feature<Geometry>): Feature<Geometry> {
  if (geoArea(feature) <= 2 * Math.PI) return feature;
  const g = feature.geometry;
  const rev = (rings: number[][][]) => rings.map((r) => [...r].reverse());
  if (g.type === 'Polygon') return { ...feature, geometry: { ...g, coordinates: rev(g.coordinates) } };
  if (g.type === 'MultiPolygon') return { ...feature, geometry: { ...g, coordinates: g.coordinates.map(rev) } };
  return feature;
}

/**
 * Texts on a white halo: the halo is each text again, through <use> (no second copy of the words
 * in the document), stroked white under the texts. A text drawn with both a stroke and a fill
 * (paint-order) becomes two text runs in a PDF printed by Chromium, so text extraction (pdftotext,
 * copy and paste, screen readers of the PDF) met every word twice; the halo group carries a filter
 * that changes nothing (an offset of 0), which makes the printer draw it as a picture, not as text.
 * `texts` are <text> elements with their ids; `style` the text attributes they share.
 */
function haloedTexts(prefix: string, kind: string, texts: readonly { id: string; svg: string }[], style: Record<string, string | number>): string[] {
  const ids = texts.map((t) => t.id);
  return [
    `<g${attrs({ class: `hl-halos hl-halos-${kind}`, 'aria-hidden': 'true', ...style, fill: HALO, stroke: HALO, 'stroke-width': 3, 'stroke-linejoin': 'round', filter: `url(#${prefix}-halo)`, 'pointer-events': 'none' })}>` +
      ids.map((id) => `<use${attrs({ href: `#${id}` })}/>`).join('') + '</g>',
    `<g${attrs({ class: kind === 'labels' ? 'hl-labels' : `hl-${kind}-labels`, ...style, 'pointer-events': 'none' })}>`,
    ...texts.map((t) => t.svg),
    '</g>',
  ];
}

/** Vertices of the interior rings (holes) of a polygon geometry, lon/lat. */
function holeVertices(g: Geometry): number[][] {
  return polygonsOf(g).flatMap((p) => p.slice(1).flat());
}

/** Every vertex of a polygon geometry (all rings), lon/lat. */
function verticesOf(g: Geometry): number[][] {
  if (g.type === 'Polygon') return g.coordinates.flat();
  if (g.type === 'MultiPolygon') return g.coordinates.flat(2);
  return [];
}

/** Distance from point p to the segment a-b (plane). */
function segmentDistance(p: [number, number], a: [number, number], b: [number, number]): number {
  const dx = b[0] - a[0], dy = b[1] - a[1];
  const len2 = dx * dx + dy * dy;
  const t = len2 === 0 ? 0 : Math.max(0, Math.min(1, ((p[0] - a[0]) * dx + (p[1] - a[1]) * dy) / len2));
  return Math.hypot(p[0] - (a[0] + t * dx), p[1] - (a[1] + t * dy));
}

/** Whether the segment a-b meets the box [0, w] × [0, h] (Liang & Barsky 1984 clipping). */
function segmentMeetsBox(a: [number, number], b: [number, number], w: number, h: number): boolean {
  const dx = b[0] - a[0], dy = b[1] - a[1];
  let t0 = 0, t1 = 1;
  for (const [p, q] of [[-dx, a[0]], [dx, w - a[0]], [-dy, a[1]], [dy, h - a[1]]]) {
    if (p === 0) { if (q < 0) return false; continue; }
    const r = q / p;
    if (p < 0) t0 = Math.max(t0, r); else t1 = Math.min(t1, r);
    if (t0 > t1) return false;
  }
  return true;
}

/** Whether any edge of a polygon geometry, projected, meets the box [0, w] × [0, h]. */
function outlineMeetsBox(g: Geometry, projection: GeoProjection, w: number, h: number): boolean {
  for (const polygon of polygonsOf(g)) {
    for (const ring of polygon) {
      const pts = ring.map((c) => projection(c as [number, number])).filter((xy): xy is [number, number] => xy !== null);
      for (let i = 1; i < pts.length; i++) if (segmentMeetsBox(pts[i - 1], pts[i], w, h)) return true;
    }
  }
  return false;
}

/**
 * How much farther than the nearest vertex a vertex of the inner edge may lie from the districts, as a
 * share: a buffered ring keeps one distance from the city up to the simplification of the outlines;
 * a quarter is our choice of room for that (it leaves out the far reaches of cuts across the ring).
 */
const INNER_EDGE_SLACK = 0.25;
/** A rural reference farther from the districts than this many times their extent is left out of view. */
const RURAL_REACH = 1.5;

/**
 * The vertices (lon/lat) of the rural reference's inner edge: those whose distance to the
 * districts' outlines is within {@link INNER_EDGE_SLACK} of the smallest such distance, measured
 * in the plane of `projection` (conformal, so in proportion to ground distance at city scale).
 * A ring built as a buffer of the city keeps its inner edge at one distance from it; this holds
 * whether that edge is a hole of the ring or, once water cut the ring open, part of an outer
 * ring; the vertices of its holes come too. Empty when the reference lies more than
 * {@link RURAL_REACH} times the districts' extent away.
 */
export function ruralInnerEdge(rural: readonly Geometry[], districts: readonly Geometry[], projection: GeoProjection): number[][] {
  const at = (c: number[]) => projection(c as [number, number]);
  const segments: [[number, number], [number, number]][] = [];
  let x0 = Infinity, y0 = Infinity, x1 = -Infinity, y1 = -Infinity;
  for (const g of districts) {
    for (const polygon of polygonsOf(g)) {
      for (const ring of polygon) {
        const pts = ring.map(at).filter((xy): xy is [number, number] => xy !== null);
        for (let i = 0; i < pts.length; i++) {
          const [x, y] = pts[i];
          x0 = Math.min(x0, x); y0 = Math.min(y0, y); x1 = Math.max(x1, x); y1 = Math.max(y1, y);
          if (i > 0) segments.push([pts[i - 1], pts[i]]);
        }
      }
    }
  }
  if (segments.length === 0) return [];
  const vertices = rural.flatMap(verticesOf)
    .map((c) => ({ c, xy: at(c) }))
    .filter((v): v is { c: number[]; xy: [number, number] } => v.xy !== null)
    .map((v) => ({ c: v.c, d: segments.reduce((m, [a, b]) => Math.min(m, segmentDistance(v.xy, a, b)), Infinity) }));
  if (vertices.length === 0) return [];
  const nearest = Math.min(...vertices.map((v) => v.d));
  if (nearest > RURAL_REACH * Math.max(x1 - x0, y1 - y0)) return [];
  // the holes of the reference (the city inside them) are inner edge whatever their distance
  return [...vertices.filter((v) => v.d <= nearest * (1 + INNER_EDGE_SLACK)).map((v) => v.c), ...rural.flatMap(holeVertices)];
}

/** Polygons of a geometry (a MultiPolygon's parts), lon/lat. */
function polygonsOf(g: Geometry): number[][][][] {
  if (g.type === 'Polygon') return [g.coordinates];
  if (g.type === 'MultiPolygon') return g.coordinates;
  return [];
}

/**
 * The label point of a district in drawing coordinates: the pole of inaccessibility (the
 * inside point farthest from every edge, found by polylabel's grid search; Garcia-Castellanos
 * & Lombardo 2007, "Poles of inaccessibility", Scottish Geographical Journal 123:227-233) of
 * the projected part that leaves the most room. Unlike the centroid, it lies inside concave
 * and ring-shaped districts. Null when nothing can be projected.
 */
export function labelPoint(geometry: Geometry, projection: GeoProjection): LabelPoint | null {
  let best: LabelPoint | null = null;
  for (const polygon of polygonsOf(geometry)) {
    const rings = polygon.map((ring) => ring.map((c) => projection(c as [number, number])).filter((xy): xy is [number, number] => xy !== null));
    if (rings.length === 0 || rings[0].length < 4) continue;
    const pole = polylabel(rings, 0.25);
    if (!Number.isFinite(pole[0]) || !Number.isFinite(pole[1])) continue;
    if (best === null || pole.distance > best.clearance) best = { x: pole[0], y: pole[1], clearance: pole.distance };
  }
  return best;
}

/** An axis-aligned box in drawing coordinates. */
interface Box { x0: number; y0: number; x1: number; y1: number }

/** The box a label's lines take around its point (widths estimated from the glyph width). */
function textBox(at: LabelPoint, lines: readonly string[], size: number, lineHeight: number): Box {
  const w = Math.max(...lines.map((l) => l.length)) * size * GLYPH_WIDTH;
  const h = lines.length * lineHeight;
  return { x0: at.x - w / 2, x1: at.x + w / 2, y0: at.y - h / 2, y1: at.y + h / 2 };
}

/** Corners, edge midpoints and centre of a box. */
function boxCorners(b: Box): [number, number][] {
  const xm = (b.x0 + b.x1) / 2;
  const ym = (b.y0 + b.y1) / 2;
  return [[b.x0, b.y0], [xm, b.y0], [b.x1, b.y0], [b.x1, ym], [b.x1, b.y1], [xm, b.y1], [b.x0, b.y1], [b.x0, ym], [xm, ym]];
}

const overlaps = (a: Box, b: Box) => a.x0 < b.x1 && b.x0 < a.x1 && a.y0 < b.y1 && b.y0 < a.y1;

/** Average glyph width of the sans-serif label font as a share of its size (common practice, no source). */
const GLYPH_WIDTH = 0.56;

/** A label's possible layouts: one line, then two (split at the space nearest the middle) when it has a space. */
export function labelLayouts(text: string): string[][] {
  const spaces = [...text.matchAll(/ /g)].map((m) => m.index as number);
  if (spaces.length === 0) return [[text]];
  const mid = text.length / 2;
  const at = spaces.reduce((x, y) => (Math.abs(y - mid) < Math.abs(x - mid) ? y : x));
  return [[text], [text.slice(0, at), text.slice(at + 1)]];
}

export function drawMap(features: readonly MapFeature[], o: MapOptions): DrawnMap {
  const p = o.idPrefix ?? 'hl';
  const drawable = features.filter((f) => f.geometry !== null);
  const asD3 = new Map(drawable.map((f) => [f.id, forD3({ type: 'Feature', properties: {}, geometry: f.geometry as Geometry })]));
  const districts = drawable.filter((f) => f.role !== 'rural');
  const fitTo = ((o.fit === 'districts' || o.fit === 'districts-only') && districts.length > 0 ? districts : drawable).map((f) => asD3.get(f.id) as Feature<Geometry>);
  const projection = geoTransverseMercator();
  // rotate so the central meridian runs through the middle of the area
  const centre = (c: FeatureCollection) => {
    const [[west], [east]] = geoPath().bounds(c);
    projection.rotate([-(west + east) / 2, 0]);
  };
  if (o.fit === 'districts-only' && districts.length > 0) centre({ type: 'FeatureCollection', features: [...fitTo] });
  if (o.fit === 'districts' && districts.length > 0) {
    // keep the inner edge of the rural reference in view (measured in the districts' own plane)
    centre({ type: 'FeatureCollection', features: [...fitTo] });
    const edge = ruralInnerEdge(drawable.filter((f) => f.role === 'rural').map((f) => f.geometry as Geometry), districts.map((f) => f.geometry as Geometry), projection);
    if (edge.length > 0) fitTo.push({ type: 'Feature', properties: {}, geometry: { type: 'MultiPoint', coordinates: edge } });
  }
  const collection: FeatureCollection = { type: 'FeatureCollection', features: fitTo };

  const width = Math.max(50, o.width);
  const pad = Math.max(6, Math.min(0.3, o.margin ?? 0) * width);
  const maxHeight = o.maxHeight ?? width * 1.2;
  centre(collection);
  projection.fitWidth(width - 2 * pad, collection);
  let path = geoPath(projection).digits(1);
  let [[x0, y0], [x1, y1]] = path.bounds(collection);
  if (y1 - y0 > maxHeight - 2 * pad) {
    projection.fitSize([width - 2 * pad, maxHeight - 2 * pad], collection);
    path = geoPath(projection).digits(1);
    [[x0, y0], [x1, y1]] = path.bounds(collection);
  }
  const height = Math.ceil(Math.max(40, y1 - y0 + 2 * pad));
  // centre the drawing in the box
  const [tx, ty] = projection.translate();
  projection.translate([tx + (width - (x1 - x0)) / 2 - x0, ty + (height - (y1 - y0)) / 2 - y0]);
  path = geoPath(projection).digits(1);

  const d = (id: string) => path(asD3.get(id) as Feature<Geometry>) ?? '';
  const hatch = `${p}-nodata`;
  const parts: string[] = [];
  parts.push(
    `<svg xmlns="http://www.w3.org/2000/svg"${attrs({ viewBox: `0 0 ${width} ${height}`, width, height, role: 'img', 'aria-labelledby': `${p}-map-title`, class: 'hl-map' })}>`,
    `<title id="${esc(p)}-map-title">${esc(o.title)}</title>`,
    `<defs><pattern id="${esc(hatch)}" width="6" height="6" patternUnits="userSpaceOnUse" patternTransform="rotate(45)">` +
      `<rect width="6" height="6" fill="#ffffff"/><line x1="0" y1="0" x2="0" y2="6" stroke="#6b6b6b" stroke-width="2"/></pattern>` +
      `<filter id="${esc(p)}-halo"><feOffset dx="0" dy="0"/></filter></defs>`,
  );

  const rural = drawable.filter((f) => f.role === 'rural');
  for (const f of rural) {
    parts.push(`<path${attrs({ class: 'hl-rural', 'data-id': f.id, d: d(f.id), fill: 'none', stroke: '#5a5a5a', 'stroke-width': 1.2, 'stroke-dasharray': '5 4' })}><title>${esc(`${f.name}: rural reference (outline)`)}</title></path>`);
  }

  parts.push('<g class="hl-districts">');
  for (const f of districts) {
    const cls = classOf(o.classes, f.value);
    const fill = cls === null ? `url(#${hatch})` : o.classes.colours[cls];
    parts.push(
      `<path${attrs({ class: 'hl-district', 'data-id': f.id, 'data-class': cls === null ? 'none' : cls, d: d(f.id), fill, stroke: MAP_INK, 'stroke-width': 0.8, 'stroke-linejoin': 'round', tabindex: -1 })}>` +
        `<title>${esc(`${f.name}: ${o.formatValue(f.value)}`)}</title></path>`,
    );
  }
  parts.push('</g>');

  // "no data" written on the districts that have no value (with labels on, under the name instead)
  const noDataTexts: { id: string; svg: string }[] = [];
  for (const f of o.labels ? [] : districts.filter((x) => classOf(o.classes, x.value) === null)) {
    const at = labelPoint(f.geometry as Geometry, projection);
    const [cx, cy] = at ? [at.x, at.y] : path.centroid(asD3.get(f.id) as Feature<Geometry>);
    if (!Number.isFinite(cx) || !Number.isFinite(cy)) continue;
    const id = `${p}-nodata-${noDataTexts.length}`;
    noDataTexts.push({ id, svg: `<text${attrs({ class: 'hl-nodata-label', id, x: px(cx), y: px(cy), 'dominant-baseline': 'middle' })}>no data</text>` });
  }
  if (noDataTexts.length) parts.push(...haloedTexts(p, 'nodata', noDataTexts, { 'font-size': 10, 'text-anchor': 'middle', fill: '#1a1a1a' }));

  if (o.spots) {
    parts.push('<g class="hl-spots" pointer-events="none">');
    for (const f of districts) {
      const kind = o.spots[f.id];
      if (kind !== 'hot' && kind !== 'cold') continue;
      const s = SPOT_STYLE[kind];
      parts.push(`<path${attrs({ class: 'hl-spot-halo', d: d(f.id), fill: 'none', stroke: HALO, 'stroke-width': s.width + 2.4, 'stroke-linejoin': 'round' })}/>`);
      parts.push(`<path${attrs({ class: `hl-spot hl-spot-${kind}`, 'data-id': f.id, 'data-spot': kind, d: d(f.id), fill: 'none', stroke: s.stroke, 'stroke-width': s.width, 'stroke-dasharray': s.dash, 'stroke-linejoin': 'round' })}/>`);
    }
    parts.push('</g>');
  }

  const key: LabelKeyEntry[] = [];
  if (o.labels) {
    const lo: MapLabelOptions = o.labels === true ? {} : o.labels;
    const size = lo.fontSize ?? 10;
    const lineHeight = size * 1.1;
    // the districts with the most room are labelled first; a name that would leave its district
    // or cover a label already placed becomes a number, explained in the key
    const placed: Box[] = [];
    const spots = districts
      .map((f) => ({ f, at: labelPoint(f.geometry as Geometry, projection) }))
      .filter((x): x is { f: MapFeature; at: LabelPoint } => x.at !== null)
      .sort((a, b) => b.at.clearance - a.at.clearance);
    const labelled: { f: MapFeature; at: LabelPoint; lines: string[]; numbered: boolean }[] = [];
    for (const { f, at } of spots) {
      const feature = asD3.get(f.id) as Feature<Geometry>;
      const fits = (box: Box) => !placed.some((b) => overlaps(b, box)) && boxCorners(box).every((c) => {
        const ll = projection.invert?.(c);
        return ll !== null && ll !== undefined && geoContains(feature, ll);
      });
      const layouts = labelLayouts(lo.text ? lo.text(f) : f.name).map((lines) => (classOf(o.classes, f.value) === null ? [...lines, 'no data'] : lines));
      // each layout at the pole first, then slid sideways or up and down by a little (a long
      // name may fit along an arm of the district whose roomiest point is at a bend)
      let chosen: { lines: string[]; at: LabelPoint } | null = null;
      for (const lines of layouts) {
        const w = textBox(at, lines, size, lineHeight);
        const dx = (w.x1 - w.x0) / 4;
        for (const [ox, oy] of [[0, 0], [dx, 0], [-dx, 0], [2 * dx, 0], [-2 * dx, 0], [0, lineHeight], [0, -lineHeight]]) {
          const moved = { ...at, x: at.x + ox, y: at.y + oy };
          if (fits(textBox(moved, lines, size, lineHeight))) { chosen = { lines, at: moved }; break; }
        }
        if (chosen) break;
      }
      if (chosen) placed.push(textBox(chosen.at, chosen.lines, size, lineHeight));
      labelled.push({ f, at: chosen?.at ?? at, lines: chosen?.lines ?? [], numbered: !chosen });
    }
    // numbers in reading order (top to bottom, then left to right), so the key is easy to follow
    const numbered = labelled.filter((l) => l.numbered).sort((a, b) => a.at.y - b.at.y || a.at.x - b.at.x);
    numbered.forEach((l, i) => {
      const n = String(i + 1);
      l.lines = classOf(o.classes, l.f.value) === null ? [n, 'no data'] : [n];
      key.push({ id: l.f.id, name: l.f.name, label: n });
    });
    const texts = labelled.sort((a, b) => districts.indexOf(a.f) - districts.indexOf(b.f)).map(({ f, at, lines, numbered: isNumber }, i) => {
      // lines centred on the label point; a baseline sits about 0.35 em below the middle of its line
      const first = at.y - ((lines.length - 1) * lineHeight) / 2 + size * 0.35;
      const id = `${p}-label-${i}`;
      return { id, svg: `<text${attrs({ class: isNumber ? 'hl-label hl-label-number' : 'hl-label', 'data-id': f.id, id, 'data-x': px(at.x), 'data-y': px(at.y), x: px(at.x), y: px(first) })}>` +
        lines.map((line, k) => (k === 0 ? esc(line) : `<tspan${attrs({ x: px(at.x), dy: px(lineHeight) })}>${esc(line)}</tspan>`)).join('') +
        `<title>${esc(f.name)}</title></text>` };
    });
    parts.push(...haloedTexts(p, 'labels', texts, { 'font-size': size, 'font-weight': 600, 'text-anchor': 'middle', fill: '#111111' }));
  }

  if (o.selectedId) {
    const sel = districts.find((f) => f.id === o.selectedId);
    if (sel) {
      // the selected district: a yellow line on a black band, unlike the black spot outlines
      parts.push(`<path${attrs({ class: 'hl-selected', 'data-id': sel.id, d: d(sel.id), fill: 'none', stroke: '#000000', 'stroke-width': 5.5, 'stroke-linejoin': 'round', 'pointer-events': 'none' })}/>`);
      parts.push(`<path${attrs({ class: 'hl-selected-inner', d: d(sel.id), fill: 'none', stroke: '#ffe14d', 'stroke-width': 2.2, 'stroke-linejoin': 'round', 'pointer-events': 'none' })}/>`);
    }
  }
  parts.push('</svg>');
  const ruralInView = rural.some((f) => outlineMeetsBox(f.geometry as Geometry, projection, width, height));
  return { svg: parts.join('\n'), width, height, key, ruralInView };
}
