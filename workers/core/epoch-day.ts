/**
 * Calendar dates as days since 1970-01-01 (UTC), the count PostgreSQL's binary
 * date and Parquet's DATE both use, and back: the one conversion between that
 * count and the 'YYYY-MM-DD' text the tables carry.
 *
 * @example epochDayOf('2024-07-14') // 19918; dateOfEpochDay(19918) // '2024-07-14'
 */

const MS_PER_DAY = 86_400_000;

/** Days since 1970-01-01 of a 'YYYY-MM-DD' date (negative before it). */
export function epochDayOf(date: string): number {
  return Math.round(Date.parse(`${date}T00:00:00Z`) / MS_PER_DAY);
}

/** The 'YYYY-MM-DD' date `day` days after 1970-01-01. */
export function dateOfEpochDay(day: number): string {
  return new Date(day * MS_PER_DAY).toISOString().slice(0, 10);
}
