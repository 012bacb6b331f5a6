/**
 * District statistics over the stored series: every district's trend (with
 * Benjamini–Hochberg q across the districts) and the hot spots of a year
 * (Gi*, Moran's I). One stored query (./series.ts) and the core statistics
 * over its result, so the CLI, the demo and the API answer alike.
 */
import { InputError } from '../core/errors.js';
import {
  benjaminiHochberg, datesPerYearText, directionOf, hemisphereOf, noteWithDrops, parseMonths, seasonalTrendOfSeries,
  seasonMonths, trendOfSeries, yearlySeries,
  type CiRanks, type Hemisphere, type MonthSelection, type SeasonName, type SerialCorrection, type TrendResult,
} from '../core/trend/index.js';
import { centroidLonLat } from '../core/hotspot/weights.js';
import { classifySpot, giStar, moranI, neighbours, type MoranResult, type WeightsKind } from '../core/hotspot/index.js';
import { PRECISION, roundNumber, type Row } from '../format.js';
import type { Store } from './interface.js';
import { districtSeries, storedDistricts, type SeriesMetric, type SeriesRow } from './series.js';

export interface DistrictTrendRow extends Omit<TrendResult, 'direction'> {
  district: string;
  name: string;
  q: number | null;
  direction: TrendResult['direction'];
  direction_raw: TrendResult['direction'];
  dates_per_year: string;
}

export interface DistrictTrendQuery {
  metric: SeriesMetric;
  season?: SeasonName;
  months?: string;
  hemisphere?: Hemisphere;
  from?: number;
  to?: number;
  districts?: string[];
  alpha: number;
  serialCorrection: SerialCorrection;
  ciRanks: CiRanks;
  minDates: number;
  seasonalKendall?: boolean;
  /** The yearly series of `metric` for the months asked for, when the caller already has them (else they are queried). */
  series?: SeriesRow[];
}

/** The hemisphere of the stored districts, from the mean latitude of their centroids. */
export async function storedHemisphere(store: Store): Promise<Hemisphere> {
  const ds = await storedDistricts(store);
  if (ds.length === 0) return 'north';
  return hemisphereOf(ds.reduce((s, d) => s + centroidLonLat(d)[1], 0) / ds.length);
}

/**
 * Trend of every stored district (or the ones asked for), with BH q across
 * them; `direction` is the verdict after FDR (q ≤ alpha), `direction_raw` from p
 * alone. With the Hamed–Rao correction, p_corrected is what q and both verdicts use.
 */
export async function districtTrends(store: Store, q: DistrictTrendQuery): Promise<{ rows: DistrictTrendRow[]; selection: MonthSelection }> {
  const hemisphere = q.hemisphere ?? (await storedHemisphere(store));
  const sel = q.months ? parseMonths(q.months) : seasonMonths(q.season ?? 'all', hemisphere);
  const rows = q.series && !q.seasonalKendall ? q.series : await districtSeries(store, { metric: q.metric, months: sel.months, wrapFromMonth: sel.wrapFromMonth, byMonth: !!q.seasonalKendall });
  const byDistrict = new Map<string, { name: string; rows: typeof rows }>();
  for (const r of rows) {
    const e = byDistrict.get(r.district_id) ?? { name: r.district_name, rows: [] };
    e.rows.push(r);
    byDistrict.set(r.district_id, e);
  }
  if (q.districts && q.districts.length) {
      const known = new Set((await storedDistricts(store)).map((d) => d.id));
    const unknown = q.districts.filter((d) => !known.has(d));
    if (unknown.length) throw new InputError(`--district: no stored district ${unknown.map((u) => `"${u}"`).join(', ')} (known: ${[...known].join(', ') || 'none'})`);
  }
  const ids = q.districts && q.districts.length ? q.districts : [...byDistrict.keys()];
  const corrected = q.serialCorrection === 'hamed-rao';
  const out: DistrictTrendRow[] = [];
  for (const id of ids) {
    const e = byDistrict.get(id) ?? { name: id, rows: [] };
    let result: TrendResult;
    let datesText: string;
    if (q.seasonalKendall) {
      const kept = e.rows.filter((r) => r.dates >= q.minDates && (q.from === undefined || r.season_year >= q.from) && (q.to === undefined || r.season_year <= q.to));
      result = seasonalTrendOfSeries(kept.map((r) => ({ year: r.season_year, season: r.month, value: r.value })), q.alpha);
      datesText = kept.map((r) => `${r.season_year}-${String(r.month).padStart(2, '0')}:${r.dates}`).join(',');
    } else {
      const ys = yearlySeries(e.rows.map((r) => ({ year: r.season_year, dates: r.dates, value: r.value })), q.minDates, q.from, q.to);
      result = trendOfSeries(ys.years, ys.values, { alpha: q.alpha, serialCorrection: q.serialCorrection, ciRanks: q.ciRanks });
      result.note = noteWithDrops(result.note, ys.tooFew, q.minDates);
      datesText = datesPerYearText(ys);
    }
    out.push({ district: id, name: e.name, q: null, ...result, direction_raw: result.direction, dates_per_year: datesText });
  }
  const pOf = (r: DistrictTrendRow): number | null => (corrected && !q.seasonalKendall ? r.p_corrected ?? null : r.p);
  const qs = benjaminiHochberg(out.map(pOf));
  out.forEach((r, i) => {
    r.q = qs[i];
    r.direction = directionOf(r.s, r.q, q.alpha);
  });
  return { rows: out, selection: sel };
}

export interface HotspotQuery {
  metric: SeriesMetric;
  from: number;
  to: number;
  season?: SeasonName;
  months?: string;
  hemisphere?: Hemisphere;
  weights: WeightsKind;
  k?: number;
  toleranceMetres?: number;
  fdr?: boolean;
  minDates: number;
}

export interface HotspotRow {
  district: string;
  name: string;
  /** Mean of the yearly means over the years asked for (K, or 1/K for ATI). */
  value: number;
  years: number;
  neighbours: number;
  gi_z: number | null;
  gi_p: number | null;
  gi_q: number | null;
  spot: 'hot' | 'cold' | 'none';
  confidence: 99 | 95 | 90 | null;
}

export interface HotspotReport {
  rows: HotspotRow[];
  moran: MoranResult | null;
  /** Districts left out for lack of a value in the years asked for. */
  leftOut: string[];
  monthsLabel: string;
}

/** Gi* per district and Moran's I for one metric over [from, to]. */
export async function districtHotspots(store: Store, q: HotspotQuery): Promise<HotspotReport> {
  const hemisphere = q.hemisphere ?? (await storedHemisphere(store));
  const sel = q.months ? parseMonths(q.months) : seasonMonths(q.season ?? 'all', hemisphere);
  const series = await districtSeries(store, { metric: q.metric, months: sel.months, wrapFromMonth: sel.wrapFromMonth, byMonth: false });
  const districts = await storedDistricts(store);
  const values = new Map<string, { value: number; years: number }>();
  for (const d of districts) {
    const ys = yearlySeries(series.filter((r) => r.district_id === d.id).map((r) => ({ year: r.season_year, dates: r.dates, value: r.value })), q.minDates, q.from, q.to);
    if (ys.values.length) values.set(d.id, { value: ys.values.reduce((s, v) => s + v, 0) / ys.values.length, years: ys.values.length });
  }
  const kept = districts.filter((d) => values.has(d.id));
  const leftOut = districts.filter((d) => !values.has(d.id)).map((d) => d.id);
  if (kept.length < 3) {
    throw new InputError(`hot spots need values for at least 3 districts in ${q.from === q.to ? q.from : `${q.from}-${q.to}`} (${sel.label}, ≥ ${q.minDates} dates a year); the store has ${kept.length}`);
  }
  const nb = neighbours(kept, { kind: q.weights, k: q.k, toleranceMetres: q.toleranceMetres });
  const x = kept.map((d) => values.get(d.id)!.value);
  const gi = giStar(x, nb);
  const qs = q.fdr ? benjaminiHochberg(gi.p) : kept.map(() => null);
  const rows: HotspotRow[] = kept.map((d, i) => {
    const cls = classifySpot(gi.z[i], q.fdr ? qs[i] : gi.p[i]);
    return {
      district: d.id, name: d.name, value: x[i], years: values.get(d.id)!.years, neighbours: nb[i].length,
      gi_z: gi.z[i], gi_p: gi.p[i], gi_q: qs[i], spot: cls.spot, confidence: cls.confidence,
    };
  });
  return { rows, moran: moranI(x, nb), leftOut, monthsLabel: sel.label };
}

/** Unit of a metric's values and of its slopes per year. */
export function metricUnit(metric: SeriesMetric): { value: string; slope: string } {
  return metric === 'ati' ? { value: '1/K', slope: '1/K per year' } : { value: 'K', slope: 'K per year' };
}

/**
 * Stated precision: temperature slopes 0.0001 K (ATI slopes 1e-8 1/K); the Sen line's
 * pivot value like the series (0.0001 K, ATI 6 significant digits);
 * p, q and p_corrected 6 significant digits; z, tau and Var(S) 4 decimals.
 */
export function roundTrendRow(r: Record<string, unknown>, metric: SeriesMetric | null): Row {
  const slopeDecimals = metric === 'ati' ? 8 : 4;
  const out: Record<string, string | number | boolean | null> = {};
  for (const [k, v] of Object.entries(r)) {
    if (typeof v !== 'number') { out[k] = (v ?? null) as string | boolean | null; continue; }
    if (k.startsWith('slope')) out[k] = roundNumber(v, { decimals: slopeDecimals });
    else if (k === 'pivot_value') out[k] = roundNumber(v, metric === 'ati' ? PRECISION.perKelvin : PRECISION.kelvin);
    else if (k === 'p' || k === 'q' || k === 'p_corrected' || k === 'p_raw') out[k] = roundNumber(v, PRECISION.probability);
    else if (k === 'z' || k === 'z_corrected' || k === 'tau' || k === 'var_s') out[k] = roundNumber(v, { decimals: 4 });
    else out[k] = v;
  }
  return out;
}
