/**
 * `heatledger trend`: Mann–Kendall trend and Sen's slope of a yearly (or
 * seasonal) series — one series from a CSV file, or every stored district with
 * Benjamini–Hochberg q across the districts.
 */
import { readFile } from 'node:fs/promises';
import { InputError } from '../core/errors.js';
import {
  datesPerYearText, noteWithDrops, parseMonths, parseSeriesCsv, seasonMonths, trendOfSeries, yearlySeries,
  type CiRanks, type Hemisphere, type MonthSelection, type SeasonName, type SerialCorrection,
} from '../core/trend/index.js';
import { formatRows, type OutputFormat, type Row } from '../format.js';
import { SERIES_METRICS, type SeriesMetric } from '../store/series.js';
import { districtTrends, metricUnit, roundTrendRow } from '../store/district-statistics.js';

/** Where the trend table's units and rounding live (the API rounds the same way). */
export { metricUnit, roundTrendRow };
import { requireValuesInYears } from '../store/store-summary.js';
import { CAUTION_SHORT, withStore } from './common.js';

export interface TrendCommandOptions {
  series?: string;
  metric?: string;
  season?: SeasonName;
  months?: string;
  hemisphere?: Hemisphere;
  from?: number;
  to?: number;
  district?: string[];
  alpha: number;
  serialCorrection: 'none' | SerialCorrection;
  ciRanks: CiRanks;
  minDates: number;
  seasonalKendall?: boolean;
  format: OutputFormat;
  dataDir?: string;
}

const BASE_FIELDS = ['n', 's', 'var_s', 'z', 'p', 'tau', 'slope_per_year', 'slope_per_decade', 'slope_ci_lower', 'slope_ci_upper', 'direction'];

function fieldsFor(corrected: boolean, many: boolean): string[] {
  const f = many ? ['district', 'name', ...BASE_FIELDS.slice(0, 5), 'q', ...BASE_FIELDS.slice(5), 'direction_raw'] : [...BASE_FIELDS];
  if (corrected) f.push('z_corrected', 'p_corrected');
  f.push('years_used', 'dates_per_year', 'note');
  return f;
}

/** The row's fields in column order (missing ones null). */
export function pick(row: Row, columns: readonly string[]): Row {
  const out: Record<string, Row[string]> = {};
  for (const c of columns) out[c] = row[c] ?? null;
  return out;
}

function checkOptions(o: TrendCommandOptions): void {
  if (!(o.alpha > 0 && o.alpha < 1)) throw new InputError(`--alpha must be between 0 and 1, got ${o.alpha}`);
  if (!Number.isInteger(o.minDates) || o.minDates < 1) throw new InputError(`--min-dates must be a whole number ≥ 1, got ${o.minDates}`);
  for (const [name, y] of [['--from', o.from], ['--to', o.to]] as const) {
    if (y !== undefined && !(Number.isInteger(y) && y > 1900 && y < 2200)) throw new InputError(`${name} must be a calendar year, got ${y}`);
  }
  if (o.from !== undefined && o.to !== undefined && o.from > o.to) throw new InputError(`--from ${o.from} is after --to ${o.to}`);
  if (o.season && o.months) throw new InputError('give --season or --months, not both');
  if (o.series && (o.metric || (o.district && o.district.length))) throw new InputError('--series reads one series from a file; --metric and --district select stored districts: use one or the other');
  if (!o.series && !o.metric) throw new InputError('give --metric (every stored district) or --series <file.csv> (one series)');
  if (o.metric && !(SERIES_METRICS as readonly string[]).includes(o.metric)) throw new InputError(`--metric must be one of ${SERIES_METRICS.join(', ')}, got "${o.metric}"`);
  if (o.seasonalKendall && o.series) throw new InputError('--seasonal-kendall works on stored districts (monthly means); it does not apply to --series');
}

function monthSelection(o: TrendCommandOptions, hemisphere: Hemisphere): MonthSelection {
  if (o.months) return parseMonths(o.months);
  return seasonMonths(o.season ?? 'all', hemisphere);
}

/** One series from a CSV file. */
export async function trendOfFile(o: TrendCommandOptions): Promise<Row> {
  const path = o.series as string;
  let text: string;
  try {
    text = await readFile(path, 'utf8');
  } catch (e) {
    throw new InputError(`cannot read the series file (${(e as NodeJS.ErrnoException).code ?? (e as Error).message})`, path);
  }
  const sel = monthSelection(o, o.hemisphere ?? 'north');
  const parsed = parseSeriesCsv(text, path, sel);
  const minDates = parsed.kind === 'year' ? 1 : o.minDates;
  const ys = yearlySeries(parsed.periods, minDates, o.from, o.to);
  const result = trendOfSeries(ys.years, ys.values, { alpha: o.alpha, serialCorrection: o.serialCorrection === 'hamed-rao' ? 'hamed-rao' : 'none', ciRanks: o.ciRanks });
  return { ...result, dates_per_year: parsed.kind === 'date' ? datesPerYearText(ys) : null, note: noteWithDrops(result.note, ys.tooFew, minDates) };
}

export async function runTrendCommand(o: TrendCommandOptions): Promise<void> {
  checkOptions(o);
  const corrected = o.serialCorrection === 'hamed-rao';
  if (o.series) {
    const row = await trendOfFile(o);
    const rounded = pick(roundTrendRow(row, null), fieldsFor(corrected, false));
    if (o.format === 'json') process.stdout.write(JSON.stringify(rounded, null, 2) + '\n');
    else process.stdout.write(formatRows([rounded], o.format, { columns: fieldsFor(corrected, false), decimals: { slope_per_year: 4, slope_per_decade: 4, slope_ci_lower: 4, slope_ci_upper: 4, p: 6, tau: 4, z: 4 } }));
    return;
  }
  const metric = o.metric as SeriesMetric;
  await withStore(o, async (store) => {
    await requireValuesInYears(store, { from: o.from, to: o.to });
    const { rows, selection } = await districtTrends(store, {
      metric, season: o.season, months: o.months, hemisphere: o.hemisphere, from: o.from, to: o.to, districts: o.district,
      alpha: o.alpha, serialCorrection: corrected ? 'hamed-rao' : 'none', ciRanks: o.ciRanks, minDates: o.minDates, seasonalKendall: o.seasonalKendall,
    });
    if (rows.length === 0) process.stderr.write(`heatledger: no district has a ${metric} value in ${selection.label}${o.from || o.to ? ` between ${o.from ?? 'the first year'} and ${o.to ?? 'the last'}` : ''} (has \`heatledger ingest\` run?)\n`);
    const columns = fieldsFor(corrected && !o.seasonalKendall, true);
    const rounded = rows.map((r) => pick(roundTrendRow(r as unknown as Record<string, unknown>, metric), columns));
    if (o.format === 'table') {
      const unit = metricUnit(metric);
      process.stdout.write(
        `${o.seasonalKendall ? 'Seasonal Kendall test (monthly means)' : 'Mann–Kendall test'} of ${metric} (${unit.value}), ${selection.label}, ` +
          `years with ≥ ${o.minDates} dates; slopes in ${unit.slope} (per decade ×10); q = Benjamini–Hochberg across ${rows.length} districts; alpha ${o.alpha}\n`,
      );
      process.stdout.write(formatRows(rounded, 'table', { columns: columns.filter((c) => c !== 'dates_per_year'), decimals: { slope_per_year: metric === 'ati' ? 8 : 4, slope_per_decade: metric === 'ati' ? 7 : 3, slope_ci_lower: metric === 'ati' ? 8 : 4, slope_ci_upper: metric === 'ati' ? 8 : 4, p: 6, q: 6, p_corrected: 6, tau: 3, z: 3, z_corrected: 3, var_s: 2 } }));
      process.stdout.write(`${CAUTION_SHORT}\n`);
    } else {
      process.stdout.write(formatRows(rounded, o.format, { columns }));
    }
  });
}
