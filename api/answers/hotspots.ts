/**
 * GET /api/hotspots: Getis–Ord Gi* per district and the city's global Moran's I
 * for one season-year (queen contiguity, as the CLI's default).
 */
import { MIN_DATES_PER_YEAR } from '../../workers/core/defaults.js';
import { benjaminiHochberg } from '../../workers/core/trend/index.js';
import { PRECISION, roundNumber } from '../../workers/format.js';
import { districtHotspots } from '../../workers/store/district-statistics.js';
import type { Store } from '../../workers/store/index.js';
import { districtsHemisphere, noMemo, requireYearWithValues, unitOf, type AnswerContext, type Metric, type Season } from './common.js';
import { seasonMeans } from './districts.js';

export interface HotspotsQuery {
  year?: number;
  metric: Metric;
  season: Season;
  /** Classify on Benjamini–Hochberg q instead of p (default false, as the CLI). */
  fdr?: boolean;
}

export interface HotspotsAnswer {
  year: number | null;
  metric: Metric;
  season: Season;
  unit: 'K' | '1/K';
  weights: 'queen';
  /** Whether spot and confidence come from q (true) or p (false). */
  fdr: boolean;
  min_dates_per_year: number;
  left_out: string[];
  moran: { i: number; expected: number; z: number; p: number; islands: number } | null;
  rows: {
    district: string; name: string; value: number; gi_z: number | null; gi_p: number | null; gi_q: number | null;
    spot: 'hot' | 'cold' | 'none'; confidence: 99 | 95 | 90 | null;
  }[];
}

export async function answerHotspots(store: Store, q: HotspotsQuery, ctx: AnswerContext = {}): Promise<HotspotsAnswer> {
  const memo = ctx.memo ?? noMemo;
  const means = await seasonMeans(store, q.season, memo);
  requireYearWithValues(q.year, means.years, q.season);
  const year = q.year ?? means.years[means.years.length - 1] ?? null;
  const fdr = q.fdr ?? false;
  const base = { year, metric: q.metric, season: q.season, unit: unitOf(q.metric), weights: 'queen' as const, fdr, min_dates_per_year: MIN_DATES_PER_YEAR };
  if (year === null) return { ...base, left_out: [], moran: null, rows: [] };
  const report = await memo(`hotspots:${q.metric}:${q.season}:${year}:${fdr}`, async () => districtHotspots(store, {
    metric: q.metric, from: year, to: year, season: q.season, hemisphere: await districtsHemisphere(store, memo), weights: 'queen', fdr, minDates: MIN_DATES_PER_YEAR,
  }));
  const qs = fdr ? report.rows.map((r) => r.gi_q) : benjaminiHochberg(report.rows.map((r) => r.gi_p));
  const precision = q.metric === 'ati' ? PRECISION.perKelvin : PRECISION.kelvin;
  const m = report.moran;
  return {
    ...base, left_out: report.leftOut,
    // the randomisation assumption (the default of R spdep's moran.test)
    moran: m ? { i: roundNumber(m.i, { decimals: 6 }) as number, expected: roundNumber(m.expected, { decimals: 6 }) as number, z: roundNumber(m.z_randomisation, { decimals: 4 }) as number, p: roundNumber(m.p_randomisation, PRECISION.probability) as number, islands: m.islands } : null,
    rows: report.rows.map((r, i) => ({
      district: r.district, name: r.name, value: roundNumber(r.value, precision) as number,
      gi_z: roundNumber(r.gi_z, { decimals: 4 }), gi_p: roundNumber(r.gi_p, PRECISION.probability), gi_q: roundNumber(qs[i], PRECISION.probability),
      spot: r.spot, confidence: r.confidence,
    })),
  };
}
