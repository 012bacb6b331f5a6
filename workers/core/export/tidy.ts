/**
 * Shaping of the exported tables and of the district GeoJSON, pure: no I/O, no
 * rounding (the writers round each column by its kind at the output edge).
 *
 * Tables are tidy: one row per district and time (scene, date or year), one
 * column per variable, the unit in the column name (`_k` Kelvin, `_per_k` 1/K).
 * The GeoJSON holds the districts (RFC 7946, lon/lat) with their yearly values
 * and trends as flat properties, so GIS tools read them as plain attributes:
 * `suhi_night_2024_k`, `dates_2024`, `suhi_night_slope_k_per_decade`, ...
 */
import { InputError } from '../errors.js';
import { quoteGiven } from '../year.js';

/** Metrics a user may pick (`--metric`); the same names as the trend and hot-spot commands. */
export const EXPORT_METRICS = ['lst_day', 'lst_night', 'suhi_day', 'suhi_night', 'ati'] as const;
export type ExportMetric = (typeof EXPORT_METRICS)[number];

export type ExportLevel = 'scene' | 'date' | 'year';

/** Pass of the scenes a metric's values come from. */
const METRIC_PASS: Record<ExportMetric, 'day' | 'night'> = { lst_day: 'day', lst_night: 'night', suhi_day: 'day', suhi_night: 'night', ati: 'day' };

/** Unit suffix of a metric's values: Kelvin, or 1/K for ATI. */
export function metricUnitSuffix(metric: ExportMetric): 'k' | 'per_k' {
  return metric === 'ati' ? 'per_k' : 'k';
}

/** The column of a metric in the tables: `lst_day_k`, `ati_per_k`. */
export function metricColumn(metric: ExportMetric): string {
  return `${metric}_${metricUnitSuffix(metric)}`;
}

/**
 * How a column is rounded at the output edge (keys of PRECISION in workers/format.ts):
 * Kelvin 0.0001 K, 1/K 6 significant digits, fractions 6 decimals, p and q 6
 * significant digits, slopes per decade 0.0001 K (1e-8 1/K), areas 0.1 m².
 */
export type RoundingKind = 'kelvin' | 'perKelvin' | 'fraction' | 'probability' | 'kelvinSlope' | 'perKelvinSlope' | 'area';

/** Parquet and reader-facing type of a column. */
export type ColumnType = 'string' | 'int' | 'double' | 'date' | 'timestamp';

/** The metrics asked for, in the canonical order; every metric when none is given. */
export function parseMetrics(given: readonly string[] | undefined): ExportMetric[] {
  const names = (given ?? []).flatMap((g) => g.split(',')).map((s) => s.trim()).filter((s) => s !== '');
  if (names.length === 0) return [...EXPORT_METRICS];
  const unknown = names.filter((n) => !(EXPORT_METRICS as readonly string[]).includes(n));
  if (unknown.length) {
    throw new InputError(`--metric ${unknown.map((u) => quoteGiven(u)).join(', ')} is not a metric; choose from ${EXPORT_METRICS.join(', ')}`);
  }
  return EXPORT_METRICS.filter((m) => names.includes(m));
}

/** Columns of a tidy table at a level, with only the chosen metrics. */
export function tidyColumns(level: ExportLevel, metrics: readonly ExportMetric[]): string[] {
  const values = metrics.map(metricColumn);
  if (level === 'scene') return ['district', 'name', 'scene_hash', 'acquired_at', 'pass', 'timing_rating', 'valid_fraction', ...values];
  if (level === 'date') return ['district', 'name', 'date', ...values, 'day_scenes', 'night_scenes'];
  return ['district', 'name', 'year', 'dates', ...values, 'day_scenes', 'night_scenes'];
}

const INT_COLUMNS = new Set(['year', 'dates', 'day_scenes', 'night_scenes']);
const STRING_COLUMNS = new Set(['district', 'name', 'scene_hash', 'pass', 'timing_rating']);

/** Type of a tidy-table column. */
export function columnType(column: string): ColumnType {
  if (STRING_COLUMNS.has(column)) return 'string';
  if (INT_COLUMNS.has(column)) return 'int';
  if (column === 'date') return 'date';
  if (column === 'acquired_at') return 'timestamp';
  return 'double';
}

/** Rounding of a column (tables and GeoJSON properties alike), or null for one kept as it is. */
export function roundingOf(column: string): RoundingKind | null {
  if (column === 'valid_fraction') return 'fraction';
  if (column === 'area_m2') return 'area';
  if (/_slope(_ci_lower|_ci_upper)?_per_k_per_decade$/.test(column)) return 'perKelvinSlope';
  if (/_slope(_ci_lower|_ci_upper)?_k_per_decade$/.test(column)) return 'kelvinSlope';
  if (/_trend_[pq]$/.test(column)) return 'probability';
  if (column.endsWith('_per_k')) return 'perKelvin';
  if (column.endsWith('_k')) return 'kelvin';
  return null;
}

type Value = string | number | null;
type Record_ = { readonly [key: string]: Value | undefined };

/** The year a row belongs to: its `year`, the year of its `date`, or the UTC year of `acquired_at`. */
function rowYear(row: Record_): number {
  if (typeof row.year === 'number') return row.year;
  const text = String(row.date ?? row.acquired_at ?? '');
  return Number(text.slice(0, 4));
}

/**
 * The rows of a tidy table: within the years, with the chosen columns in order.
 * At scene level a pass whose chosen metrics are all of the other pass is left
 * out (a day pass has no night LST).
 */
export function tidyRows(
  rows: readonly Record_[], level: ExportLevel, metrics: readonly ExportMetric[], range: { from: number | null; to: number | null },
): Record<string, Value>[] {
  const columns = tidyColumns(level, metrics);
  const passes = new Set(metrics.map((m) => METRIC_PASS[m]));
  return rows
    .filter((r) => (range.from === null || rowYear(r) >= range.from) && (range.to === null || rowYear(r) <= range.to))
    .filter((r) => level !== 'scene' || passes.has(r.pass as 'day' | 'night'))
    .map((r) => Object.fromEntries(columns.map((c) => [c, r[c] ?? null])));
}

/** A district outline as stored (RFC 7946 lon/lat). */
export interface ExportDistrict {
  id: string;
  name: string;
  areaSquareMetres: number;
  geometry: { type: string; coordinates: unknown };
}

/** One district's trend of one metric (fields of the trend command's rows). */
export interface ExportTrend {
  district: string;
  n: number;
  slope_per_decade: number | null;
  slope_ci_lower: number | null;
  slope_ci_upper: number | null;
  p: number | null;
  q: number | null;
  direction: string | null;
}

export interface DistrictFeatureCollection {
  type: 'FeatureCollection';
  features: {
    type: 'Feature';
    id: string;
    geometry: { type: string; coordinates: unknown };
    properties: Record<string, Value>;
  }[];
}

/**
 * The districts with, per chosen metric, the value of every year
 * (`<metric>_<year>_<unit>`), the number of dates behind each year
 * (`dates_<year>`), and the trend over those years
 * (`<metric>_trend_years`, `<metric>_slope_<unit>_per_decade` with
 * `_ci_lower`/`_ci_upper` (the interval of the slope), `<metric>_trend_p`,
 * `<metric>_trend_q` and `<metric>_trend` = increasing / decreasing / none).
 * A district without a value in a year has null there.
 */
export function districtFeatures(
  districts: readonly ExportDistrict[],
  yearRows: readonly Record_[],
  trends: ReadonlyMap<ExportMetric, readonly ExportTrend[]>,
  metrics: readonly ExportMetric[],
  range: { from: number | null; to: number | null },
): DistrictFeatureCollection {
  const kept = yearRows.filter((r) => (range.from === null || rowYear(r) >= range.from) && (range.to === null || rowYear(r) <= range.to));
  const years = [...new Set(kept.map(rowYear))].sort((a, b) => a - b);
  const byDistrictYear = new Map<string, Record_>();
  for (const r of kept) byDistrictYear.set(`${String(r.district)}\u0000${rowYear(r)}`, r);
  const perDecade = (x: number | null): number | null => (x === null ? null : x * 10);
  return {
    type: 'FeatureCollection',
    features: districts.map((d) => {
      const properties: Record<string, Value> = { id: d.id, name: d.name, area_m2: d.areaSquareMetres };
      for (const y of years) properties[`dates_${y}`] = (byDistrictYear.get(`${d.id}\u0000${y}`)?.dates as number | undefined) ?? null;
      for (const m of metrics) {
        const unit = metricUnitSuffix(m);
        for (const y of years) {
          const v = byDistrictYear.get(`${d.id}\u0000${y}`)?.[metricColumn(m)];
          properties[`${m}_${y}_${unit}`] = typeof v === 'number' ? v : null;
        }
        const t = trends.get(m)?.find((x) => x.district === d.id);
        properties[`${m}_trend_years`] = t?.n ?? 0;
        properties[`${m}_slope_${unit}_per_decade`] = t?.slope_per_decade ?? null;
        properties[`${m}_slope_ci_lower_${unit}_per_decade`] = perDecade(t?.slope_ci_lower ?? null);
        properties[`${m}_slope_ci_upper_${unit}_per_decade`] = perDecade(t?.slope_ci_upper ?? null);
        properties[`${m}_trend_p`] = t?.p ?? null;
        properties[`${m}_trend_q`] = t?.q ?? null;
        properties[`${m}_trend`] = t?.direction ?? null;
      }
      return { type: 'Feature' as const, id: d.id, geometry: d.geometry, properties };
    }),
  };
}
