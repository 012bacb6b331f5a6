/**
 * A ranked bar chart as an SVG string: one horizontal bar per district,
 * largest value on top, bars growing from zero (left for negative values),
 * coloured by the same classes as the map.
 */
import { ticks } from 'd3-array';
import { colourOf, type ColourClasses } from './palette.js';
import { attrs, esc, formatNumber, decimalsFor, px } from './svg.js';

export interface BarRow {
  id: string;
  name: string;
  /** Value in the unit shown; rows without a value are listed last with "no data". */
  value: number | null;
}

export interface BarOptions {
  width: number;
  classes: ColourClasses;
  formatValue: (value: number | null) => string;
  /** Accessible title, e.g. "Night SUHI by district, 2024". */
  title: string;
  /** Unit label of the axis ("K"). */
  unit: string;
  /** Largest value first (default) or smallest first. */
  order?: 'desc' | 'asc';
}

const ROW = 20;
const BAR = 13;

export function drawRankedBars(rows: readonly BarRow[], o: BarOptions): { svg: string; width: number; height: number } {
  const order = o.order ?? 'desc';
  const withValue = rows.filter((r) => r.value !== null && Number.isFinite(r.value));
  const sorted = [...withValue].sort((a, b) => (order === 'desc' ? (b.value as number) - (a.value as number) : (a.value as number) - (b.value as number)));
  const all = [...sorted, ...rows.filter((r) => !withValue.includes(r))];
  const width = Math.max(200, o.width);
  const labelW = Math.min(170, Math.round(width * 0.36));
  const valueW = 64;
  const x0 = labelW + 6;
  const x1 = width - valueW;
  const vals = withValue.map((r) => r.value as number);
  const lo = Math.min(0, ...vals);
  const hi = Math.max(0, ...vals);
  const span = hi - lo || 1;
  const sx = (v: number) => x0 + ((v - lo) / span) * (x1 - x0);
  const top = 8;
  const axisY = top + all.length * ROW + 4;
  const height = axisY + 22;
  const out: string[] = [
    `<svg xmlns="http://www.w3.org/2000/svg"${attrs({ viewBox: `0 0 ${width} ${height}`, width, height, role: 'img', class: 'hl-bars' })}>`,
    `<title>${esc(o.title)}</title>`,
  ];
  all.forEach((r, i) => {
    const y = top + i * ROW;
    const label = r.name.length > 24 ? `${r.name.slice(0, 23)}…` : r.name;
    out.push(`<g class="hl-bar-row"${attrs({ 'data-id': r.id })}>`);
    out.push(`<text${attrs({ x: labelW, y: y + BAR - 2, 'text-anchor': 'end', 'font-size': 12, fill: '#1a1a1a' })}>${esc(label)}</text>`);
    if (r.value !== null && Number.isFinite(r.value)) {
      const a = sx(Math.min(0, r.value));
      const b = sx(Math.max(0, r.value));
      out.push(`<rect${attrs({ class: 'hl-bar', 'data-value': r.value, x: px(a), y, width: px(Math.max(0.5, b - a)), height: BAR, fill: colourOf(o.classes, r.value) ?? '#cccccc', stroke: '#2b2b2b', 'stroke-width': 0.5 })}><title>${esc(`${r.name}: ${o.formatValue(r.value)}`)}</title></rect>`);
    }
    out.push(`<text${attrs({ x: width - 2, y: y + BAR - 2, 'text-anchor': 'end', 'font-size': 12, fill: '#1a1a1a' })}>${esc(o.formatValue(r.value))}</text>`);
    out.push('</g>');
  });
  // zero line and a few ticks
  out.push(`<line${attrs({ x1: px(sx(0)), x2: px(sx(0)), y1: top - 4, y2: axisY, stroke: '#1a1a1a', 'stroke-width': 1 })}/>`);
  const t = ticks(lo, hi, 4);
  const dec = t.length > 1 ? decimalsFor(t[1] - t[0]) : 1;
  for (const v of t) {
    out.push(`<line${attrs({ x1: px(sx(v)), x2: px(sx(v)), y1: axisY, y2: axisY + 4, stroke: '#1a1a1a' })}/>`);
    out.push(`<text${attrs({ x: px(sx(v)), y: axisY + 16, 'text-anchor': 'middle', 'font-size': 11, fill: '#333333' })}>${esc(formatNumber(v, dec))}</text>`);
  }
  out.push(`<text${attrs({ x: x1, y: axisY + 16, 'text-anchor': 'start', 'font-size': 11, fill: '#333333', dx: 6 })}>${esc(o.unit)}</text>`);
  out.push('</svg>');
  return { svg: out.join('\n'), width, height };
}
