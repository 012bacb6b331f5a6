/**
 * GET /api/rankings: the districts of one season-year ranked by a metric, with
 * the rank each held in the previous season-year that has values.
 */
import { rankChange, rankValues, type RankOrder } from '../../workers/core/ranking.js';
import { PRECISION, roundNumber } from '../../workers/format.js';
import type { Store } from '../../workers/store/index.js';
import { decodeCursor, encodeCursor, LIMIT_DEFAULT, METRIC_PROPERTY, noMemo, requireYearWithValues, unitOf, byteOrder, type AnswerContext, type Metric, type Season } from './common.js';
import { seasonMeans, storedDistrictRows } from './districts.js';

export interface RankingsQuery {
  year?: number;
  metric: Metric;
  season: Season;
  order?: RankOrder;
  limit?: number;
  cursor?: string;
}

export interface RankingRow {
  /** 1 = highest value for order desc (hottest), lowest for asc; ties share the best rank ("1224"). */
  rank: number;
  district: string;
  name: string;
  value: number;
  previous_rank: number | null;
  /** previous_rank − rank: positive = moved up towards rank 1. */
  rank_change: number | null;
}

export interface RankingsAnswer {
  year: number | null;
  previous_year: number | null;
  metric: Metric;
  season: Season;
  unit: 'K' | '1/K';
  order: RankOrder;
  next_cursor: string | null;
  rows: RankingRow[];
}

const isOffset = (v: unknown): v is { offset: number } =>
  !!v && typeof v === 'object' && Number.isInteger((v as { offset?: unknown }).offset) && (v as { offset: number }).offset > 0;

export async function answerRankings(store: Store, q: RankingsQuery, ctx: AnswerContext = {}): Promise<RankingsAnswer> {
  const memo = ctx.memo ?? noMemo;
  const order = q.order ?? 'desc';
  const [districts, means] = await Promise.all([storedDistrictRows(store, memo), seasonMeans(store, q.season, memo)]);
  requireYearWithValues(q.year, means.years, q.season);
  const year = q.year ?? means.years[means.years.length - 1] ?? null;
  const previousYear = year === null ? null : [...means.years].reverse().find((y) => y < year) ?? null;
  const property = METRIC_PROPERTY[q.metric];
  const names = new Map(districts.filter((d) => d.role === 'district').map((d) => [d.id, d.name]));
  const ranked = (y: number | null) => {
    const ofYear = y === null ? undefined : means.byYear.get(y);
    return rankValues([...names.keys()].map((id) => ({ key: id, value: ofYear?.get(id)?.[property] ?? null })), order, byteOrder);
  };
  const now = ranked(year);
  const before = new Map(ranked(previousYear).map((r) => [r.key, r.rank]));
  const precision = q.metric === 'ati' ? PRECISION.perKelvin : PRECISION.kelvin;
  const rows: RankingRow[] = now.map((r) => {
    const previous = before.get(r.key) ?? null;
    return { rank: r.rank, district: r.key, name: names.get(r.key) ?? r.key, value: roundNumber(r.value, precision) as number, previous_rank: previous, rank_change: rankChange(previous, r.rank) };
  });
  const start = q.cursor === undefined ? 0 : decodeCursor(q.cursor, isOffset).offset;
  const limit = q.limit ?? LIMIT_DEFAULT;
  const page = rows.slice(start, start + limit);
  return {
    year, previous_year: previousYear, metric: q.metric, season: q.season, unit: unitOf(q.metric), order,
    next_cursor: start + limit < rows.length ? encodeCursor({ offset: start + limit }) : null, rows: page,
  };
}
