/**
 * Reading the heatledger API from the page: same-origin JSON requests, lists
 * followed through `next_cursor` until the last page, answers kept per address
 * for the life of the page.
 */
import type { Geometry } from 'geojson';

// The answers' own types as the server declares them, type-only (nothing of the server is bundled); the
// districts answer differs only in its geometry, typed as GeoJSON for the map.
import type { DistrictProperties, DistrictsAnswer as StoredDistrictsAnswer } from '../../answers/districts.js';
import type { HotspotsAnswer } from '../../answers/hotspots.js';
import type { RankingsAnswer } from '../../answers/rankings.js';
import type { ScenesAnswer } from '../../answers/scenes.js';
import type { SeriesAnswer, TrendsAnswer } from '../../answers/trends.js';

export type { DistrictProperties, HotspotsAnswer, RankingsAnswer, SeriesAnswer, TrendsAnswer };
export type { RankingRow } from '../../answers/rankings.js';
export type { SceneAnswerRow as SceneRow } from '../../answers/scenes.js';
export type { TrendFields, TrendRow } from '../../answers/trends.js';

export interface DistrictsAnswer extends Omit<StoredDistrictsAnswer, 'features'> {
  features: { type: 'Feature'; id: string; geometry: Geometry | null; properties: DistrictProperties }[];
}

/** An answer the page could not use, in one sentence for the reader; the HTTP status when the server answered. */
export class ApiProblem extends Error {
  constructor(message: string, readonly status: number | null = null) {
    super(message);
  }
}

const cache = new Map<string, Promise<unknown>>();

async function getJson<T>(url: string): Promise<T> {
  let res: Response;
  try {
    res = await fetch(url, { headers: { accept: 'application/json' } });
  } catch {
    throw new ApiProblem(`The server did not answer (${url.split('?')[0]}). Is heatledger serve still running?`);
  }
  if (!res.ok) {
    let detail = '';
    try {
      detail = ((await res.json()) as { error?: string }).error ?? '';
    } catch {
      /* not JSON */
    }
    throw new ApiProblem(`The server answered ${res.status} for ${url.split('?')[0]}${detail ? `: ${detail}` : ''}.`, res.status);
  }
  return (await res.json()) as T;
}

/** One answer per address, asked once. */
export function cached<T>(url: string, load: (url: string) => Promise<T>): Promise<T> {
  let p = cache.get(url) as Promise<T> | undefined;
  if (!p) {
    p = load(url);
    cache.set(url, p);
    p.catch(() => cache.delete(url)); // a failed request is asked again next time
  }
  return p;
}

/** A list answer with every page joined: `key` is 'rows' or 'features'. */
async function allPages<T extends { next_cursor: string | null }>(url: string, key: 'rows' | 'features'): Promise<T> {
  const first = await getJson<T>(url);
  const items = [...((first as unknown as Record<string, unknown[]>)[key] ?? [])];
  let cursor = first.next_cursor;
  for (let guard = 0; cursor !== null && cursor !== undefined && guard < 1000; guard++) {
    const sep = url.includes('?') ? '&' : '?';
    const next = await getJson<T>(`${url}${sep}cursor=${encodeURIComponent(cursor)}`);
    items.push(...((next as unknown as Record<string, unknown[]>)[key] ?? []));
    cursor = next.next_cursor;
  }
  return { ...first, [key]: items, next_cursor: null };
}

const qs = (params: Record<string, string | number | boolean | null | undefined>) => {
  const q = new URLSearchParams();
  for (const [k, v] of Object.entries(params)) if (v !== null && v !== undefined) q.set(k, String(v));
  const s = q.toString();
  return s ? `?${s}` : '';
};

export const urls = {
  districts: (p: { year: number | null; season: string; metric: string }, format?: 'csv') => `/api/districts${qs({ ...p, format })}`,
  rankings: (p: { year: number; season: string; metric: string }) => `/api/rankings${qs({ ...p, order: 'desc' })}`,
  trends: (p: { season: string; metric: string }) => `/api/trends${qs(p)}`,
  hotspots: (p: { year: number; season: string; metric: string }) => `/api/hotspots${qs(p)}`,
  series: (id: string, p: { season: string; metric: string }) => `/api/districts/${encodeURIComponent(id)}/series${qs({ ...p, dates: true })}`,
  scenes: (p: { from: string; to: string }) => `/api/scenes${qs(p)}`,
};

export const api = {
  districts: (p: Parameters<typeof urls.districts>[0]) => cached(urls.districts(p), (u) => allPages<DistrictsAnswer>(u, 'features')),
  rankings: (p: Parameters<typeof urls.rankings>[0]) => cached(urls.rankings(p), (u) => allPages<RankingsAnswer>(u, 'rows')),
  trends: (p: Parameters<typeof urls.trends>[0]) => cached(urls.trends(p), (u) => allPages<TrendsAnswer>(u, 'rows')),
  hotspots: (p: Parameters<typeof urls.hotspots>[0]) => cached(urls.hotspots(p), (u) => getJson<HotspotsAnswer>(u)),
  series: (id: string, p: Parameters<typeof urls.series>[1]) => cached(urls.series(id, p), (u) => getJson<SeriesAnswer>(u)),
  scenes: (p: Parameters<typeof urls.scenes>[0]) => cached(urls.scenes(p), (u) => allPages<ScenesAnswer>(u, 'rows')),
};
