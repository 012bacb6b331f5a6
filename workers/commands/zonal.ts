import { InputError } from '../core/errors.js';
import { formatRows, type OutputFormat, type Row } from '../format.js';
import { zonalTable, ZONAL_FIELDS } from '../jobs/zonal-table.js';
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
  const { rows, counts, warnings } = await zonalTable({
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
  process.stdout.write(
    formatRows(rows as unknown as Row[], opts.format, {
      columns: ZONAL_FIELDS,
      labels: { mean: 'mean K', std: 'std K', min: 'min K', max: 'max K', median: 'median K', p10: 'p10 K', p90: 'p90 K' },
      decimals: { valid_fraction: 3, mean: 2, std: 2, min: 2, max: 2, median: 2, p10: 2, p90: 2 },
    }),
  );
  if (opts.format === 'table') {
    const implausible = counts.reduce((s, c) => s + c.implausible, 0);
    const masked = counts.reduce((s, c) => s + c.masked, 0);
    const notes = [];
    if (implausible > 0) notes.push(`${implausible} pixel(s) outside the plausible LST range were treated as invalid`);
    if (masked > 0) notes.push(`${masked} pixel(s) masked by QA`);
    if (notes.length) process.stdout.write(`\n${notes.join('; ')}.\n`);
  }
}
