/**
 * The district map as an SVG string: one filled path per district coloured by
 * its class, districts without a value hatched and labelled "no data", the
 * rural reference as a dashed outline, optional hot/cold spot outlines and a
 * selected district drawn on top. Projection and path come from d3-geo (a
 * transverse Mercator centred on the area, conformal and nearly free of
 * distortion at city scale); nothing here touches a DOM.
 */
import type { Feature, FeatureCollection, Geometry } from 'geojson';
import { geoArea, geoPath, geoTransverseMercator } from 'd3-geo';
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
   * Fit the view to the districts and the inner edge of the rural reference ('districts'; the
   * rest of the reference is drawn where it falls inside the view) or to all of it ('all', default).
   */
  fit?: 'districts' | 'all';
  /** Space around the fitted area as a fraction of the width (default 0; at least 6 px). */
  margin?: number;
}

export interface DrawnMap {
  svg: string;
  width: number;
  height: number;
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

/** Vertices of the interior rings (holes) of a polygon geometry, lon/lat. */
function innerRingVertices(g: Geometry): number[][] {
  if (g.type === 'Polygon') return g.coordinates.slice(1).flat();
  if (g.type === 'MultiPolygon') return g.coordinates.flatMap((p) => p.slice(1).flat());
  return [];
}

export function drawMap(features: readonly MapFeature[], o: MapOptions): DrawnMap {
  const p = o.idPrefix ?? 'hl';
  const drawable = features.filter((f) => f.geometry !== null);
  const asD3 = new Map(drawable.map((f) => [f.id, forD3({ type: 'Feature', properties: {}, geometry: f.geometry as Geometry })]));
  const districts = drawable.filter((f) => f.role !== 'rural');
  const fitTo = (o.fit === 'districts' && districts.length > 0 ? districts : drawable).map((f) => asD3.get(f.id) as Feature<Geometry>);
  if (o.fit === 'districts' && districts.length > 0) {
    // keep the inner edge of the rural reference in view: the vertices of its holes
    const holes = drawable.filter((f) => f.role === 'rural').flatMap((f) => innerRingVertices(f.geometry as Geometry));
    if (holes.length > 0) fitTo.push({ type: 'Feature', properties: {}, geometry: { type: 'MultiPoint', coordinates: holes } });
  }
  const collection: FeatureCollection = { type: 'FeatureCollection', features: fitTo };

  const width = Math.max(50, o.width);
  const pad = Math.max(6, Math.min(0.3, o.margin ?? 0) * width);
  const maxHeight = o.maxHeight ?? width * 1.2;
  const projection = geoTransverseMercator();
  // rotate so the central meridian runs through the middle of the area
  const [[west], [east]] = geoPath().bounds(collection);
  projection.rotate([-(west + east) / 2, 0]);
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
      `<rect width="6" height="6" fill="#ffffff"/><line x1="0" y1="0" x2="0" y2="6" stroke="#6b6b6b" stroke-width="2"/></pattern></defs>`,
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

  // "no data" written on the districts that have no value
  for (const f of districts.filter((x) => classOf(o.classes, x.value) === null)) {
    const [cx, cy] = path.centroid(asD3.get(f.id) as Feature<Geometry>);
    if (!Number.isFinite(cx) || !Number.isFinite(cy)) continue;
    parts.push(`<text${attrs({ class: 'hl-nodata-label', x: px(cx), y: px(cy), 'text-anchor': 'middle', 'dominant-baseline': 'middle', 'font-size': 10, fill: '#1a1a1a', stroke: '#ffffff', 'stroke-width': 3, 'paint-order': 'stroke', 'pointer-events': 'none' })}>no data</text>`);
  }

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

  if (o.selectedId) {
    const sel = districts.find((f) => f.id === o.selectedId);
    if (sel) {
      // the selected district: a yellow line on a black band, unlike the black spot outlines
      parts.push(`<path${attrs({ class: 'hl-selected', 'data-id': sel.id, d: d(sel.id), fill: 'none', stroke: '#000000', 'stroke-width': 5.5, 'stroke-linejoin': 'round', 'pointer-events': 'none' })}/>`);
      parts.push(`<path${attrs({ class: 'hl-selected-inner', d: d(sel.id), fill: 'none', stroke: '#ffe14d', 'stroke-width': 2.2, 'stroke-linejoin': 'round', 'pointer-events': 'none' })}/>`);
    }
  }
  parts.push('</svg>');
  return { svg: parts.join('\n'), width, height };
}
