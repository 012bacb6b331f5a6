/**
 * Row output for the CLI: JSON, CSV and an aligned text table.
 * Rows are flat objects of numbers, strings and nulls; the column order is the
 * key order of the first row (or `columns` when given).
 */
export type Cell = string | number | boolean | null | undefined;
export type Row = { readonly [key: string]: Cell };
export type OutputFormat = 'json' | 'csv' | 'table';

export const OUTPUT_FORMATS: readonly OutputFormat[] = ['json', 'csv', 'table'];

/** JSON array, one object per row, `null` for undefined values. */
export function toJson(rows: readonly Row[]): string {
  return JSON.stringify(rows, (_k, v) => (v === undefined ? null : v), 2);
}

/**
 * Text that a spreadsheet would run as a formula: a cell beginning with `=`, `+`,
 * `-`, `@`, tab or carriage return. OWASP, "CSV Injection" (owasp.org/www-community/attacks/CSV_Injection):
 * prepend a single quote to such a cell and wrap the cell in double quotes.
 */
const FORMULA_START = /^[=+\-@\t\r]/;

function csvCell(v: Cell): string {
  if (v === null || v === undefined) return '';
  // numbers (a negative SUHI such as -1.2345) stay numbers: only text cells are escaped
  if (typeof v === 'number') return Number.isFinite(v) ? String(v) : '';
  const s = String(v);
  if (typeof v === 'string' && FORMULA_START.test(s)) return `"'${s.replace(/"/g, '""')}"`;
  return /[",\n\r]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}

/**
 * RFC 4180 CSV with a header line; empty cells for null. Numbers at full precision.
 * Text cells that a spreadsheet would read as a formula are escaped (see `csvCell`).
 */
export function toCsv(rows: readonly Row[], columns?: readonly string[]): string {
  const cols = columns ?? (rows.length > 0 ? Object.keys(rows[0]) : []);
  const lines = [cols.map((c) => csvCell(c)).join(',')];
  for (const r of rows) lines.push(cols.map((c) => csvCell(r[c])).join(','));
  return lines.join('\n') + '\n';
}

export interface TableOptions {
  columns?: readonly string[];
  /** Header label per column (e.g. with units); defaults to the key. */
  labels?: Record<string, string>;
  /** Decimals per column for numbers; default: integers as they are, others 3. */
  decimals?: Record<string, number>;
}

/** Aligned plain-text table for a terminal. */
export function toTable(rows: readonly Row[], options: TableOptions = {}): string {
  const cols = options.columns ?? (rows.length > 0 ? Object.keys(rows[0]) : []);
  const fmt = (c: string, v: Cell): string => {
    if (v === null || v === undefined) return '-';
    if (typeof v === 'number') {
      if (!Number.isFinite(v)) return '-';
      const d = options.decimals?.[c];
      if (d !== undefined) return v.toFixed(d);
      return Number.isInteger(v) ? String(v) : v.toFixed(3);
    }
    return String(v);
  };
  const head = cols.map((c) => options.labels?.[c] ?? c);
  const body = rows.map((r) => cols.map((c) => fmt(c, r[c])));
  const widths = head.map((h, i) => Math.max(h.length, ...body.map((b) => b[i].length)));
  const numeric = cols.map((c) => rows.some((r) => typeof r[c] === 'number'));
  const line = (cells: string[]) =>
    cells.map((s, i) => (numeric[i] ? s.padStart(widths[i]) : s.padEnd(widths[i]))).join('  ').trimEnd();
  return [line(head), line(widths.map((w) => '-'.repeat(w))), ...body.map(line)].join('\n') + '\n';
}

export function formatRows(rows: readonly Row[], format: OutputFormat, options: TableOptions = {}): string {
  if (format === 'json') return toJson(rows) + '\n';
  if (format === 'csv') return toCsv(rows, options.columns);
  return toTable(rows, options);
}

/**
 * One line for a failed file: "path: problem". A stored problem that already
 * starts with the path (an InputError names its file) is not given it twice.
 */
export function failureLine(path: string, problem: string): string {
  return problem.startsWith(`${path}: `) ? problem : `${path}: ${problem}`;
}
