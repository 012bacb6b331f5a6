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

  const seasonOption = () =>
    new Option('--season <season>', 'months used: summer = Jun-Aug north of the equator, Dec-Feb south of it (from the districts\' centroid latitude); a Dec-Feb season counts in the year of its January').choices(['summer', 'winter', 'spring', 'autumn', 'all']);
  const hemisphereOption = () =>
    new Option('--hemisphere <h>', 'hemisphere for --season (default: from the stored districts; north for --series)').choices(['north', 'south']);
  const metricHelp = 'lst_day, lst_night, suhi_day, suhi_night (K) or ati (1/K)';

  program
    .command('trend')
    .description(
      'Trend of yearly means: Mann–Kendall S, Var(S) (tie-corrected), Z (continuity-corrected), two-sided p, Kendall tau-b; Sen slope with its (1 − alpha) interval.\n' +
        'One series from a CSV file (--series), or every stored district (--metric) with Benjamini–Hochberg q across districts.\n' +
        'Units: slope_per_year, slope_ci_lower and slope_ci_upper in K per year (1/K per year for ati), slope_per_decade in K per decade; ' +
        'slopes rounded to 0.0001 K (1e-8 1/K for ati), p and q to 6 significant digits in JSON and CSV.\n' +
        'direction: increasing / decreasing / none at alpha after FDR (q); direction_raw from p alone. A series with fewer than 4 years, or constant, gives n and a note, other fields null.\n' +
        CAUTION,
    )
    .option('--series <file>', 'CSV with a header "year,value" or "date,value" (YYYY-MM-DD); blank or NA = missing')
    .option('--metric <metric>', metricHelp)
    .addOption(seasonOption())
    .option('--months <range>', 'months used instead of --season, e.g. 6-8, 12-2 or 6,7,8')
    .addOption(hemisphereOption())
    .option('--from <year>', 'first year', parseInteger('--from'))
    .option('--to <year>', 'last year', parseInteger('--to'))
    .option('--district <ids...>', 'only these district ids')
    .option('--alpha <a>', 'significance level of direction and of the slope interval', parseNumber('--alpha'), 0.05)
    .addOption(new Option('--serial-correction <method>', 'hamed-rao: Var(S) corrected for serial correlation (adds z_corrected, p_corrected; they then give q and direction)').choices(['none', 'hamed-rao']).default('none'))
    .addOption(new Option('--ci-ranks <mode>', 'slope interval ranks: rounded to the nearest integer, or interpolated between order statistics').choices(['rounded', 'interpolate']).default('rounded'))
    .option('--min-dates <n>', 'a year (or month, with --seasonal-kendall) counts only with at least this many dates', parseInteger('--min-dates'), 3)
    .option('--seasonal-kendall', 'Seasonal Kendall test over monthly means (seasons = months), slope = median of within-month slopes')
    .addOption(formatOption('table'))
    .addOption(dataDirOption())
    .action(async (opts) => {
      const { runTrendCommand } = await import('./commands/trend.js');
      await runTrendCommand(opts);
    });

  program
    .command('hotspots')
    .description(
      'Hot and cold spots of one metric for a year (or the mean of yearly means over --from..--to): Getis–Ord Gi* z and p per district ' +
        '(binary weights including the district itself), classes at 90/95/99 % confidence, and global Moran\'s I (row-standardised weights) ' +
        'with its expectation, variance, z and two-sided p under normality and under randomisation. Values in K (1/K for ati).\n' + CAUTION,
    )
    .requiredOption('--metric <metric>', metricHelp)
    .option('--year <year>', 'the year', parseInteger('--year'))
    .option('--from <year>', 'first year of a range', parseInteger('--from'))
    .option('--to <year>', 'last year of a range', parseInteger('--to'))
    .addOption(seasonOption())
    .option('--months <range>', 'months used instead of --season, e.g. 6-8')
    .addOption(hemisphereOption())
    .addOption(new Option('--weights <kind>', 'queen: districts sharing a boundary point; knn: k nearest centroids (no district left without neighbours)').choices(['queen', 'knn']).default('queen'))
    .option('--k <n>', 'neighbours per district for --weights knn', parseInteger('--k'), 4)
    .option('--tolerance-metres <m>', 'boundary points closer than this count as shared (queen)', parseNumber('--tolerance-metres'), 1)
    .option('--fdr', 'classify on Benjamini–Hochberg q across districts instead of p')
    .option('--min-dates <n>', 'a year counts only with at least this many dates', parseInteger('--min-dates'), 3)
    .addOption(formatOption('table'))
    .addOption(dataDirOption())
    .action(async (opts) => {
      const { runHotspotsCommand } = await import('./commands/hotspots.js');
      await runHotspotsCommand(opts);
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

// Run when executed directly (not when imported by tests).
const invokedDirectly = process.argv[1] && import.meta.url === new URL(`file://${(await import('node:fs')).realpathSync(process.argv[1])}`).href;
if (invokedDirectly) {
  const code = await main(process.argv);
  process.exitCode = code;
}
