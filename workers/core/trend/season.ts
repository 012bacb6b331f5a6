/**
 * Which months make a season, and which year a month counts in.
 * Meteorological seasons (three whole months; common practice, no source):
 * north of the equator summer = June–August, autumn = September–November,
 * winter = December–February, spring = March–May; south of it they swap.
 * A season across the new year (e.g. December–February) belongs to the year
 * of its January: its December counts with the following year.
 */
import { InputError } from '../errors.js';

export type SeasonName = 'summer' | 'winter' | 'spring' | 'autumn' | 'all';
export const SEASON_NAMES: readonly SeasonName[] = ['summer', 'winter', 'spring', 'autumn', 'all'];
export type Hemisphere = 'north' | 'south';

export interface MonthSelection {
  /** Months kept, 1-12, in season order; null = every month. */
  months: number[] | null;
  /** First month that counts with the next year (null when the season does not cross the new year). */
  wrapFromMonth: number | null;
  /** e.g. "Jun-Aug" or "all months". */
  label: string;
}

const MONTH_ABBR = ['Jan', 'Feb', 'Mar', 'Apr', 'May', 'Jun', 'Jul', 'Aug', 'Sep', 'Oct', 'Nov', 'Dec'];

function selection(months: number[]): MonthSelection {
  const set = new Set(months);
  if (set.size === 12) return { months: null, wrapFromMonth: null, label: 'all months' };
  let wrapFromMonth: number | null = null;
  if (set.has(12) && set.has(1)) {
    let m = 12;
    while (set.has(m - 1)) m--;
    wrapFromMonth = m;
  }
  const ordered = [...set].sort((a, b) => {
    const ka = wrapFromMonth !== null && a >= wrapFromMonth ? a - 12 : a;
    const kb = wrapFromMonth !== null && b >= wrapFromMonth ? b - 12 : b;
    return ka - kb;
  });
  const contiguous = ordered.every((m, i) => i === 0 || m === (ordered[i - 1] % 12) + 1);
  const label = contiguous && ordered.length > 1
    ? `${MONTH_ABBR[ordered[0] - 1]}-${MONTH_ABBR[ordered[ordered.length - 1] - 1]}`
    : ordered.map((m) => MONTH_ABBR[m - 1]).join(',');
  return { months: ordered, wrapFromMonth, label };
}

/**
 * `--months` text: a range "6-8" (or "12-2" across the new year) or a list "6,7,8".
 * @throws InputError naming the option and the text
 * @example parseMonths('12-2') // { months: [12, 1, 2], wrapFromMonth: 12, label: 'Dec-Feb' }
 */
export function parseMonths(text: string, where = '--months'): MonthSelection {
  const bad = (): never => { throw new InputError(`${where} must be a month range like 6-8 or 12-2, or a list like 6,7,8 (months 1-12), got "${text}"`); };
  const month = (s: string): number => {
    const m = Number(s.trim());
    if (!Number.isInteger(m) || m < 1 || m > 12 || s.trim() === '') bad();
    return m;
  };
  const t = text.trim();
  const range = /^(\d{1,2})\s*-\s*(\d{1,2})$/.exec(t);
  if (range) {
    const a = month(range[1]), b = month(range[2]);
    const months: number[] = [];
    for (let m = a; ; m = (m % 12) + 1) { months.push(m); if (m === b) break; }
    return selection(months);
  }
  if (!/^[\d\s,]+$/.test(t)) bad();
  return selection(t.split(',').map(month));
}

/** Months of a named season in a hemisphere. @example seasonMonths('summer', 'south').label // 'Dec-Feb' */
export function seasonMonths(season: SeasonName, hemisphere: Hemisphere): MonthSelection {
  if (season === 'all') return { months: null, wrapFromMonth: null, label: 'all months' };
  const north: Record<Exclude<SeasonName, 'all'>, string> = { summer: '6-8', autumn: '9-11', winter: '12-2', spring: '3-5' };
  const swap: Record<Exclude<SeasonName, 'all'>, Exclude<SeasonName, 'all'>> = { summer: 'winter', winter: 'summer', spring: 'autumn', autumn: 'spring' };
  return parseMonths(north[hemisphere === 'north' ? season : swap[season]]);
}

/** Hemisphere of a latitude (degrees; the equator counts as north). */
export function hemisphereOf(latitudeDegrees: number): Hemisphere {
  return latitudeDegrees >= 0 ? 'north' : 'south';
}

/** Season-year of a calendar date under a selection (the year of its January for a season across the new year). */
export function seasonYear(year: number, month: number, sel: MonthSelection): number {
  return sel.wrapFromMonth !== null && month >= sel.wrapFromMonth ? year + 1 : year;
}

/** True when the month is in the selection. */
export function monthSelected(month: number, sel: MonthSelection): boolean {
  return sel.months === null || sel.months.includes(month);
}
