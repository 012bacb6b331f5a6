/**
 * The yearly series chart as an SVG string: one point per year for each
 * series (day and night), the Sen-slope line through the trend's pivot
 * (value(y) = pivot_value + slope_per_year × (y − pivot_year); Sen 1968, with
 * the intercept through the medians as in Conover 1980) and the slope
 * interval as a band: the lines of the lower and upper interval slopes
 * through the same pivot, which meet at the pivot.
 */
import { ticks } from 'd3-array';
import { attrs, decimalsFor, esc, formatNumber, px } from './svg.js';

export interface SeriesPoint {
  year: number;
  /** Value in the unit shown; null = no value that year (no point drawn). */
  value: number | null;
  /** Left out of the trend (e.g. too few clear dates): drawn faint, with a note in its title. */
  leftOut?: boolean;
}

/** The part of a trend result the chart draws (all in the unit shown, slopes per year). */
export interface SenLine {
  pivot_year: number | null;
  pivot_value: number | null;
  slope_per_year: number | null;
  slope_ci_lower: number | null;
  slope_ci_upper: number | null;
}

export interface ChartSeries {
  key: string;
  label: string;
  points: readonly SeriesPoint[];
  trend: SenLine | null;
  /** Colour of points and line. */
  colour: string;
  /** Marker: filled circle or open square (told apart without colour). */
  marker: 'circle' | 'square';
}

export interface SeriesChartOptions {
  width: number;
  height?: number;
  title: string;
  /** Unit label of the value axis. */
  unit: string;
  formatValue: (value: number | null) => string;
  /**
   * Lowest and highest value the vertical axis must show (unit shown), for small charts that
   * share one scale: give each the union of their `seriesValueExtent`. Default: this chart's own.
   */
  valueRange?: readonly [number, number];
}

/** Day and night colours: the dark ends of ColorBrewer RdBu (see palette.ts), told apart by marker too. */
export const SERIES_COLOURS = { day: '#b2182b', night: '#2166ac' } as const;

/** Value of the Sen line at a year, or null when the trend has no line. */
export function senLineAt(t: SenLine, year: number, slope: number | null = t.slope_per_year): number | null {
  if (t.pivot_year === null || t.pivot_value === null || slope === null) return null;
  return t.pivot_value + slope * (year - t.pivot_year);
}

function hasLine(t: SenLine | null): t is SenLine {
  return t !== null && t.pivot_year !== null && t.pivot_value !== null && t.slope_per_year !== null;
}

/** First and last year of the charted points (2000–2001 when there are none). */
function yearSpan(series: readonly ChartSeries[]): [number, number] {
  const years = series.flatMap((s) => s.points.map((p) => p.year));
  return years.length ? [Math.min(...years), Math.max(...years)] : [2000, 2001];
}

/**
 * Lowest and highest value a chart of these series draws: its points, and its Sen lines and
 * slope bands at the first and last year; null when there is nothing to draw.
 */
export function seriesValueExtent(series: readonly ChartSeries[]): [number, number] | null {
  const [yearLo, yearHi] = yearSpan(series);
  const values: number[] = [];
  for (const s of series) {
    for (const p of s.points) if (p.value !== null && Number.isFinite(p.value)) values.push(p.value);
    if (hasLine(s.trend)) {
      for (const y of [yearLo, yearHi]) {
        for (const slope of [s.trend.slope_per_year, s.trend.slope_ci_lower, s.trend.slope_ci_upper]) {
          const v = senLineAt(s.trend, y, slope);
          if (v !== null) values.push(v);
        }
      }
    }
  }
  return values.length ? [Math.min(...values), Math.max(...values)] : null;
}

export function drawSeriesChart(series: readonly ChartSeries[], o: SeriesChartOptions): { svg: string; width: number; height: number } {
  const width = Math.max(240, o.width);
  const height = o.height ?? Math.round(Math.min(320, Math.max(200, width * 0.55)));
  const m = { top: 28, right: 14, bottom: 34, left: 52 };
  const [yearLo, yearHi] = yearSpan(series);
  const own = seriesValueExtent(series);
  const given = o.valueRange && Number.isFinite(o.valueRange[0]) && Number.isFinite(o.valueRange[1]) ? o.valueRange : null;
  // a shared range still widens to this chart's own values, so nothing is drawn outside the frame
  let vLo = Math.min(given ? given[0] : Infinity, own ? own[0] : Infinity);
  let vHi = Math.max(given ? given[1] : -Infinity, own ? own[1] : -Infinity);
  if (!Number.isFinite(vLo) || !Number.isFinite(vHi)) { vLo = 0; vHi = 1; }
  if (vLo === vHi) { vLo -= 0.5; vHi += 0.5; }
  const padV = (vHi - vLo) * 0.06;
  vLo -= padV; vHi += padV;
  const spanYears = Math.max(1, yearHi - yearLo);
  const sx = (y: number) => m.left + ((y - yearLo + 0.5) / (spanYears + 1)) * (width - m.left - m.right);
  const sy = (v: number) => m.top + (1 - (v - vLo) / (vHi - vLo)) * (height - m.top - m.bottom);

  const out: string[] = [
    `<svg xmlns="http://www.w3.org/2000/svg"${attrs({ viewBox: `0 0 ${width} ${height}`, width, height, role: 'img', class: 'hl-series' })}>`,
    `<title>${esc(o.title)}</title>`,
  ];
  // value axis with grid lines
  const vt = ticks(vLo, vHi, 5);
  const dec = vt.length > 1 ? decimalsFor(vt[1] - vt[0]) : 1;
  for (const v of vt) {
    out.push(`<line${attrs({ x1: m.left, x2: width - m.right, y1: px(sy(v)), y2: px(sy(v)), stroke: v === 0 ? '#1a1a1a' : '#dddddd', 'stroke-width': 1 })}/>`);
    out.push(`<text${attrs({ x: m.left - 6, y: px(sy(v) + 4), 'text-anchor': 'end', 'font-size': 11, fill: '#333333' })}>${esc(formatNumber(v, dec))}</text>`);
  }
  out.push(`<text${attrs({ x: 4, y: 14, 'font-size': 11, fill: '#333333' })}>${esc(o.unit)}</text>`);
  // year axis: every year when few, else nice ticks
  const yt = spanYears <= 12 ? Array.from({ length: spanYears + 1 }, (_, i) => yearLo + i) : ticks(yearLo, yearHi, 8).filter(Number.isInteger);
  const axisY = height - m.bottom;
  out.push(`<line${attrs({ x1: m.left, x2: width - m.right, y1: axisY, y2: axisY, stroke: '#1a1a1a' })}/>`);
  const every = Math.ceil(yt.length / Math.max(1, Math.floor((width - m.left - m.right) / 38)));
  yt.forEach((y, i) => {
    out.push(`<line${attrs({ x1: px(sx(y)), x2: px(sx(y)), y1: axisY, y2: axisY + 4, stroke: '#1a1a1a' })}/>`);
    if (i % every === 0) out.push(`<text${attrs({ x: px(sx(y)), y: axisY + 17, 'text-anchor': 'middle', 'font-size': 11, fill: '#333333' })}>${y}</text>`);
  });

  // bands first, then lines, then points on top
  for (const s of series) {
    if (!hasLine(s.trend) || s.trend.slope_ci_lower === null || s.trend.slope_ci_upper === null) continue;
    const t = s.trend;
    const py = t.pivot_year as number;
    const pv = t.pivot_value as number;
    const at = (y: number) => [senLineAt(t, y, t.slope_ci_lower) as number, senLineAt(t, y, t.slope_ci_upper) as number];
    const [a0, b0] = at(yearLo);
    const [a1, b1] = at(yearHi);
    const poly = [
      [yearLo, Math.max(a0, b0)], [py, pv], [yearHi, Math.max(a1, b1)],
      [yearHi, Math.min(a1, b1)], [py, pv], [yearLo, Math.min(a0, b0)],
    ].map(([y, v]) => `${px(sx(y))},${px(sy(v))}`).join(' ');
    out.push(`<polygon${attrs({ class: 'hl-band', 'data-series': s.key, points: poly, fill: s.colour, 'fill-opacity': 0.16, stroke: 'none' })}><title>${esc(`${s.label}: interval of the slope`)}</title></polygon>`);
  }
  for (const s of series) {
    if (!hasLine(s.trend)) continue;
    const v0 = senLineAt(s.trend, yearLo) as number;
    const v1 = senLineAt(s.trend, yearHi) as number;
    out.push(`<line${attrs({ class: 'hl-sen', 'data-series': s.key, 'data-pivot-year': s.trend.pivot_year, 'data-pivot-value': s.trend.pivot_value, x1: px(sx(yearLo)), y1: px(sy(v0)), x2: px(sx(yearHi)), y2: px(sy(v1)), stroke: s.colour, 'stroke-width': 2, 'stroke-dasharray': s.marker === 'square' ? '6 3' : null })}><title>${esc(`${s.label}: Sen-slope line`)}</title></line>`);
  }
  for (const s of series) {
    for (const pt of s.points) {
      if (pt.value === null || !Number.isFinite(pt.value)) continue;
      const x = sx(pt.year);
      const y = sy(pt.value);
      const tip = `<title>${esc(`${s.label}, ${pt.year}: ${o.formatValue(pt.value)}${pt.leftOut ? ' (left out of the trend)' : ''}`)}</title>`;
      const common = { class: pt.leftOut ? 'hl-point hl-left-out' : 'hl-point', 'data-series': s.key, 'data-year': pt.year, 'data-value': pt.value, stroke: s.colour, 'stroke-width': 1.6, opacity: pt.leftOut ? 0.45 : null };
      out.push(s.marker === 'circle'
        ? `<circle${attrs({ ...common, cx: px(x), cy: px(y), r: 4, fill: pt.leftOut ? '#ffffff' : s.colour })}>${tip}</circle>`
        : `<rect${attrs({ ...common, x: px(x - 4), y: px(y - 4), width: 8, height: 8, fill: '#ffffff' })}>${tip}</rect>`);
    }
  }
  // key
  let kx = m.left;
  for (const s of series) {
    const marker = s.marker === 'circle'
      ? `<circle cx="${kx + 5}" cy="12" r="4" fill="${esc(s.colour)}" stroke="${esc(s.colour)}"/>`
      : `<rect x="${kx + 1}" y="8" width="8" height="8" fill="#ffffff" stroke="${esc(s.colour)}" stroke-width="1.6"/>`;
    out.push(`${marker}<text x="${kx + 14}" y="16" font-size="12" fill="#1a1a1a">${esc(s.label)}</text>`);
    kx += 22 + s.label.length * 7;
  }
  out.push('</svg>');
  return { svg: out.join('\n'), width, height };
}
