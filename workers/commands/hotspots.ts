/**
 * `heatledger hotspots`: Getis–Ord Gi* hot and cold spots of one metric for a
 * year (or the mean of a range of years), and global Moran's I, over the
 * stored districts.
 */
import { InputError } from '../core/errors.js';
import type { Hemisphere, SeasonName } from '../core/trend/index.js';
import type { MoranResult, WeightsKind } from '../core/hotspot/index.js';
import { formatRows, PRECISION, roundNumber, type OutputFormat, type Row } from '../format.js';
import { SERIES_METRICS, type SeriesMetric } from '../store/series.js';
import { requireValuesInYears } from '../store/store-summary.js';
import { CAUTION_SHORT, withStore } from './common.js';
import { metricUnit } from './trend.js';
import { districtHotspots, type HotspotRow } from '../store/district-statistics.js';

export interface HotspotsCommandOptions {
  metric: string;
  year?: number;
  from?: number;
  to?: number;
  season?: SeasonName;
  months?: string;
  hemisphere?: Hemisphere;
  weights: WeightsKind;
  k: number;
  toleranceMetres: number;
  fdr?: boolean;
  minDates: number;
  format: OutputFormat;
  dataDir?: string;
}

/** Output name of the value column: the metric with its unit (`suhi_night_k`, `ati_per_k`). */
export function valueField(metric: SeriesMetric): string {
  return metric === 'ati' ? 'ati_per_k' : `${metric}_k`;
}

function fieldsFor(metric: SeriesMetric): string[] {
  return ['district', 'name', valueField(metric), 'years', 'neighbours', 'gi_z', 'gi_p', 'gi_q', 'spot', 'confidence'];
}

function roundRow(r: HotspotRow, metric: SeriesMetric): Row {
  const { district, name, value, ...rest } = r;
  return {
    district, name,
    [valueField(metric)]: roundNumber(value, metric === 'ati' ? PRECISION.perKelvin : PRECISION.kelvin),
    ...rest,
    gi_z: roundNumber(r.gi_z, { decimals: 4 }),
    gi_p: roundNumber(r.gi_p, PRECISION.probability),
    gi_q: roundNumber(r.gi_q, PRECISION.probability),
  };
}

function roundMoran(m: MoranResult | null): Record<string, number> | null {
  if (!m) return null;
  return {
    i: roundNumber(m.i, { decimals: 6 }) as number, expected: roundNumber(m.expected, { decimals: 6 }) as number,
    variance_normal: roundNumber(m.variance_normal, PRECISION.plain) as number, z_normal: roundNumber(m.z_normal, { decimals: 4 }) as number, p_normal: roundNumber(m.p_normal, PRECISION.probability) as number,
    variance_randomisation: roundNumber(m.variance_randomisation, PRECISION.plain) as number, z_randomisation: roundNumber(m.z_randomisation, { decimals: 4 }) as number,
    p_randomisation: roundNumber(m.p_randomisation, PRECISION.probability) as number, islands: m.islands,
  };
}

export async function runHotspotsCommand(o: HotspotsCommandOptions): Promise<void> {
  if (!(SERIES_METRICS as readonly string[]).includes(o.metric)) throw new InputError(`--metric must be one of ${SERIES_METRICS.join(', ')}, got "${o.metric}"`);
  if (o.year !== undefined && (o.from !== undefined || o.to !== undefined)) throw new InputError('give --year, or --from and --to, not both');
  const from = o.year ?? o.from;
  const to = o.year ?? o.to ?? o.from;
  if (from === undefined || to === undefined) throw new InputError('give --year <year>, or --from <year> --to <year>');
  for (const y of [from, to]) if (!(Number.isInteger(y) && y > 1900 && y < 2200)) throw new InputError(`years must be calendar years, got ${y}`);
  if (from > to) throw new InputError(`--from ${from} is after --to ${to}`);
  if (o.season && o.months) throw new InputError('give --season or --months, not both');
  if (!Number.isInteger(o.minDates) || o.minDates < 1) throw new InputError(`--min-dates must be a whole number ≥ 1, got ${o.minDates}`);
  if (!(o.toleranceMetres >= 0)) throw new InputError(`--tolerance-metres must be ≥ 0, got ${o.toleranceMetres}`);
  const metric = o.metric as SeriesMetric;
  await withStore(o, async (store) => {
    await requireValuesInYears(store, { from, to });
    const report = await districtHotspots(store, {
      metric, from, to, season: o.season, months: o.months, hemisphere: o.hemisphere, weights: o.weights, k: o.k,
      toleranceMetres: o.toleranceMetres, fdr: o.fdr, minDates: o.minDates,
    });
    const rows = report.rows.map((r) => roundRow(r, metric));
    const period = from === to ? String(from) : `${from}-${to}`;
    const weightsText = o.weights === 'knn' ? `${o.k} nearest centroids` : `queen contiguity (tolerance ${o.toleranceMetres} m)`;
    if (report.leftOut.length) process.stderr.write(`heatledger: left out (no ${metric} value in ${period}): ${report.leftOut.join(', ')}\n`);
    if (o.format === 'json') {
      process.stdout.write(JSON.stringify({
        metric, unit: metricUnit(metric).value, years: period, months: report.monthsLabel,
        weights: o.weights, k: o.weights === 'knn' ? o.k : null, fdr: !!o.fdr,
        moran_i: roundMoran(report.moran), districts: rows, left_out: report.leftOut,
      }, null, 2) + '\n');
      return;
    }
    if (o.format === 'csv') {
      process.stdout.write(formatRows(rows, 'csv', { columns: fieldsFor(metric) }));
      return;
    }
    const unit = metricUnit(metric).value;
    process.stdout.write(`Getis–Ord Gi* of ${metric} (${unit}), ${period}, ${report.monthsLabel}; weights: ${weightsText}, binary with self; ${o.fdr ? 'classes from Benjamini–Hochberg q' : 'classes from p'} (90/95/99 %)\n`);
    process.stdout.write(formatRows(rows, 'table', { columns: fieldsFor(metric).filter((c) => o.fdr || c !== 'gi_q'), decimals: { [valueField(metric)]: metric === 'ati' ? 6 : 3, gi_z: 3, gi_p: 6, gi_q: 6 } }));
    const m = report.moran;
    process.stdout.write(m
      ? `Global Moran's I (row-standardised weights): I = ${m.i.toFixed(4)}, E[I] = ${m.expected.toFixed(4)}; ` +
        `normality z = ${m.z_normal.toFixed(3)}, p = ${m.p_normal.toPrecision(4)}; randomisation z = ${m.z_randomisation.toFixed(3)}, p = ${m.p_randomisation.toPrecision(4)}` +
        (m.islands ? `; ${m.islands} district(s) without neighbours` : '') + '\n'
      : "Global Moran's I: not defined here (fewer than 4 districts with neighbours, or constant values)\n");
    process.stdout.write(`${CAUTION_SHORT}\n`);
  });
}
