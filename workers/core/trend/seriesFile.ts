/**
 * A single series from CSV text: a header `year,value` or `date,value`
 * (date as YYYY-MM-DD), one row per year or date; a blank value or `NA`
 * is missing. Dates are averaged into season-years (see season.ts).
 */
import { InputError } from '../errors.js';
import { monthSelected, seasonYear, type MonthSelection } from './season.js';
import type { PeriodMean } from './yearly.js';

export interface ParsedSeries {
  kind: 'year' | 'date';
  /** One entry per year (year files) or per season-year (date files; dates = dates with a value). */
  periods: PeriodMean[];
  /** Years (or season-years) whose every row was missing. */
  missingYears: number[];
}

function splitLine(line: string): string[] {
  return line.split(',').map((s) => s.trim().replace(/^"(.*)"$/, '$1').trim());
}

/**
 * @param text the file's contents
 * @param source the file name, for messages
 * @param sel months kept for date files (year files ignore it)
 * @throws InputError naming the file and line for anything malformed
 * @example parseSeriesCsv('year,value\n2019,1.5\n2020,NA\n', 'x.csv', allMonths)
 */
export function parseSeriesCsv(text: string, source: string, sel: MonthSelection): ParsedSeries {
  const lines = text.replace(/^\uFEFF/, '').split(/\r?\n/);
  const firstIdx = lines.findIndex((l) => l.trim() !== '');
  if (firstIdx < 0) throw new InputError('the file is empty; expected a header "year,value" or "date,value"', source);
  const head = splitLine(lines[firstIdx]).map((h) => h.toLowerCase());
  if (head.length !== 2 || (head[0] !== 'year' && head[0] !== 'date') || head[1] !== 'value') {
    throw new InputError(`line ${firstIdx + 1}: the header must be "year,value" or "date,value", got "${lines[firstIdx].trim()}"`, source);
  }
  const kind = head[0] as 'year' | 'date';
  const sums = new Map<number, { sum: number; dates: number; rows: number }>();
  const seen = new Set<string>();
  for (let i = firstIdx + 1; i < lines.length; i++) {
    const raw = lines[i];
    if (raw.trim() === '') continue;
    const cells = splitLine(raw);
    const where = `line ${i + 1}`;
    if (cells.length !== 2) throw new InputError(`${where}: expected 2 fields (${kind},value), got ${cells.length}`, source);
    const [key, v] = cells;
    let year: number;
    if (kind === 'year') {
      if (!/^\d{4}$/.test(key)) throw new InputError(`${where}: "${key}" is not a four-digit year`, source);
      year = Number(key);
    } else {
      const m = /^(\d{4})-(\d{2})-(\d{2})$/.exec(key);
      const d = m ? new Date(Date.UTC(Number(m[1]), Number(m[2]) - 1, Number(m[3]))) : null;
      if (!m || !d || d.getUTCMonth() !== Number(m[2]) - 1 || d.getUTCDate() !== Number(m[3])) {
        throw new InputError(`${where}: "${key}" is not a date YYYY-MM-DD`, source);
      }
      const month = Number(m[2]);
      if (!monthSelected(month, sel)) continue;
      year = seasonYear(Number(m[1]), month, sel);
    }
    if (seen.has(key)) throw new InputError(`${where}: ${kind} ${key} appears twice`, source);
    seen.add(key);
    let value: number | null = null;
    if (v !== '' && v.toUpperCase() !== 'NA') {
      value = Number(v);
      if (!Number.isFinite(value)) throw new InputError(`${where}: value "${v}" is not a number (leave it blank or write NA when missing)`, source);
    }
    const acc = sums.get(year) ?? { sum: 0, dates: 0, rows: 0 };
    acc.rows++;
    if (value !== null) { acc.sum += value; acc.dates++; }
    sums.set(year, acc);
  }
  if (sums.size === 0) throw new InputError(`no data rows after the header${kind === 'date' ? ' (in the months selected)' : ''}`, source);
  const periods: PeriodMean[] = [];
  const missingYears: number[] = [];
  for (const [year, a] of [...sums].sort((p, q) => p[0] - q[0])) {
    if (a.dates === 0) missingYears.push(year);
    else periods.push({ year, dates: kind === 'year' ? 1 : a.dates, value: a.sum / a.dates });
  }
  return { kind, periods, missingYears };
}
