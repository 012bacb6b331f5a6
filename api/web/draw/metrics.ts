/**
 * The five district metrics the API answers (`metric=` of /api/districts,
 * /api/rankings, /api/hotspots and the series route), their plain labels and
 * units, and the one conversion between kelvin and degrees Celsius.
 *
 * Absolute temperatures (LST) shift by 273.15 between K and °C; differences
 * (SUHI, slopes, intervals) are the same number in K and in °C; ATI is per
 * kelvin, which is the same as per degree Celsius.
 */

export const METRIC_NAMES = ['lst_day', 'lst_night', 'suhi_day', 'suhi_night', 'ati'] as const;
export type MetricName = (typeof METRIC_NAMES)[number];

/** How temperatures are shown: kelvin or degrees Celsius. */
export type TemperatureUnit = 'K' | 'C';

export interface MetricInfo {
  name: MetricName;
  /** Property of a district feature (and CSV column) holding the metric. */
  field: 'lst_day_k' | 'lst_night_k' | 'suhi_day_k' | 'suhi_night_k' | 'ati_per_k';
  /** Plain label for controls and headings. */
  label: string;
  /** Short label for sentences and narrow table headers ("Night SUHI"). */
  short: string;
  /** absolute: a temperature; difference: district minus rural reference; inertia: ATI. */
  kind: 'absolute' | 'difference' | 'inertia';
  /** Palette family: diverging around zero for differences, sequential otherwise. */
  palette: 'diverging' | 'sequential-heat' | 'sequential-inertia';
}

export const METRICS: Record<MetricName, MetricInfo> = {
  lst_day: { name: 'lst_day', field: 'lst_day_k', label: 'Surface temperature by day', short: 'Day LST', kind: 'absolute', palette: 'sequential-heat' },
  lst_night: { name: 'lst_night', field: 'lst_night_k', label: 'Surface temperature at night', short: 'Night LST', kind: 'absolute', palette: 'sequential-heat' },
  suhi_day: { name: 'suhi_day', field: 'suhi_day_k', label: 'Heat island by day (district minus rural)', short: 'Day SUHI', kind: 'difference', palette: 'diverging' },
  suhi_night: { name: 'suhi_night', field: 'suhi_night_k', label: 'Heat island at night (district minus rural)', short: 'Night SUHI', kind: 'difference', palette: 'diverging' },
  ati: { name: 'ati', field: 'ati_per_k', label: 'Heat-holding (apparent thermal inertia)', short: 'ATI', kind: 'inertia', palette: 'sequential-inertia' },
};

/** Kelvin to degrees Celsius: T(°C) = T(K) − 273.15 (BIPM, SI Brochure, 9th ed. 2019, §2.3.1). */
export const KELVIN_AT_ZERO_CELSIUS = 273.15;

export function isMetricName(v: unknown): v is MetricName {
  return typeof v === 'string' && (METRIC_NAMES as readonly string[]).includes(v);
}

/** Unit label of a metric's values as shown: "K", "°C" or "1/K". */
export function unitLabel(metric: MetricName, unit: TemperatureUnit): string {
  if (METRICS[metric].kind === 'inertia') return '1/K';
  return unit === 'C' ? '\u00b0C' : 'K';
}

/** A stored value (kelvin, or 1/K for ATI) in the unit shown; null stays null. */
export function toDisplay(metric: MetricName, value: number | null | undefined, unit: TemperatureUnit): number | null {
  if (value === null || value === undefined || !Number.isFinite(value)) return null;
  return METRICS[metric].kind === 'absolute' && unit === 'C' ? value - KELVIN_AT_ZERO_CELSIUS : value;
}

/** Decimals a value of the metric is shown with (0.01 K; ATI by significant digits in formatValue). */
export function formatValue(metric: MetricName, displayValue: number | null): string {
  if (displayValue === null || !Number.isFinite(displayValue)) return 'no data';
  if (METRICS[metric].kind === 'inertia') return displayValue.toPrecision(3).replace(/^-/, '\u2212');
  const s = displayValue.toFixed(2);
  if (/^-0\.00$/.test(s)) return '0.00';
  return s.startsWith('-') ? `\u2212${s.slice(1)}` : s;
}
