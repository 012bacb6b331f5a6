/**
 * `heatledger export`: the district tables as CSV or Parquet (one row per
 * district and scene, date or year), or the districts as GeoJSON with their
 * yearly values and trends; beside every file a sidecar `PATH.json` with the
 * software version, the export's parameters, the runs that stored the values
 * (their parameters) and the content hashes of the scenes behind them.
 */
import { basename } from 'node:path';
import { CAUTION_TEXT, MIN_DATES_PER_YEAR } from '../core/defaults.js';
import { InputError } from '../core/errors.js';
import { hashFile } from '../core/hash.js';
import {
  columnType, districtFeatures, parseMetrics, roundingOf, tidyColumns, tidyRows,
  type ExportLevel, type ExportMetric, type ExportTrend,
} from '../core/export/tidy.js';
import { YEAR_MAX, YEAR_MIN } from '../core/year.js';
import { PRECISION, snakeCaseKeys } from '../format.js';
import { VERSION } from '../version.js';
import type { Store } from '../store/interface.js';
import { checkOutPath, writeCsvFile, writeGeoJsonFile, writeParquetFile, writeSidecarFile, sidecarPath } from './export-files.js';
import { requireValuesInYears } from '../store/store-summary.js';
import { withStore } from './common.js';

export const EXPORT_FORMATS = ['csv', 'geojson', 'parquet'] as const;
export type ExportFormat = (typeof EXPORT_FORMATS)[number];
export const EXPORT_LEVELS: readonly ExportLevel[] = ['scene', 'date', 'year'];

export interface ExportCommandOptions {
  format: ExportFormat;
  level?: ExportLevel;
  metric?: string[];
  from?: number;
  to?: number;
  /** A year counts in the GeoJSON's trends only with at least this many dates. */
  minDates?: number;
  out: string;
  dataDir?: string;
}

/** What to export, checked. */
export interface ExportSpec {
  format: ExportFormat;
  level: ExportLevel;
  metrics: ExportMetric[];
  from: number | null;
  to: number | null;
  minDates: number;
  /** Absolute path of the file. */
  out: string;
}

/**
 * Trends in the GeoJSON: every month of the year (the yearly values beside
 * them are means over all dates), Mann–Kendall at alpha 0.05 with
 * Benjamini–Hochberg q across districts, Sen slope interval with rounded ranks
 * — the defaults of `heatledger trend`; a year counts with at least
 * `--min-dates` dates (default MIN_DATES_PER_YEAR, as there).
 */
export const EXPORT_TREND_SETTINGS = { season: 'all', alpha: 0.05, serialCorrection: 'none', ciRanks: 'rounded' } as const;
export const EXPORT_TREND_MIN_DATES = MIN_DATES_PER_YEAR;

/** The options checked before the store is opened: years, level, metrics and the output folder. */
export async function exportSpec(opts: ExportCommandOptions): Promise<ExportSpec> {
  if (!(EXPORT_FORMATS as readonly string[]).includes(opts.format)) throw new InputError(`--format must be one of ${EXPORT_FORMATS.join(', ')}, got ${JSON.stringify(opts.format)}`);
  for (const [name, y] of [['--from', opts.from], ['--to', opts.to]] as const) {
    if (y !== undefined && !(Number.isInteger(y) && y >= YEAR_MIN && y <= YEAR_MAX)) throw new InputError(`${name} must be a year from ${YEAR_MIN} to ${YEAR_MAX}, got ${y}`);
  }
  if (opts.from !== undefined && opts.to !== undefined && opts.from > opts.to) throw new InputError(`--from ${opts.from} is after --to ${opts.to}; give the earlier year first`);
  const level = opts.level ?? (opts.format === 'geojson' ? 'year' : 'date');
  if (!EXPORT_LEVELS.includes(level)) throw new InputError(`--level must be one of ${EXPORT_LEVELS.join(', ')}, got ${JSON.stringify(level)}`);
  if (opts.format === 'geojson' && level !== 'year') throw new InputError(`--level ${level}: the GeoJSON holds one feature per district with its yearly values; use --level year, or CSV or Parquet for ${level} rows`);
  const minDates = opts.minDates ?? EXPORT_TREND_MIN_DATES;
  if (!(Number.isInteger(minDates) && minDates >= 1)) throw new InputError(`--min-dates must be a whole number ≥ 1, got ${minDates}`);
  const metrics = parseMetrics(opts.metric);
  const out = await checkOutPath(opts.out);
  return { format: opts.format, level, metrics, from: opts.from ?? null, to: opts.to ?? null, minDates, out };
}

/** Unit of a column, for the sidecar. */
function unitOf(column: string): string | null {
  if (/_per_k_per_decade$/.test(column)) return '1/K per decade';
  if (/_k_per_decade$/.test(column)) return 'K per decade';
  if (column.endsWith('_per_k')) return '1/K';
  if (column.endsWith('_k')) return 'K';
  if (column === 'area_m2') return 'm2';
  if (column === 'valid_fraction') return '1 (fraction of the district\'s pixels)';
  if (column === 'acquired_at') return 'UTC';
  return null;
}

function columnDescription(column: string, format: ExportFormat): Record<string, unknown> {
  const kind = roundingOf(column);
  return {
    name: column,
    ...(format === 'geojson' ? {} : { type: columnType(column) }),
    unit: unitOf(column),
    precision: kind ? PRECISION[kind] : null,
  };
}

/** What an export wrote. */
export interface ExportResult {
  path: string;
  sidecar: string;
  /** Rows (CSV, Parquet) or features (GeoJSON). */
  count: number;
}

/**
 * Write the export described by `spec` from `store`, then its sidecar.
 * The table rows come from the district table (store/district-table.ts) or the
 * scene table (store/export-sources.ts); the GeoJSON's trends from
 * store/district-statistics.ts, so every output answers alike.
 */
export async function writeExport(store: Store, spec: ExportSpec): Promise<ExportResult> {
  const range = { from: spec.from, to: spec.to };
  let count: number;
  let columns: string[];
  let trendSettings: (typeof EXPORT_TREND_SETTINGS & { minDates: number }) | null = null;
  if (spec.format === 'geojson') {
    const { districtTable } = await import('../store/district-table.js');
    const { districtTrends } = await import('../store/district-statistics.js');
    const { storedDistricts } = await import('../store/series.js');
    const districts = await storedDistricts(store);
    const yearRows = await districtTable(store, 'year');
    const trends = new Map<ExportMetric, ExportTrend[]>();
    for (const m of spec.metrics) {
      const { rows } = await districtTrends(store, {
        metric: m, season: EXPORT_TREND_SETTINGS.season, alpha: EXPORT_TREND_SETTINGS.alpha,
        serialCorrection: EXPORT_TREND_SETTINGS.serialCorrection, ciRanks: EXPORT_TREND_SETTINGS.ciRanks, minDates: spec.minDates,
        from: spec.from ?? undefined, to: spec.to ?? undefined,
      });
      trends.set(m, rows);
    }
    const collection = districtFeatures(
      districts.map((d) => ({ id: d.id, name: d.name, areaSquareMetres: d.areaSquareMetres, geometry: d.geometry.length === 1 ? { type: 'Polygon', coordinates: d.geometry[0] } : { type: 'MultiPolygon', coordinates: d.geometry } })),
      yearRows, trends, spec.metrics, range,
    );
    await writeGeoJsonFile(spec.out, collection);
    count = collection.features.length;
    columns = collection.features.length ? Object.keys(collection.features[0].properties) : [];
    trendSettings = { ...EXPORT_TREND_SETTINGS, minDates: spec.minDates };
  } else {
    let rows: Record<string, string | number | null>[];
    if (spec.level === 'scene') {
      const { districtSceneTable } = await import('../store/export-sources.js');
      rows = tidyRows(await districtSceneTable(store, range), 'scene', spec.metrics, range);
    } else {
      const { districtTable } = await import('../store/district-table.js');
      rows = tidyRows(await districtTable(store, spec.level), spec.level, spec.metrics, range);
    }
    columns = tidyColumns(spec.level, spec.metrics);
    if (spec.format === 'csv') await writeCsvFile(spec.out, columns, rows);
    else await writeParquetFile(spec.out, columns, rows, VERSION);
    count = rows.length;
  }
  const { exportSources } = await import('../store/export-sources.js');
  const sources = await exportSources(store, range);
  await writeSidecarFile(spec.out, snakeCaseKeys({
    software: 'heatledger',
    version: VERSION,
    writtenAt: new Date().toISOString(),
    file: basename(spec.out),
    format: spec.format,
    sha256: await hashFile(spec.out),
    [spec.format === 'geojson' ? 'features' : 'rows']: count,
    parameters: {
      format: spec.format, level: spec.level, metrics: spec.metrics, from: spec.from, to: spec.to,
      ...(trendSettings ? { trend: trendSettings } : {}),
    },
    columns: columns.map((c) => columnDescription(c, spec.format)),
    caution: CAUTION_TEXT,
    runs: sources.runs,
    scenes: sources.scenes,
  }));
  return { path: spec.out, sidecar: sidecarPath(spec.out), count };
}

export async function runExportCommand(opts: ExportCommandOptions): Promise<void> {
  const spec = await exportSpec(opts);
  const result = await withStore(opts, async (store) => {
    await requireValuesInYears(store, { from: spec.from ?? undefined, to: spec.to ?? undefined });
    return writeExport(store, spec);
  });
  if (result.count === 0) process.stderr.write('heatledger: the store holds no derived rows for this export; the file has a header only. Run `heatledger ingest` first or widen --from/--to\n');
  process.stdout.write(`${result.path} (${result.count} ${spec.format === 'geojson' ? 'districts' : 'rows'})\n${result.sidecar}\n`);
}
