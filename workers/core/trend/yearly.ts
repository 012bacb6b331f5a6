/**
 * From per-period means with their date counts to the yearly series a trend
 * is computed on: years with fewer than `minDates` dates are left out (and
 * listed), nothing is filled in.
 */
export interface PeriodMean {
  year: number;
  /** Dates the mean is over. */
  dates: number;
  value: number;
}

export interface YearlySeries {
  years: number[];
  values: number[];
  /** Dates each kept year used, same order. */
  dates: number[];
  /** Years left out for too few dates, with their counts. */
  tooFew: { year: number; dates: number }[];
}

/**
 * @param from first year kept (inclusive), or undefined
 * @param to last year kept (inclusive), or undefined
 * @example yearlySeries([{ year: 2019, dates: 5, value: 1.2 }], 3) // { years: [2019], values: [1.2], dates: [5], tooFew: [] }
 */
export function yearlySeries(periods: readonly PeriodMean[], minDates: number, from?: number, to?: number): YearlySeries {
  const out: YearlySeries = { years: [], values: [], dates: [], tooFew: [] };
  for (const p of [...periods].sort((a, b) => a.year - b.year)) {
    if ((from !== undefined && p.year < from) || (to !== undefined && p.year > to)) continue;
    if (p.dates < minDates) { out.tooFew.push({ year: p.year, dates: p.dates }); continue; }
    out.years.push(p.year);
    out.values.push(p.value);
    out.dates.push(p.dates);
  }
  return out;
}

/** "2019:10,2020:9" — each kept year with its date count. */
export function datesPerYearText(s: YearlySeries): string {
  return s.years.map((y, i) => `${y}:${s.dates[i]}`).join(',');
}

/** A series' note with the years left out for too few dates appended (e.g. "left out for fewer than 3 dates: 2017 (2)"). */
export function noteWithDrops(note: string | null, tooFew: { year: number; dates: number }[], minDates: number): string | null {
  if (tooFew.length === 0) return note;
  const drop = `left out for fewer than ${minDates} dates: ${tooFew.map((t) => `${t.year} (${t.dates})`).join(', ')}`;
  return note ? `${note}; ${drop}` : drop;
}
