/**
 * The report's answers, bound to the API's answer functions (api/answers/):
 * the same functions the HTTP routes call, called in-process, so every figure
 * of the report equals what the API returns for the same query. Lists are
 * followed page by page to their end, as an API client would.
 */
import type { Store } from '../../workers/store/index.js';
import { answerDistricts } from '../answers/districts.js';
import { answerHealth } from '../answers/health.js';
import { answerHotspots } from '../answers/hotspots.js';
import { answerRankings } from '../answers/rankings.js';
import { answerScenes, type SceneAnswerRow } from '../answers/scenes.js';
import { answerSeries, answerTrends } from '../answers/trends.js';
import type { ReportAnswers } from './gather.js';

/** Every page of a paged answer, concatenated (`next_cursor` followed until null). */
async function allPages<A extends { next_cursor: string | null }, R>(page: (cursor?: string) => Promise<A>, rows: (a: A) => R[]): Promise<{ first: A; rows: R[] }> {
  const first = await page();
  const out = [...rows(first)];
  for (let next = first.next_cursor; next !== null; ) {
    const a = await page(next);
    out.push(...rows(a));
    next = a.next_cursor;
  }
  return { first, rows: out };
}

export function apiAnswers(store: Store): ReportAnswers {
  const memo = new Map<string, Promise<unknown>>();
  const ctx = { memo: <T>(key: string, compute: () => Promise<T>): Promise<T> => {
    if (!memo.has(key)) memo.set(key, compute());
    return memo.get(key) as Promise<T>;
  } };
  return {
    health: () => answerHealth(store),
    async districts(q) {
      const { first, rows } = await allPages((cursor) => answerDistricts(store, { ...q, cursor }, ctx), (a) => a.features);
      return { ...first, features: rows, next_cursor: null };
    },
    series: (district, q) => answerSeries(store, district, q, ctx),
    async trends(q) {
      const { first, rows } = await allPages((cursor) => answerTrends(store, { ...q, cursor }, ctx), (a) => a.rows);
      return { ...first, rows, next_cursor: null };
    },
    async rankings(q) {
      const { first, rows } = await allPages((cursor) => answerRankings(store, { ...q, order: 'desc', cursor }, ctx), (a) => a.rows);
      return { ...first, rows, next_cursor: null };
    },
    hotspots: (q) => answerHotspots(store, q, ctx),
    async scenes(): Promise<SceneAnswerRow[]> {
      return (await allPages((cursor) => answerScenes(store, { cursor }, ctx), (a) => a.rows)).rows;
    },
  };
}
