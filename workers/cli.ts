#!/usr/bin/env node
/**
 * The `heatledger` command. Heavy modules load inside each command's action so
 * that `heatledger --help` starts fast.
 *
 * Exit codes: 0 success; 2 bad input (the user's file, option or request);
 * 1 anything else (a service failed, or a bug).
 */
import { Command, CommanderError, Option } from 'commander';
import { isInputError } from './core/errors.js';
import { OUTPUT_FORMATS } from './format.js';
import { VERSION } from './version.js';

const CAUTION =
  'LST is land-surface (skin) temperature, not air temperature. Results inform, and do not replace, local heat-action plans, codes and licensed professionals.';

function parseInteger(name: string) {
  return (v: string): number => {
    const n = /^0x[0-9a-f]+$/i.test(v) ? parseInt(v, 16) : /^0b[01]+$/i.test(v) ? parseInt(v.slice(2), 2) : Number(v);
    if (!Number.isInteger(n) || n < 0) throw new CommanderError(2, 'heatledger.badOption', `${name} must be a non-negative integer (decimal, 0x hex or 0b binary), got "${v}"`);
    return n;
  };
}

function parseNumber(name: string) {
  return (v: string): number => {
    const n = Number(v);
    if (!Number.isFinite(n)) throw new CommanderError(2, 'heatledger.badOption', `${name} must be a number, got "${v}"`);
    return n;
  };
}

function formatOption(defaultFormat: 'json' | 'csv' | 'table' = 'table'): Option {
  return new Option('--format <format>', 'output format').choices([...OUTPUT_FORMATS]).default(defaultFormat);
}

export function buildProgram(): Command {
  const program = new Command();
  program
    .name('heatledger')
    .description(
      'District land-surface-temperature statistics, apparent thermal inertia and surface heat island intensity from GeoTIFF scene archives.\n\n' +
        CAUTION,
    )
    .version(VERSION, '-V, --version')
    .showHelpAfterError('(run with --help for usage)')
    .exitOverride()
    .configureOutput({ writeErr: (s) => process.stderr.write(s) });

  program
    .command('zonal')
    .description('Statistics of one raster per district (Kelvin after scale/offset; pixel-centre rule; type-7 percentiles).')
    .argument('<raster>', 'LST GeoTIFF or COG (any EPSG CRS)')
    .requiredOption('--districts <file>', 'district polygons, GeoJSON FeatureCollection (lon/lat WGS 84)')
    .option('--rural <file>', 'rural reference polygon(s), GeoJSON; adds a row whose district is "rural"')
    .option('--id-field <name>', 'feature property holding the district id', 'id')
    .option('--name-field <name>', 'feature property holding the district name', 'name')
    .option('--qa <raster>', 'QA/cloud raster on the same grid')
    .option('--qa-mask <bits>', 'mask pixels whose QA value has any of these bits set (e.g. 24, 0x18, 0b11000)', parseInteger('--qa-mask'))
    .option('--qa-values <list>', 'mask pixels whose QA value is one of these (comma-separated integers)')
    .addOption(new Option('--coverage <rule>', 'pixel rule: centre (pixel centre inside) or fraction (area-weighted)').choices(['centre', 'fraction']).default('centre'))
    .option('--plausible <min,max>', 'plausible LST range in Kelvin; values outside count as invalid', '170,360')
    .addOption(formatOption('table'))
    .action(async (raster: string, opts) => {
      const { runZonalCommand } = await import('./commands/zonal.js');
      await runZonalCommand(raster, opts);
    });

  return program;
}

export async function main(argv: string[]): Promise<number> {
  const program = buildProgram();
  try {
    await program.parseAsync(argv);
    return 0;
  } catch (e) {
    return reportError(e);
  }
}

/** Map an error to an exit code, printing one line (a stack only with HEATLEDGER_DEBUG=1). */
export function reportError(e: unknown): number {
  if (e instanceof CommanderError) {
    if (e.code === 'commander.helpDisplayed' || e.code === 'commander.version' || e.code === 'commander.help') return 0;
    // commander already printed its message, except for our own option parsers
    if (e.code === 'heatledger.badOption') process.stderr.write(`heatledger: ${e.message}\n`);
    return 2;
  }
  const debug = process.env.HEATLEDGER_DEBUG === '1';
  if (isInputError(e)) {
    process.stderr.write(`heatledger: ${(e as Error).message}\n`);
    return 2;
  }
  const err = e as Error;
  if (err?.name === 'ServiceError') {
    process.stderr.write(`heatledger: service error: ${err.message}\n`);
  } else {
    process.stderr.write(`heatledger: internal error: ${err?.message ?? String(e)} (set HEATLEDGER_DEBUG=1 for details)\n`);
  }
  if (debug && err?.stack) process.stderr.write(err.stack + '\n');
  return 1;
}

// Run when executed directly (not when imported by tests).
const invokedDirectly = process.argv[1] && import.meta.url === new URL(`file://${(await import('node:fs')).realpathSync(process.argv[1])}`).href;
if (invokedDirectly) {
  const code = await main(process.argv);
  process.exitCode = code;
}
