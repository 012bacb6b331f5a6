/**
 * Row output for the CLI: JSON, CSV and an aligned text table.
 * Rows are flat objects of numbers, strings and nulls; the column order is the
 * key order of the first row (or `columns` when given).
 */
export type Cell = string | number | boolean | null | undefined;
export type Row = { readonly [key: string]: Cell };
export type OutputFormat = 'json' | 'csv' | 'table';

export const OUTPUT_FORMATS: readonly OutputFormat[] = ['json', 'csv', 'table'];

/**
 * How many digits a number keeps in CSV and JSON output: a number of decimal
 * places, or of significant digits.
 */
export type Precision = { readonly decimals: number } | { readonly significant: number };

/** The stated precision of each kind of value in CSV and JSON output (the terminal table may show fewer). */
export const PRECISION = {
  /** Temperatures and temperature differences (LST, SUHI, zonal statistics in K): 0.0001 K. */
  kelvin: { decimals: 4 },
  /** Apparent thermal inertia (1/K): 6 significant digits. */
  perKelvin: { significant: 6 },
  /** Fractions (valid fraction, 0-1) and albedo: 6 decimals. */
  fraction: { decimals: 6 },
  /** p and q values: 6 significant digits. */
  probability: { significant: 6 },
  /** Values of no known unit (a raster without scale/offset): 6 significant digits. */
  plain: { significant: 6 },
  /** Trend slopes of temperatures (K per year or per decade): 0.0001 K. */
  kelvinSlope: { decimals: 4 },
  /** Trend slopes of ATI (1/K per year or per decade): 1e-8 1/K. */
  perKelvinSlope: { decimals: 8 },
  /** Areas (m²): 0.1 m². */
  area: { decimals: 1 },
} as const satisfies Record<string, Precision>;

/**
 * `x` rounded to `precision` (null, undefined and non-finite → null; -0 → 0).
 * The result prints with at most the stated digits: 312.74024810000003 → 312.7402.
 */
export function roundNumber(x: number | null | undefined, precision: Precision): number | null {
  if (x === null || x === undefined || !Number.isFinite(x)) return null;
  const r = 'decimals' in precision ? Number(x.toFixed(precision.decimals)) : Number(x.toPrecision(precision.significant));
  return Object.is(r, -0) ? 0 : r;
}

/** The row with the numbers of the listed fields rounded (other fields as they are). */
export function roundRow(row: Row, precision: Readonly<Record<string, Precision>>): Row {
  const out: Record<string, Cell> = {};
  for (const [k, v] of Object.entries(row)) out[k] = typeof v === 'number' && precision[k] ? roundNumber(v, precision[k]) : v;
  return out;
}

/** `sceneId` → `scene_id`: the one casing of JSON keys in every output. */
export function snakeCase(key: string): string {
  return key.replace(/([a-z0-9])([A-Z])/g, '$1_$2').replace(/([A-Z])([A-Z][a-z])/g, '$1_$2').toLowerCase();
}

/**
 * A value with every object key in snake_case, at any depth (arrays and plain
 * objects are copied; other values are kept). The output edge of JSON whose
 * objects come from TypeScript (camelCase inside the code).
 */
export function snakeCaseKeys(value: unknown): unknown {
  if (Array.isArray(value)) return value.map(snakeCaseKeys);
  if (value && typeof value === 'object' && Object.getPrototypeOf(value) === Object.prototype) {
    return Object.fromEntries(Object.entries(value).map(([k, v]) => [snakeCase(k), snakeCaseKeys(v)]));
  }
  return value;
}

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
 * RFC 4180 CSV with a header line; empty cells for null. Numbers as given: round
 * them first (`roundRow`) to their stated precision.
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
 * The problem is printed as stored: its kind is kept apart (migration 007).
 */
export function failureLine(path: string, problem: string): string {
  return problem.startsWith(`${path}: `) ? problem : `${path}: ${problem}`;
}
