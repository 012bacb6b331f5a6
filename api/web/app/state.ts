/**
 * What the page shows, kept in the address so a link can be shared:
 * `?metric=suhi_night&year=2024&season=summer&unit=C&district=D07&spots=1&sort=value&dir=desc`.
 * Pure functions (no DOM), so they can be tested in Node.
 */
import { isMetricName, type MetricName, type TemperatureUnit } from '../draw/metrics.js';

export const SEASONS = ['summer', 'autumn', 'winter', 'spring', 'all'] as const;
export type Season = (typeof SEASONS)[number];

/** Table columns the table can be sorted by. */
export const SORT_KEYS = ['rank', 'name', 'value', 'rank_change', 'trend', 'lst_day', 'lst_night', 'suhi_day', 'suhi_night', 'ati', 'dates'] as const;
export type SortKey = (typeof SORT_KEYS)[number];

export interface ViewState {
  metric: MetricName;
  /** null: the latest year with values (the API's default). */
  year: number | null;
  season: Season;
  unit: TemperatureUnit;
  district: string | null;
  spots: boolean;
  sort: SortKey;
  dir: 'asc' | 'desc';
}

export const DEFAULT_STATE: ViewState = { metric: 'suhi_night', year: null, season: 'summer', unit: 'K', district: null, spots: false, sort: 'rank', dir: 'asc' };

/** The state an address asks for; anything not understood falls back to the default. */
export function parseState(search: string): ViewState {
  const q = new URLSearchParams(search);
  const s: ViewState = { ...DEFAULT_STATE };
  const metric = q.get('metric');
  if (isMetricName(metric)) s.metric = metric;
  const year = q.get('year');
  if (year !== null && /^[0-9]{4}$/.test(year)) s.year = Number(year);
  const season = q.get('season');
  if (season !== null && (SEASONS as readonly string[]).includes(season)) s.season = season as Season;
  if (q.get('unit') === 'C') s.unit = 'C';
  const district = q.get('district');
  if (district !== null && district !== '' && district.length <= 200) s.district = district;
  s.spots = q.get('spots') === '1';
  const sort = q.get('sort');
  if (sort !== null && (SORT_KEYS as readonly string[]).includes(sort)) s.sort = sort as SortKey;
  const dir = q.get('dir');
  if (dir === 'asc' || dir === 'desc') s.dir = dir;
  return s;
}

/** The address query of a state; defaults are left out except metric and year, which a shared link always names. */
export function stateToSearch(s: ViewState): string {
  const q = new URLSearchParams();
  q.set('metric', s.metric);
  if (s.year !== null) q.set('year', String(s.year));
  if (s.season !== DEFAULT_STATE.season) q.set('season', s.season);
  if (s.unit !== DEFAULT_STATE.unit) q.set('unit', s.unit);
  if (s.district !== null) q.set('district', s.district);
  if (s.spots) q.set('spots', '1');
  if (s.sort !== DEFAULT_STATE.sort) q.set('sort', s.sort);
  if (s.dir !== DEFAULT_STATE.dir) q.set('dir', s.dir);
  return `?${q.toString()}`;
}
