/**
 * The map legend as an SVG string: one swatch per colour class with its range
 * in the unit shown, and the hatched "no data" swatch. Swatches carry
 * `data-class` (the same index the map's paths carry) so a reader or a test
 * can match a district's fill to its class.
 */
import type { ColourClasses } from './palette.js';
import { attrs, esc } from './svg.js';

export interface LegendOptions {
  /** Heading above the swatches, e.g. "Night SUHI, K". */
  title: string;
  /** A line under the heading, e.g. "below 0 = cooler than the rural reference". */
  note?: string;
  /** Show the hatched "no data" swatch (default true). */
  noData?: boolean;
  /** Show the dashed outline of the rural reference (default false). */
  rural?: boolean;
  /** Prefix of ids inside the SVG, unique per document. Default "hl-legend". */
  idPrefix?: string;
  /** Width in px (default 220). */
  width?: number;
}

const ROW = 20;
const SWATCH = 14;

export function drawLegend(classes: ColourClasses, o: LegendOptions): { svg: string; width: number; height: number } {
  const p = o.idPrefix ?? 'hl-legend';
  const width = o.width ?? 220;
  const top = o.note ? 38 : 22;
  const rows: { key: string; colour: string | null; label: string }[] = classes.colours.map((colour, i) => ({ key: String(i), colour, label: classes.labels[i] }));
  if (o.noData !== false) rows.push({ key: 'none', colour: null, label: 'no data' });
  if (o.rural) rows.push({ key: 'rural', colour: 'none', label: 'rural reference (outline)' });
  const height = top + rows.length * ROW + 4;
  const hatch = `${p}-nodata`;
  const out: string[] = [
    `<svg xmlns="http://www.w3.org/2000/svg"${attrs({ viewBox: `0 0 ${width} ${height}`, width, height, role: 'img', 'aria-labelledby': `${p}-title`, class: 'hl-legend' })}>`,
    `<title id="${esc(p)}-title">${esc(`Legend: ${o.title}`)}</title>`,
    `<defs><pattern id="${esc(hatch)}" width="6" height="6" patternUnits="userSpaceOnUse" patternTransform="rotate(45)">` +
      `<rect width="6" height="6" fill="#ffffff"/><line x1="0" y1="0" x2="0" y2="6" stroke="#6b6b6b" stroke-width="2"/></pattern></defs>`,
    `<text x="0" y="14" font-size="13" font-weight="600" fill="#1a1a1a">${esc(o.title)}</text>`,
  ];
  if (o.note) out.push(`<text x="0" y="30" font-size="11" fill="#444444">${esc(o.note)}</text>`);
  rows.forEach((r, i) => {
    const y = top + i * ROW;
    if (r.key === 'rural') {
      out.push(`<g class="hl-legend-row" data-class="rural"><line${attrs({ x1: 0, x2: SWATCH + 1, y1: y + SWATCH / 2, y2: y + SWATCH / 2, stroke: '#5a5a5a', 'stroke-width': 1.5, 'stroke-dasharray': '5 4' })}/>` +
        `<text${attrs({ x: SWATCH + 8, y: y + SWATCH - 2, 'font-size': 12, fill: '#1a1a1a' })}>${esc(r.label)}</text></g>`);
      return;
    }
    out.push(
      `<g class="hl-legend-row"${attrs({ 'data-class': r.key })}>` +
        `<rect${attrs({ class: 'hl-swatch', 'data-class': r.key, x: 0.5, y: y + 0.5, width: SWATCH, height: SWATCH, fill: r.colour ?? `url(#${hatch})`, stroke: '#2b2b2b', 'stroke-width': 0.8 })}/>` +
        `<text${attrs({ x: SWATCH + 8, y: y + SWATCH - 2, 'font-size': 12, fill: '#1a1a1a' })}>${esc(r.label)}</text></g>`,
    );
  });
  out.push('</svg>');
  return { svg: out.join('\n'), width, height };
}
