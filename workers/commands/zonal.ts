import { InputError } from '../core/errors.js';
import { formatRows, PRECISION, roundRow, snakeCaseKeys, type OutputFormat, type Precision, type Row } from '../format.js';
import { zonalTable, ZONAL_FIELDS, type ZonalRow, type ZonalValues } from './zonal-table.js';
import { parsePlausible } from './common.js';

interface ZonalCommandOptions {
  districts: string;
  rural?: string;
  idField: string;
  nameField: string;
  qa?: string;
  qaMask?: number;
  qaValues?: string;
  coverage: 'centre' | 'fraction';
  plausible: string;
  format: OutputFormat;
}

const STAT_FIELDS = ['mean', 'std', 'min', 'max', 'median', 'p10', 'p90'] as const;

/**
 * Stated precision of the zonal fields in CSV and JSON: valid_fraction 6
 * decimals; statistics 0.0001 K for LST, 6 decimals for albedo, 6 significant
 * digits for values of no known unit.
 */
export function zonalPrecision(values: ZonalValues): Record<string, Precision> {
  const stat = values.unit === 'K' ? PRECISION.kelvin : values.kind === 'albedo' ? PRECISION.fraction : PRECISION.plain;
  return { valid_fraction: PRECISION.fraction, ...Object.fromEntries(STAT_FIELDS.map((f) => [f, stat])) };
}

/** Rows with the output field names (snake_case) and rounded to their stated precision. */
export function zonalOutputRows(rows: readonly ZonalRow[], values: ZonalValues): Row[] {
  const precision = zonalPrecision(values);
  return rows.map((r) => roundRow(snakeCaseKeys(r) as Row, precision));
}

/** The line that states the values' unit once (terminal table; on standard error for CSV). */
export function zonalUnitLine(values: ZonalValues): string {
  return `values: ${values.unit ?? 'no unit'} (${values.reason})`;
}

function parseList(text: string, option: string): number[] {
  const values = text.split(',').map((s) => Number(s.trim()));
  if (values.some((v) => !Number.isInteger(v))) throw new InputError(`${option} needs comma-separated integers, got "${text}"`);
  return values;
}

export async function runZonalCommand(raster: string, opts: ZonalCommandOptions): Promise<void> {
  if ((opts.qaMask !== undefined || opts.qaValues !== undefined) && !opts.qa) {
    throw new InputError('--qa-mask and --qa-values need --qa <raster>');
  }
  if (opts.qa && opts.qaMask === undefined && opts.qaValues === undefined) {
    throw new InputError('--qa needs --qa-mask <bits> or --qa-values <list> to say which QA values mask a pixel');
  }
  const { values, rows, counts, warnings } = await zonalTable({
    rasterPath: raster,
    districtsPath: opts.districts,
    ruralPath: opts.rural,
    idField: opts.idField,
    nameField: opts.nameField,
    qaPath: opts.qa,
    qaMask: opts.qaMask,
    qaValues: opts.qaValues !== undefined ? parseList(opts.qaValues, '--qa-values') : undefined,
    coverage: opts.coverage,
    plausibleKelvin: parsePlausible(opts.plausible),
  });
  // Warnings go to stderr in every format, so JSON and CSV on stdout stay clean.
  for (const w of warnings) process.stderr.write(`warning: ${w}\n`);
  if (opts.format === 'json') {
    process.stdout.write(JSON.stringify({ unit: values.unit, kind: values.kind, rows: zonalOutputRows(rows, values) }, null, 2) + '\n');
  } else if (opts.format === 'csv') {
    // standard output stays one CSV table; the unit goes beside it, on standard error
    process.stderr.write(`heatledger: ${zonalUnitLine(values)}\n`);
    process.stdout.write(formatRows(zonalOutputRows(rows, values), 'csv', { columns: ZONAL_FIELDS }));
  } else {
    const stat = values.unit === 'K' ? 2 : 4;
    process.stdout.write(`${zonalUnitLine(values)}\n`);
    process.stdout.write(formatRows(rows.map((r) => snakeCaseKeys(r) as Row), 'table', {
      columns: ZONAL_FIELDS,
      decimals: { valid_fraction: 3, ...Object.fromEntries(STAT_FIELDS.map((f) => [f, stat])) },
    }));
  }
  if (opts.format === 'table') {
    const implausible = counts.reduce((s, c) => s + c.implausible, 0);
    const masked = counts.reduce((s, c) => s + c.masked, 0);
    const notes = [];
    if (implausible > 0) notes.push(`${implausible} pixel(s) outside ${values.kind === 'albedo' ? 'the albedo range 0-1' : 'the plausible LST range'} were treated as invalid`);
    if (masked > 0) notes.push(`${masked} pixel(s) masked by QA`);
    if (notes.length) process.stdout.write(`\n${notes.join('; ')}.\n`);
  }
}
