/**
 * GET /api/districts: the districts as a GeoJSON FeatureCollection (RFC 7946,
 * lon/lat) with one season-year's means as properties; GET /api/districts/{id}:
 * one district with its stored properties and the years it has values.
 */
import { CAUTION_TEXT } from '../../workers/core/defaults.js';
import { InputError } from '../../workers/core/errors.js';
import { PRECISION, roundNumber } from '../../workers/format.js';
import { listDistricts, type DistrictRow, type GeoJsonGeometry, type Store } from '../../workers/store/index.js';
import { districtSeasonMeans, type DistrictSeasonMeans } from '../../workers/store/district-means.js';
import {
  LIMIT_DEFAULT, METRIC_PROPERTY, noMemo, pageByKey, requireYearWithValues, seasonSelection, UNITS,
  type AnswerContext, type Memo, type Metric, type Season,
} from './common.js';

export interface DistrictsQuery {
  /** Season-year; default the latest with values. */
  year?: number;
  season: Season;
  metric: Metric;
  limit?: number;
  cursor?: string;
}

export interface DistrictProperties {
  id: string;
  name: string;
  role: 'district' | 'rural';
  area_m2: number;
  lst_day_k: number | null;
  lst_night_k: number | null;
  suhi_day_k: number | null;
  suhi_night_k: number | null;
  ati_per_k: number | null;
  dates_day: number;
  dates_night: number;
  /** The property of the metric asked for. */
  value: number | null;
}

export interface DistrictFeature {
  type: 'Feature';
  id: string;
  geometry: GeoJsonGeometry;
  properties: DistrictProperties;
}

export interface DistrictsAnswer {
  type: 'FeatureCollection';
  year: number | null;
  season: Season;
  metric: Metric;
  years: number[];
  units: typeof UNITS;
  caution: string;
  next_cursor: string | null;
  features: DistrictFeature[];
}

/** Kelvin to 0.0001 K, ATI to 6 significant digits (workers/format.ts). */
export function roundMeans(m: Pick<DistrictSeasonMeans, 'lst_day_k' | 'lst_night_k' | 'suhi_day_k' | 'suhi_night_k' | 'ati_per_k'>) {
  return {
    lst_day_k: roundNumber(m.lst_day_k, PRECISION.kelvin),
    lst_night_k: roundNumber(m.lst_night_k, PRECISION.kelvin),
    suhi_day_k: roundNumber(m.suhi_day_k, PRECISION.kelvin),
    suhi_night_k: roundNumber(m.suhi_night_k, PRECISION.kelvin),
    ati_per_k: roundNumber(m.ati_per_k, PRECISION.perKelvin),
  };
}

/** A district's area to 0.1 m² (PRECISION.area, as the GeoJSON export rounds it). */
function roundArea(areaSquareMetres: number): number {
  return roundNumber(Number(areaSquareMetres), PRECISION.area) as number;
}

/** Stored districts (rural reference included), in byte order of id; kept while the last run stays. */
export function storedDistrictRows(store: Store, memo: Memo): Promise<DistrictRow[]> {
  return memo('district-rows', () => listDistricts(store));
}

/** Every season-year's means of every district for a season; kept while the last run stays. */
export async function seasonMeans(store: Store, season: Season, memo: Memo): Promise<{ byYear: Map<number, Map<string, DistrictSeasonMeans>>; years: number[] }> {
  return memo(`season-means:${season}`, async () => {
    const rows = await districtSeasonMeans(store, await seasonSelection(store, season, memo));
    const byYear = new Map<number, Map<string, DistrictSeasonMeans>>();
    for (const r of rows) {
      const m = byYear.get(r.season_year) ?? new Map<string, DistrictSeasonMeans>();
      m.set(r.district_id, r);
      byYear.set(r.season_year, m);
    }
    return { byYear, years: [...byYear.keys()].sort((a, b) => a - b) };
  });
}

export async function answerDistricts(store: Store, q: DistrictsQuery, ctx: AnswerContext = {}): Promise<DistrictsAnswer> {
  const memo = ctx.memo ?? noMemo;
  const [districts, means] = await Promise.all([storedDistrictRows(store, memo), seasonMeans(store, q.season, memo)]);
  requireYearWithValues(q.year, means.years, q.season);
  const year = q.year ?? means.years[means.years.length - 1] ?? null;
  const ofYear = year === null ? undefined : means.byYear.get(year);
  const property = METRIC_PROPERTY[q.metric];
  const features: DistrictFeature[] = districts.map((d) => {
    const m = ofYear?.get(d.id);
    const values = m ? roundMeans(m) : { lst_day_k: null, lst_night_k: null, suhi_day_k: null, suhi_night_k: null, ati_per_k: null };
    return {
      type: 'Feature', id: d.id, geometry: d.geometry,
      properties: {
        id: d.id, name: d.name, role: d.role, area_m2: roundArea(d.areaSquareMetres), ...values,
        dates_day: m?.dates_day ?? 0, dates_night: m?.dates_night ?? 0, value: values[property],
      },
    };
  });
  const page = pageByKey(features, (f) => f.id, q.limit ?? LIMIT_DEFAULT, q.cursor);
  return {
    type: 'FeatureCollection', year, season: q.season, metric: q.metric, years: means.years, units: UNITS, caution: CAUTION_TEXT,
    next_cursor: page.next_cursor, features: page.rows,
  };
}

/** CSV columns of the district map without geometry. */
export const DISTRICT_CSV_FIELDS = ['id', 'name', 'role', 'area_m2', 'lst_day_k', 'lst_night_k', 'suhi_day_k', 'suhi_night_k', 'ati_per_k', 'dates_day', 'dates_night', 'value'] as const;

export interface DistrictAnswer {
  id: string;
  name: string;
  role: 'district' | 'rural';
  area_m2: number;
  geometry: GeoJsonGeometry;
  properties: Record<string, unknown>;
  /** Calendar years with any value for this district. */
  years: number[];
}

/** One district; an unknown id is an InputError naming it (the route answers 404). */
export async function answerDistrict(store: Store, id: string, ctx: AnswerContext = {}): Promise<DistrictAnswer> {
  const memo = ctx.memo ?? noMemo;
  const d = (await storedDistrictRows(store, memo)).find((x) => x.id === id);
  if (!d) throw new UnknownDistrictError(id);
  const means = await seasonMeans(store, 'all', memo);
  const years = means.years.filter((y) => means.byYear.get(y)?.has(id));
  return { id: d.id, name: d.name, role: d.role, area_m2: roundArea(d.areaSquareMetres), geometry: d.geometry, properties: d.properties ?? {}, years };
}

/** A district id the store does not hold (a 404, not a 400: the path names a missing resource). */
export class UnknownDistrictError extends InputError {
  readonly statusCode = 404;
  constructor(id: string) {
    super(`no district with id ${JSON.stringify(id.slice(0, 100))} in the store; GET /api/districts lists them`);
  }
}

