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
import { DEFAULT_API_PORT, DEFAULT_DATA_DIR, ENV } from './config.js';

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

  const dataDirOption = () =>
    new Option('--data-dir <dir>', 'embedded database folder (ignored when DATABASE_URL is set)').env(ENV.dataDir).default(DEFAULT_DATA_DIR);

  program
    .command('ingest')
    .description(
      'Process a scene archive: register scenes, compute district statistics, pair day/night passes, derive ATI and SUHI, store them.\n' +
        'Embedded (in-process, PGlite in --data-dir) unless REDIS_URL and DATABASE_URL are set (then jobs go to `heatledger worker` processes).',
    )
    .argument('<inputs...>', 'LST GeoTIFF files or folders (searched recursively)')
    .requiredOption('--districts <file>', 'district polygons, GeoJSON FeatureCollection (lon/lat WGS 84)')
    .option('--rural <file>', 'rural reference polygon(s), GeoJSON (default: a ring around the districts)')
    .option('--rural-inner <metres>', 'inner edge of the default rural ring, metres outside the districts', parseNumber('--rural-inner'), 2000)
    .option('--rural-outer <metres>', 'outer edge of the default rural ring, metres outside the districts', parseNumber('--rural-outer'), 10000)
    .option('--water <file>', 'water polygons (GeoJSON) to leave out of the default rural ring')
    .option('--albedo <rasters...>', 'albedo rasters or folders; one raster without a date serves the whole archive')
    .option('--manifest <file>', 'CSV or JSON with columns path, kind (lst|albedo|qa), acquired_at (UTC ISO 8601), sensor, qa (QA raster of the scene); it overrides the files\' own kind and time')
    .option('--qa-mask <bits>', 'QA bits that mask a pixel in the QA rasters the manifest names (e.g. 24, 0x18)', parseInteger('--qa-mask'))
    .option('--id-field <name>', 'feature property holding the district id', 'id')
    .option('--name-field <name>', 'feature property holding the district name', 'name')
    .addOption(new Option('--coverage <rule>', 'pixel rule: centre or fraction').choices(['centre', 'fraction']).default('centre'))
    .option('--plausible <min,max>', 'plausible LST range in Kelvin', '170,360')
    .option('--min-valid-fraction <f>', 'a pass whose district valid fraction is below this gives no derived value', parseNumber('--min-valid-fraction'), 0.5)
    .option('--pairing-window <hours>', 'largest day-night separation for a pair', parseNumber('--pairing-window'), 18)
    .option('--albedo-window <days>', 'largest distance in time to the albedo scene used', parseNumber('--albedo-window'), 32)
    .option('--threads <n>', 'worker threads in embedded mode (default: CPU cores)', parseInteger('--threads'))
    .addOption(dataDirOption())
    .option('--json', 'print the run summary as JSON')
    .option('--no-progress', 'no progress bar')
    .action(async (inputs: string[], opts) => {
      const { runIngestCommand } = await import('./commands/ingest.js');
      await runIngestCommand(inputs, opts);
    });

  program
    .command('status')
    .description('Scenes in the store by state, and failed scenes with their reasons.')
    .addOption(dataDirOption())
    .addOption(formatOption('table'))
    .action(async (opts) => {
      const { runStatusCommand } = await import('./commands/status.js');
      await runStatusCommand(opts);
    });

  program
    .command('table')
    .description('The district table: per district and date (or year) mean day and night LST (K), SUHI day and night (K), ATI (1/K) and scene counts.')
    .addOption(new Option('--level <level>', 'one row per district and date, or per district and year').choices(['date', 'year']).default('date'))
    .option('--year <year>', 'only this year', parseInteger('--year'))
    .addOption(formatOption('table'))
    .addOption(dataDirOption())
    .action(async (opts) => {
      const { runTableCommand } = await import('./commands/table.js');
      await runTableCommand(opts);
    });

  program
    .command('worker')
    .description('Serve queued jobs (distributed mode): needs REDIS_URL and DATABASE_URL. Run any number, on any machines that see the scene files at the same paths.')
    .option('--concurrency <n>', 'jobs at once per queue', parseInteger('--concurrency'), Number(process.env[ENV.concurrency] ?? 1))
    .action(async (opts) => {
      const { runWorkerCommand } = await import('./commands/worker.js');
      await runWorkerCommand(opts);
    });

  program
    .command('demo')
    .description('Generate an invented city and its multi-year scene archive (first run only), run the whole pipeline and print the hottest districts.')
    .option('--archive <dir>', 'where the demo archive is (generated when missing)')
    .option('--threads <n>', 'worker threads', parseInteger('--threads'))
    .addOption(dataDirOption())
    .action(async (opts) => {
      const { runDemoCommand } = await import('./commands/demo.js');
      await runDemoCommand(opts);
    });

  program
    .command('serve')
    .description('HTTP API and web page over the store: /api/table, /api/status, /api/districts, /api/health, and / (district table page).')
    .option('--port <port>', `port (default: $${ENV.apiPort}, else ${DEFAULT_API_PORT})`, parseInteger('--port'))
    .option('--host <host>', `address to listen on (default: $${ENV.apiHost}, else 127.0.0.1)`)
    .addOption(dataDirOption())
    .action(async (opts) => {
      const { runServeCommand } = await import('./commands/serve.js');
      await runServeCommand(opts);
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

const SIGNAL_NUMBERS: Partial<Record<NodeJS.Signals, number>> = { SIGINT: 2, SIGTERM: 15 };

/**
 * SIGINT / SIGTERM: run the registered stop handlers (a run in progress is
 * marked 'interrupted', stores close and release their lock), print their
 * lines, exit 128 + the signal number (130, 143) unless a handler says the stop
 * is the normal end (a server: 0). A second signal exits at once.
 */
export function installSignalHandlers(): void {
  let stopping = false;
  const onSignal = (signal: NodeJS.Signals) => {
    const code = 128 + (SIGNAL_NUMBERS[signal] ?? 0);
    if (stopping) {
      process.stderr.write(`heatledger: ${signal} again; stopping now\n`);
      process.exit(code);
    }
    stopping = true;
    void (async () => {
      const { runInterruptHandlers } = await import('./store/interrupt.js');
      const { messages, exitCode } = await runInterruptHandlers(signal);
      if (messages.length === 0) messages.push(`interrupted by ${signal}`);
      for (const m of messages) process.stderr.write(`heatledger: ${m}\n`);
      process.exit(exitCode ?? code);
    })();
  };
  process.on('SIGINT', onSignal);
  process.on('SIGTERM', onSignal);
}

// Run when executed directly (not when imported by tests).
const invokedDirectly = process.argv[1] && import.meta.url === new URL(`file://${(await import('node:fs')).realpathSync(process.argv[1])}`).href;
if (invokedDirectly) {
  // `worker` stops gracefully on its own signal handlers (it finishes or returns its jobs)
  if (process.argv[2] !== 'worker') installSignalHandlers();
  const code = await main(process.argv);
  process.exitCode = code;
}
