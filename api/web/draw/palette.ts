/**
 * Colour classes for the map, legend and bar chart.
 *
 * Colours are ColorBrewer schemes (Cynthia A. Brewer, Mark Harrower and The
 * Pennsylvania State University, colorbrewer2.org; Apache License 2.0) as
 * shipped by d3-scale-chromatic (ISC licence). All three are listed by
 * ColorBrewer as colour-blind safe:
 * - RdBu (diverging) for heat-island values: blue = cooler than the rural
 *   reference, red = warmer, the break between them exactly at zero;
 * - YlOrRd (sequential) for surface temperatures;
 * - YlGnBu (sequential) for apparent thermal inertia.
 * Districts without a value are hatched (see map.ts), never given a colour.
 *
 * Class breaks are in the unit shown, so the legend reads 30 to 32 °C rather
 * than 303.15 to 305.15 K converted. Sequential classes are quantile classes
 * (each holds about as many districts; common practice for choropleth maps of
 * skewed values, e.g. Slocum et al. 2009, "Thematic Cartography and
 * Geovisualization", ch. 5; from memory), with the quantiles of Hyndman & Fan
 * (1996) type 7 (d3-array's quantile, R's default) rounded to the fewest
 * decimals that keep them apart. Diverging classes are equal steps of a "nice"
 * size (d3-array's tickStep) on both sides of zero.
 */
import { quantile, tickStep } from 'd3-array';
import { schemeRdBu, schemeYlGnBu, schemeYlOrRd } from 'd3-scale-chromatic';
import { decimalsFor, formatNumber } from './svg.js';

export type PaletteFamily = 'diverging' | 'sequential-heat' | 'sequential-inertia';

export interface ColourClasses {
  family: PaletteFamily;
  /** Inner class boundaries, ascending; class i holds breaks[i-1] <= v < breaks[i] (first and last open). */
  breaks: number[];
  /** One colour per class (breaks.length + 1). */
  colours: string[];
  /** One legend label per class, in the unit shown. */
  labels: string[];
}

/** Most classes a legend shows (ColorBrewer sequential schemes go to 9). */
const MAX_CLASSES = 9;

const SEQUENTIAL: Record<Exclude<PaletteFamily, 'diverging'>, readonly (readonly string[])[]> = {
  'sequential-heat': schemeYlOrRd,
  'sequential-inertia': schemeYlGnBu,
};

/** `k` colours of a ColorBrewer scheme (schemes start at 3 colours; fewer take its lightest and darkest). */
function pick(scheme: readonly (readonly string[])[], k: number): string[] {
  if (k >= 3) return [...scheme[Math.min(k, scheme.length - 1)]];
  const three = scheme[3];
  return k === 1 ? [three[1]] : [three[0], three[2]];
}

function labelsFor(breaks: number[], decimals: number, unit: string): string[] {
  const f = (v: number) => formatNumber(v, decimals);
  const u = unit ? ` ${unit}` : '';
  if (breaks.length === 0) return [`all values${u}`];
  return [
    `below ${f(breaks[0])}${u}`,
    ...breaks.slice(1).map((b, i) => `${f(breaks[i])} to ${f(b)}${u}`),
    `${f(breaks[breaks.length - 1])}${u} and above`,
  ];
}

/** Decimals the labels need so that neighbouring breaks read differently. */
function decimalsOf(breaks: number[]): number {
  if (breaks.length < 2) return breaks.length === 1 ? decimalsFor(breaks[0]) : 0;
  return Math.max(...breaks.map(decimalsFor));
}

/**
 * Classes for a set of values (in the unit shown; nulls ignored).
 * Sequential: nice breaks inside [min, max]. Diverging: equal steps on both
 * sides of zero with zero always a break, colours centred on zero so the same
 * step has the same shade of blue or red.
 */
export function colourClasses(family: PaletteFamily, values: readonly (number | null)[], unit = ''): ColourClasses {
  const v = values.filter((x): x is number => x !== null && Number.isFinite(x));
  if (family === 'diverging') return divergingClasses(v, unit);
  const scheme = SEQUENTIAL[family];
  if (v.length === 0) return { family, breaks: [], colours: pick(scheme, 1), labels: labelsFor([], 0, unit) };
  const breaks = quantileBreaks(v, SEQUENTIAL_CLASSES);
  return { family, breaks, colours: pick(scheme, breaks.length + 1), labels: labelsFor(breaks, decimalsOf(breaks), unit) };
}

/** Classes of a sequential map (fewer when there are fewer distinct values). */
const SEQUENTIAL_CLASSES = 5;

/**
 * Inner breaks at the 1/k … (k−1)/k quantiles (type 7), rounded to the fewest
 * decimals (0–6) at which they stay strictly increasing inside (min, max];
 * breaks that coincide are merged, so ties give fewer classes.
 */
export function quantileBreaks(values: readonly number[], k: number): number[] {
  const lo = Math.min(...values);
  const hi = Math.max(...values);
  if (!(hi > lo)) return [];
  const raw = Array.from({ length: k - 1 }, (_, i) => quantile(values, (i + 1) / k) as number);
  for (let d = 0; d <= 6; d++) {
    const f = 10 ** d;
    const r = [...new Set(raw.map((q) => Math.round(q * f) / f))].filter((b) => b > lo && b <= hi);
    const distinctRaw = new Set(raw.filter((q) => q > lo)).size;
    if (r.length === distinctRaw && r.every((b, i) => i === 0 || b > r[i - 1])) return r;
  }
  return [...new Set(raw)].filter((b) => b > lo && b <= hi);
}

function divergingClasses(v: number[], unit: string): ColourClasses {
  const lo = Math.min(0, ...v);
  const hi = Math.max(0, ...v);
  const maxAbs = Math.max(-lo, hi);
  // about four steps on the longer side; zero data gives one step of 1 on each side
  const step = maxAbs > 0 ? tickStep(0, maxAbs, 4) : 1;
  const below = Math.max(1, Math.ceil(-lo / step - 1e-9));
  const above = Math.max(1, Math.ceil(hi / step + 1e-9) || 1);
  let side = Math.max(below, above);
  if (side > 5) side = 5; // RdBu goes to 11 colours; 10 classes keep zero a break
  const nBelow = Math.min(below, side);
  const nAbove = Math.min(above, side);
  // RdBu runs red → blue; reversed, blue (cooler) comes first. An even number of colours
  // (at least 4, so the lightest shades are not the neutral middle) splits at zero.
  const colours = [...schemeRdBu[2 * Math.max(2, side)]].reverse();
  const mid = colours.length / 2;
  const classColours = colours.slice(mid - nBelow, mid + nAbove);
  const breaks: number[] = [];
  for (let k = -nBelow + 1; k <= nAbove - 1; k++) breaks.push(Number((k * step).toFixed(10)));
  return { family: 'diverging', breaks, colours: classColours, labels: labelsFor(breaks, decimalsOf([...breaks, step]), unit) };
}

/** Class index of a value, or null for no value. */
export function classOf(classes: ColourClasses, value: number | null | undefined): number | null {
  if (value === null || value === undefined || !Number.isFinite(value)) return null;
  let i = 0;
  while (i < classes.breaks.length && value >= classes.breaks[i]) i++;
  return i;
}

/** Fill colour of a value, or null for no value (the caller hatches it). */
export function colourOf(classes: ColourClasses, value: number | null | undefined): string | null {
  const i = classOf(classes, value);
  return i === null ? null : classes.colours[i];
}
