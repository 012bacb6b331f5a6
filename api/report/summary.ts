/**
 * The report's summary: the figures it states, taken from the API answers,
 * and the plain sentences that state them. Every number in the sentences is
 * one of these figures, written inside a `<data>` element holding its value.
 */
import type { DistrictsAnswer, RankingRow, RankingsAnswer, ReportData, TrendsAnswer } from './answers.js';
import { MIN_TREND_YEARS } from '../../workers/core/trend/index.js';
import { count, difference, esc, figure, fixed, listWords, type TemperatureUnit } from './text.js';

type SuhiField = 'suhi_night_k' | 'suhi_day_k';

/**
 * The city's SUHI of one answer: the mean of the districts' values weighted by
 * their area (area_m2), so a large district counts for more ground than a small
 * one; districts without a value are left out. Null when none has a value.
 */
export function cityMean(answer: DistrictsAnswer, field: SuhiField): number | null {
  let sum = 0;
  let area = 0;
  for (const f of answer.features) {
    const p = f.properties;
    const v = p[field];
    if (p.role !== 'district' || v === null || !Number.isFinite(v) || !(p.area_m2 > 0)) continue;
    sum += v * p.area_m2;
    area += p.area_m2;
  }
  return area > 0 ? sum / area : null;
}

/** Mean of the baseline years' city means (each year counts once); null when no year has a value. */
export function baselineMean(years: readonly DistrictsAnswer[], field: SuhiField): { value: number | null; years: number[] } {
  const pairs = years.map((a) => [a.year, cityMean(a, field)] as const).filter((p): p is readonly [number, number] => p[1] !== null);
  return { value: pairs.length ? pairs.reduce((s, p) => s + p[1], 0) / pairs.length : null, years: pairs.map((p) => p[0]) };
}

export interface TrendMention {
  district: string;
  name: string;
  slopePerDecade: number | null;
  q: number | null;
}

export interface SummaryFigures {
  cityNight: number | null;
  cityDay: number | null;
  /** Districts behind the city means. */
  districtsNight: number;
  districtsDay: number;
  baselineNight: number | null;
  baselineDay: number | null;
  /** Baseline years that had values (night). */
  baselineYears: number[];
  previousYear: number | null;
  previousNight: number | null;
  previousDay: number | null;
  warmingNight: TrendMention[];
  coolingNight: TrendMention[];
  warmingDay: TrendMention[];
  testedNight: number;
  testedDay: number;
  topNight: RankingRow[];
  topDay: RankingRow[];
  /** In this year's three hottest by night, not among them the year before. */
  newInTopNight: RankingRow[];
  /** The district that rose most places in the night ranking (rank_change > 0), or null. */
  biggestRiseNight: RankingRow | null;
}

const TOP = 3;

function mentions(t: TrendsAnswer, direction: 'increasing' | 'decreasing'): TrendMention[] {
  return t.rows
    .filter((r) => r.direction === direction)
    .map((r) => ({ district: r.district, name: r.name, slopePerDecade: r.slope_per_decade, q: r.q }))
    .sort((a, b) => Math.abs(b.slopePerDecade ?? 0) - Math.abs(a.slopePerDecade ?? 0));
}

function top(r: RankingsAnswer): RankingRow[] {
  return r.rows.filter((x) => x.value !== null).slice(0, TOP);
}

function withValue(a: DistrictsAnswer, field: SuhiField): number {
  return a.features.filter((f) => f.properties.role === 'district' && f.properties[field] !== null).length;
}

export function summaryFigures(d: ReportData): SummaryFigures {
  const night = baselineMean(d.baselineYears, 'suhi_night_k');
  const day = baselineMean(d.baselineYears, 'suhi_day_k');
  const topNight = top(d.rankingNight);
  return {
    cityNight: cityMean(d.districts, 'suhi_night_k'),
    cityDay: cityMean(d.districts, 'suhi_day_k'),
    districtsNight: withValue(d.districts, 'suhi_night_k'),
    districtsDay: withValue(d.districts, 'suhi_day_k'),
    baselineNight: night.value,
    baselineDay: day.value,
    baselineYears: night.years,
    previousYear: d.previous?.year ?? null,
    previousNight: d.previous ? cityMean(d.previous, 'suhi_night_k') : null,
    previousDay: d.previous ? cityMean(d.previous, 'suhi_day_k') : null,
    warmingNight: mentions(d.trendsNight, 'increasing'),
    coolingNight: mentions(d.trendsNight, 'decreasing'),
    warmingDay: mentions(d.trendsDay, 'increasing'),
    testedNight: d.trendsNight.districts_tested,
    testedDay: d.trendsDay.districts_tested,
    topNight,
    topDay: top(d.rankingDay),
    newInTopNight: topNight.filter((r) => r.previous_rank !== null && r.previous_rank > TOP),
    biggestRiseNight: d.rankingNight.rows.reduce<RankingRow | null>((best, r) => ((r.rank_change ?? 0) > 0 && (best === null || (r.rank_change ?? 0) > (best.rank_change ?? 0)) ? r : best), null),
  };
}

/** A count that opens a sentence: in words up to twelve ("Six"), else digits. */
function startOfSentence(n: number): string {
  const words = ['No', 'One', 'Two', 'Three', 'Four', 'Five', 'Six', 'Seven', 'Eight', 'Nine', 'Ten', 'Eleven', 'Twelve'];
  return n < words.length ? words[n] : String(n);
}

/** "the fifth", "the 12th": a rank in words for small numbers. */
function ordinal(n: number): string {
  const words = ['', 'first', 'second', 'third', 'fourth', 'fifth', 'sixth', 'seventh', 'eighth', 'ninth', 'tenth'];
  if (n < words.length) return words[n];
  const s = n % 100 >= 11 && n % 100 <= 13 ? 'th' : ({ 1: 'st', 2: 'nd', 3: 'rd' } as Record<number, string>)[n % 10] ?? 'th';
  return `${n}${s}`;
}

/** "higher by 0.41 °C", "lower by 0.12 °C", "unchanged". */
function change(name: string, delta: number | null, units: TemperatureUnit): string {
  if (delta === null) return 'not comparable';
  const shown = fixed(Math.abs(delta), 2);
  if (shown === fixed(0, 2)) return `unchanged (${figure(name, delta, difference(delta, units))})`;
  return `${delta > 0 ? 'higher' : 'lower'} by ${figure(name, delta, `${shown} ${units === 'C' ? '°C' : 'K'}`)}`;
}

function ranked(rows: readonly RankingRow[], key: string, units: TemperatureUnit): string {
  return listWords(rows.map((r) => `${esc(r.name)} (${figure(`${key}_${r.district}`, r.value, difference(r.value, units, 1))})`));
}

function trendNames(list: readonly TrendMention[], key: string, units: TemperatureUnit): string {
  return listWords(list.map((t) => `${esc(t.name)} (${figure(`${key}_${t.district}`, t.slopePerDecade, `${difference(t.slopePerDecade, units)} per decade`)})`));
}

/** The summary as HTML paragraphs (plain sentences for a council reader). */
export function summarySentences(d: ReportData, f: SummaryFigures): string[] {
  const u = d.request.units;
  const { year } = d.request;
  const when = d.request.season === 'all' ? String(year) : `${d.request.season} ${year} (${d.selection.label})`;
  const out: string[] = [];

  if (f.cityNight === null && f.cityDay === null) {
    out.push(`The store holds no heat-island values for ${esc(when)}: no district had enough clear days. The sections below show what data there is.`);
    return out;
  }
  out.push(
    `In ${esc(when)} the city's districts were on average ${figure('city_suhi_night_k', f.cityNight, difference(f.cityNight, u))} warmer than the surrounding countryside at night ` +
      `and ${figure('city_suhi_day_k', f.cityDay, difference(f.cityDay, u))} by day ` +
      `(surface heat island: district minus rural surface temperature, averaged over ${figure('districts_with_values_night', f.districtsNight, count(f.districtsNight, 'district'))} weighted by area; a negative figure means cooler than the countryside).`,
  );

  const b = d.request.baseline;
  const period = b.from === b.to ? String(b.from) : `${b.from}–${b.to}`;
  if (b.from === year && b.to === year) {
    out.push(`No year before ${year} is stored, so there is no baseline to compare with.`);
  } else if (f.baselineNight === null) {
    out.push(`No year of the baseline period ${period} has values in the store, so this year cannot be compared with it.`);
  } else {
    const missing = b.to - b.from + 1 - f.baselineYears.length;
    out.push(
      `In the baseline period ${period}${missing > 0 ? ` (${count(f.baselineYears.length, 'year')} with data: ${f.baselineYears.join(', ')})` : ''} the same figures were ` +
        `${figure('baseline_suhi_night_k', f.baselineNight, difference(f.baselineNight, u))} at night and ${figure('baseline_suhi_day_k', f.baselineDay, difference(f.baselineDay, u))} by day: ` +
        `this year the night heat island is ${change('night_vs_baseline_k', f.cityNight === null ? null : f.cityNight - f.baselineNight, u)} ` +
        `and the day heat island ${change('day_vs_baseline_k', f.cityDay === null || f.baselineDay === null ? null : f.cityDay - f.baselineDay, u)}.`,
    );
  }

  const first = d.health.years.length ? Math.min(...d.health.years) : year;
  const span = `${first}–${year}`;
  const fdr = `after allowing for the ${figure('districts_tested_night', f.testedNight, String(f.testedNight))} districts tested (false discovery rate ${Math.round(d.request.alpha * 100)} %)`;
  if (f.testedNight === 0) {
    out.push(`Whether the heat island is growing cannot be said yet: a trend needs at least ${MIN_TREND_YEARS} years with enough clear days, and no district has them up to ${year}.`);
  } else if (f.warmingNight.length === 0) {
    out.push(`No district shows a significant warming of its night heat island over ${span} ${fdr}.`);
  } else {
    out.push(
      `${figure('warming_night_count', f.warmingNight.length, `${startOfSentence(f.warmingNight.length)} ${f.warmingNight.length === 1 ? 'district' : 'districts'}`)} show${f.warmingNight.length === 1 ? 's' : ''} a significant warming of the night heat island over ${span} ${fdr}: ` +
        `${trendNames(f.warmingNight, 'warming_night_per_decade', u)}.`,
    );
  }
  if (f.testedNight > 0 && f.coolingNight.length) out.push(`${count(f.coolingNight.length, 'district')} cool${f.coolingNight.length === 1 ? 's' : ''} significantly at night: ${trendNames(f.coolingNight, 'cooling_night_per_decade', u)}.`);
  if (f.testedDay > 0) out.push(
    f.warmingDay.length
      ? `By day, ${figure('warming_day_count', f.warmingDay.length, count(f.warmingDay.length, 'district'))} warm${f.warmingDay.length === 1 ? 's' : ''} significantly: ${trendNames(f.warmingDay, 'warming_day_per_decade', u)}.`
      : 'By day, no district warms significantly.',
  );

  if (f.topNight.length) out.push(`Hottest at night this year: ${ranked(f.topNight, 'top_night', u)}. Hottest by day: ${ranked(f.topDay, 'top_day', u)}.`);

  if (f.previousYear === null) {
    out.push(`There are no values for ${year - 1} to compare with.`);
  } else {
    const parts: string[] = [
      `Since ${f.previousYear} the city's night heat island is ${change('night_since_last_year_k', f.cityNight === null || f.previousNight === null ? null : f.cityNight - f.previousNight, u)} ` +
        `and its day heat island ${change('day_since_last_year_k', f.cityDay === null || f.previousDay === null ? null : f.cityDay - f.previousDay, u)}.`,
    ];
    if (f.newInTopNight.length) {
      parts.push(`New among the three hottest at night: ${listWords(f.newInTopNight.map((r) => `${esc(r.name)} (${figure(`previous_rank_${r.district}`, r.previous_rank, ordinal(r.previous_rank as number))} last year)`))}.`);
    } else if (f.topNight.length) {
      parts.push('The three hottest districts at night are the same as last year.');
    }
    const rise = f.biggestRiseNight;
    if (rise) parts.push(`The largest move up the night ranking: ${esc(rise.name)}, up ${figure('largest_rise_places', rise.rank_change, count(rise.rank_change as number, 'place'))} to ${figure('largest_rise_rank', rise.rank, ordinal(rise.rank))}.`);
    out.push(parts.join(' '));
  }
  return out;
}
