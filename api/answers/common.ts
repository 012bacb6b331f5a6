/**
 * What every answer shares: the metric names and units, the season → months
 * choice, paging with a cursor, and the memo through which a server keeps what
 * depends only on the store's last run.
 *
 * Each answer function takes the store and the parsed query (plain values,
 * already checked) and returns the JSON body of its route; the HTTP routes and
 * the report call the same functions, so their numbers are the same.
 */
import { InputError } from '../../workers/core/errors.js';
import { seasonMonths, type Hemisphere, type MonthSelection, type SeasonName } from '../../workers/core/trend/index.js';
import { storedHemisphere } from '../../workers/store/district-statistics.js';
import { SERIES_METRICS, type SeriesMetric } from '../../workers/store/series.js';
import type { Store } from '../../workers/store/index.js';

export { SERIES_METRICS as METRICS, type SeriesMetric as Metric };
export { SEASON_NAMES as SEASONS, type SeasonName as Season } from '../../workers/core/trend/index.js';

/** Unit of each measured field (the suffix of its name). */
export const UNITS = { lst_day_k: 'K', lst_night_k: 'K', suhi_day_k: 'K', suhi_night_k: 'K', ati_per_k: '1/K' } as const;
export type MetricProperty = keyof typeof UNITS;

/** The property (field) name of each metric, unit included. */
export const METRIC_PROPERTY: Readonly<Record<SeriesMetric, MetricProperty>> = {
  lst_day: 'lst_day_k', lst_night: 'lst_night_k', suhi_day: 'suhi_day_k', suhi_night: 'suhi_night_k', ati: 'ati_per_k',
};

/** 'K' for LST and SUHI, '1/K' for ATI. */
export function unitOf(metric: SeriesMetric): 'K' | '1/K' {
  return metric === 'ati' ? '1/K' : 'K';
}

/** Rows a page holds unless `limit` says otherwise, and the most it may ask for. */
export const LIMIT_DEFAULT = 500;
export const LIMIT_MAX = 5000;

/** Keeps a computed value while the store's last run stays the same (a server passes one; a single call needs none). */
export type Memo = <T>(key: string, compute: () => Promise<T>) => Promise<T>;

/** No memory: every call computes. */
export const noMemo: Memo = (_key, compute) => compute();

export interface AnswerContext {
  memo?: Memo;
}

/** The hemisphere of the stored districts (it decides the months of a season). */
export function districtsHemisphere(store: Store, memo: Memo = noMemo): Promise<Hemisphere> {
  return memo('hemisphere', () => storedHemisphere(store));
}

/** The months of a season, the hemisphere taken from the stored districts. */
export async function seasonSelection(store: Store, season: SeasonName, memo: Memo = noMemo): Promise<MonthSelection> {
  return seasonMonths(season, await districtsHemisphere(store, memo));
}

/**
 * A year asked for that has no values (for the season asked, when there is one): a 404 naming
 * the years that have values, which the error body also carries as `years`.
 */
export class YearWithoutValuesError extends InputError {
  readonly statusCode = 404;
  readonly years: number[];
  constructor(year: number, years: readonly number[], season?: SeasonName) {
    const which = season === undefined || season === 'all' ? '' : ` for season ${season}`;
    const known = years.length ? `years with values${which}: ${years.join(', ')}` : which ? `no year has values${which}` : 'the store has no values yet';
    super(`query parameter year: ${year} has no values${which} in the store; ${known}`);
    this.years = [...years];
  }
}

/** Refuses (404) a year asked for that is not among `years`, the years with values; no year asked passes. */
export function requireYearWithValues(year: number | undefined, years: readonly number[], season?: SeasonName): void {
  if (year !== undefined && !years.includes(year)) throw new YearWithoutValuesError(year, years, season);
}

const CURSOR_RE = /^[A-Za-z0-9_-]{1,400}$/;

/** An opaque cursor (base64url of a small JSON value). */
export function encodeCursor(value: unknown): string {
  return Buffer.from(JSON.stringify(value), 'utf8').toString('base64url');
}

/** The value inside a cursor this server gave, checked by `isValid`; anything else is refused by name. */
export function decodeCursor<T>(text: string, isValid: (v: unknown) => v is T): T {
  let v: unknown;
  try {
    if (!CURSOR_RE.test(text)) throw new Error('shape');
    v = JSON.parse(Buffer.from(text, 'base64url').toString('utf8'));
  } catch {
    v = undefined;
  }
  if (!isValid(v)) throw new InputError('query parameter cursor is not one this server gave; omit it for the first page, then pass next_cursor of the previous page');
  return v;
}

const isKeyCursor = (v: unknown): v is { after: string } =>
  !!v && typeof v === 'object' && typeof (v as { after?: unknown }).after === 'string' && (v as { after: string }).after.length <= 200;

/** Byte order of UTF-8 strings (PostgreSQL's COLLATE "C"), the order of district ids. */
export function byteOrder(a: string, b: string): number {
  return Buffer.compare(Buffer.from(a, 'utf8'), Buffer.from(b, 'utf8'));
}

/**
 * One page of `rows` (already in byte order of `key`): the rows after the
 * cursor's key, at most `limit`, and the cursor of the next page (null on the last).
 */
export function pageByKey<T>(rows: readonly T[], key: (r: T) => string, limit: number, cursor?: string): { rows: T[]; next_cursor: string | null } {
  let start = 0;
  if (cursor !== undefined) {
    const after = decodeCursor(cursor, isKeyCursor).after;
    start = rows.findIndex((r) => byteOrder(key(r), after) > 0);
    if (start < 0) start = rows.length;
  }
  const page = rows.slice(start, start + limit);
  const more = start + limit < rows.length;
  return { rows: page, next_cursor: more && page.length ? encodeCursor({ after: key(page[page.length - 1]) }) : null };
}
