/**
 * The `heatledger` command line: its commands, options and exit codes (the bin,
 * workers/cli.ts, starts it). Heavy modules load inside each command's action so
 * that `heatledger --help` starts fast.
 *
 * Exit codes: 0 success; 2 bad input (the user's file, option or request);
 * 1 anything else (a service failed, or a bug).
 */
import { Command, CommanderError, Option } from 'commander';
import { isInputError, isServiceError } from './core/errors.js';
import {
  ALBEDO_WINDOW_DAYS, CAUTION_TEXT, EMISSIVITY_WINDOW_DAYS, THERMAL_EMISSIVITY_DEFAULT, MIN_DATES_PER_YEAR, MIN_VALID_FRACTION, PAIRING_WINDOW_HOURS, PLAUSIBLE_RANGE_KELVIN,
  RURAL_RING_INNER_METRES, RURAL_RING_OUTER_METRES,
} from './core/defaults.js';
import { decimalWhole, parseYear, quoteGiven } from './core/year.js';
import { OUTPUT_FORMATS } from './format.js';
import { VERSION } from './version.js';
import { DEFAULT_API_PORT, DEFAULT_DATA_DIR, ENV } from './config.js';
import { DEFAULT_SERVICE_RETRY_BUDGET_MS, DEFAULT_STALL_TIMEOUT_MS, DEFAULT_WORKER_CONCURRENCY, STALLED_INTERVAL_MS } from './queue/settings.js';

const CAUTION = CAUTION_TEXT;

/** `--plausible` default as the option takes it: "min,max" in Kelvin. */
const PLAUSIBLE_DEFAULT = PLAUSIBLE_RANGE_KELVIN.join(',');

function badOption(message: string): CommanderError {
  return new CommanderError(2, 'heatledger.badOption', message);
}

/** A count or port: decimal digits only, within [min, max]. */
function parseInteger(name: string, min: number, max: number) {
  return (v: string): number => {
    const n = decimalWhole(v, 9);
    if (!(Number.isInteger(n) && n >= min && n <= max)) throw badOption(`${name} must be a whole number from ${min} to ${max} in decimal digits, got ${quoteGiven(v)}`);
    return n;
  };
}

/** A QA bit mask: decimal, 0x hex or 0b binary (the usual ways of writing bits), 0 to 2^32 - 1. */
function parseBitMask(name: string) {
  return (v: string): number => {
    const n = /^0x[0-9a-f]{1,8}$/i.test(v) ? parseInt(v.slice(2), 16) : /^0b[01]{1,32}$/i.test(v) ? parseInt(v.slice(2), 2) : decimalWhole(v, 10);
    if (!(Number.isInteger(n) && n >= 0 && n <= 0xffffffff)) throw badOption(`${name} must be a bit mask from 0 to 4294967295 (decimal, 0x hex or 0b binary), got ${quoteGiven(v)}`);
    return n;
  };
}

/** A decimal number such as 0.5, 2000 or 1e4 (no hex, no blanks, no Infinity). */
function parseNumber(name: string) {
  return (v: string): number => {
    const n = /^[+-]?([0-9]+\.?[0-9]*|\.[0-9]+)([eE][+-]?[0-9]+)?$/.test(v) ? Number(v) : NaN;
    if (!Number.isFinite(n)) throw badOption(`${name} must be a decimal number, got ${quoteGiven(v)}`);
    return n;
  };
}

function parseYearOption(name: string) {
  return (v: string): number => {
    try {
      return parseYear(v, name);
    } catch (e) {
      throw badOption((e as Error).message);
    }
  };
}

function formatOption(defaultFormat: 'json' | 'csv' | 'table' = 'table'): Option {
  return new Option('--format <format>', 'output format').choices([...OUTPUT_FORMATS]).default(defaultFormat);
}

const dataDirOption = () =>
  new Option('--data-dir <dir>', 'embedded database folder (ignored when DATABASE_URL is set)').env(ENV.dataDir).default(DEFAULT_DATA_DIR);

const seasonOption = () =>
  new Option('--season <season>', 'months used: summer = Jun-Aug north of the equator, Dec-Feb south of it (from the districts\' centroid latitude); a Dec-Feb season counts in the year of its January; without --season or --months, all months').choices(['summer', 'winter', 'spring', 'autumn', 'all']);

const hemisphereOption = (forSeriesFiles = false) =>
  new Option('--hemisphere <h>', `hemisphere for --season (default: from the stored districts${forSeriesFiles ? '; north for --series' : ''})`).choices(['north', 'south']);

const metricHelp = 'lst_day, lst_night, suhi_day, suhi_night (K) or ati (1/K)';

/** `heatledger zonal`. */
function addZonalCommand(program: Command): void {
  program
    .command('zonal')
    .description(
      'Statistics of one raster per district: pixels, valid, valid_fraction, mean, std, min, max, median, p10, p90 (pixel-centre rule; type-7 percentiles).\n' +
        'The unit of the statistics is stated once (JSON: top-level "unit", with "kind" = lst, albedo or unknown, and the rows in "rows"; ' +
        'table: the first line; CSV: a line on standard error): K for an LST raster with a scale/offset or floating-point samples; ' +
        'no unit for an albedo raster (KIND=albedo metadata item or "albedo" in the file name; plausible range 0-1 instead of --plausible) ' +
        'or integer samples without scale/offset.\n' +
        'JSON and CSV round K to 0.0001, albedo and valid_fraction to 6 decimals, values of no unit to 6 significant digits.',
    )
    .argument('<raster>', 'LST GeoTIFF or COG (any EPSG CRS); a Level-1 thermal DN scene is refused (exit 2): ingest converts those')
    .requiredOption('--districts <file>', 'district polygons, GeoJSON FeatureCollection (lon/lat WGS 84)')
    .option('--rural <file>', 'rural reference polygon(s), GeoJSON; adds a row whose district is "rural"')
    .option('--id-field <name>', 'feature property holding the district id', 'id')
    .option('--name-field <name>', 'feature property holding the district name', 'name')
    .option('--qa <raster>', 'QA/cloud raster on the same grid')
    .option('--qa-mask <bits>', 'mask pixels whose QA value has any of these bits set (e.g. 24, 0x18, 0b11000)', parseBitMask('--qa-mask'))
    .option('--qa-values <list>', 'mask pixels whose QA value is one of these (comma-separated integers)')
    .addOption(new Option('--coverage <rule>', 'pixel rule: centre (pixel centre inside) or fraction (area-weighted)').choices(['centre', 'fraction']).default('centre'))
    .option('--plausible <min,max>', 'plausible LST range in Kelvin; values outside count as invalid', PLAUSIBLE_DEFAULT)
    .addOption(formatOption('table'))
    .action(async (raster: string, opts) => {
      const { runZonalCommand } = await import('./commands/zonal.js');
      await runZonalCommand(raster, opts);
    });
}

/** `heatledger ingest`. */
function addIngestCommand(program: Command): void {
  program
    .command('ingest')
    .description(
      'Process a scene archive: register scenes, compute district statistics, pair day/night passes, derive ATI and SUHI, store them.\n' +
        'Embedded (in-process, an embedded database in --data-dir) unless REDIS_URL and DATABASE_URL are set (then jobs go to `heatledger worker` processes).',
    )
    .argument('<inputs...>', 'LST (or Level-1 thermal DN) GeoTIFF files or folders (searched recursively)')
    .requiredOption('--districts <file>', 'district polygons, GeoJSON FeatureCollection (lon/lat WGS 84)')
    .option('--rural <file>', 'rural reference polygon(s), GeoJSON (default: a ring around the districts)')
    .option('--rural-inner <metres>', 'inner edge of the default rural ring, metres outside the districts', parseNumber('--rural-inner'), RURAL_RING_INNER_METRES)
    .option('--rural-outer <metres>', 'outer edge of the default rural ring, metres outside the districts', parseNumber('--rural-outer'), RURAL_RING_OUTER_METRES)
    .option('--water <file>', 'water polygons (GeoJSON) to leave out of the default rural ring')
    .option('--albedo <rasters...>', 'albedo rasters or folders; one raster without a date serves the whole archive')
    .option('--manifest <file>', 'CSV or JSON with columns path, kind (lst|albedo|qa|thermal), acquired_at (UTC ISO 8601), sensor, qa (QA raster of the scene); ' +
      'thermal scenes also metadata (the scene\'s KEY = value metadata file), band, radiance_mult, radiance_add, k1, k2, emissivity (number or raster), ' +
      'transmittance, upwelling, downwelling (W m-2 sr-1 um-1: numbers, or rasters on the scene grid); any scene ndvi, or red and nir; it overrides the files\' own kind and time')
    .option('--qa-mask <bits>', 'QA bits that mask a pixel in the QA rasters the manifest names (e.g. 24, 0x18)', parseBitMask('--qa-mask'))
    .option('--emissivity <value>', `thermal scenes: emissivity in (0.8, 1] where no emissivity raster, NDVI or district "emissivity" property applies (default ${THERMAL_EMISSIVITY_DEFAULT})`, parseNumber('--emissivity'))
    .option('--emissivity-window <days>', 'thermal scenes: take NDVI from the nearest day scene within this many days', parseNumber('--emissivity-window'), EMISSIVITY_WINDOW_DAYS)
    .option('--write-lst <dir>', 'thermal scenes: also write the LST made from their DN as cloud-optimised GeoTIFFs (float32 K) into this folder')
    .option('--id-field <name>', 'feature property holding the district id', 'id')
    .option('--name-field <name>', 'feature property holding the district name', 'name')
    .addOption(new Option('--coverage <rule>', 'pixel rule: centre or fraction').choices(['centre', 'fraction']).default('centre'))
    .option('--plausible <min,max>', 'plausible LST range in Kelvin', PLAUSIBLE_DEFAULT)
    .option('--min-valid-fraction <f>', 'a pass whose district valid fraction is below this gives no derived value', parseNumber('--min-valid-fraction'), MIN_VALID_FRACTION)
    .option('--pairing-window <hours>', 'largest day-night separation for a pair', parseNumber('--pairing-window'), PAIRING_WINDOW_HOURS)
    .option('--albedo-window <days>', 'largest distance in time to the albedo scene used', parseNumber('--albedo-window'), ALBEDO_WINDOW_DAYS)
    .option('--service-retry-budget <seconds>', 'how long PostgreSQL or Redis may stay unreachable before the run gives up on them; unfinished scenes are left for the next ingest (exit 1) ' +
      `(default: $${ENV.serviceRetryBudget} in whole seconds, else ${DEFAULT_SERVICE_RETRY_BUDGET_MS / 1000})`, parseNumber('--service-retry-budget'))
    .option('--stall-timeout <seconds>', 'distributed mode: end the run incomplete (exit 1) when no worker has made progress for this long ' +
      `(default: $${ENV.stallTimeout} in whole seconds, else ${DEFAULT_STALL_TIMEOUT_MS / 1000})`, parseNumber('--stall-timeout'))
    .option('--threads <n>', 'worker threads in embedded mode (default: CPU cores)', parseInteger('--threads', 1, 1024))
    .addOption(dataDirOption())
    .option('--json', 'print the run summary as JSON (snake_case keys)')
    .option('--no-progress', 'no progress bar')
    .action(async (inputs: string[], opts) => {
      const { runIngestCommand } = await import('./commands/ingest.js');
      await runIngestCommand(inputs, opts);
    });
}

/** `heatledger status`. */
function addStatusCommand(program: Command): void {
  program
    .command('status')
    .description(
      'Scenes in the store by state, failed scenes with their reasons, and the last run with its state: running, succeeded, ' +
        'incomplete (scenes left, or files refused as bad input), failed, interrupted (Ctrl-C, SIGTERM) or abandoned (its process is gone). ' +
        'Passes converted from Level-1 thermal DN are listed with how their LST was made (constants, emissivity, atmosphere, or "no atmospheric correction"). ' +
        'JSON keys are snake_case; CSV holds only the scene counts by kind, pass and status (one header line).',
    )
    .addOption(dataDirOption())
    .addOption(formatOption('table'))
    .action(async (opts) => {
      const { runStatusCommand } = await import('./commands/status.js');
      await runStatusCommand(opts);
    });
}

/** `heatledger table`. */
function addTableCommand(program: Command): void {
  program
    .command('table')
    .description(
      'The district table: per district and date (or year) lst_day_k, lst_night_k (mean LST, K), suhi_day_k, suhi_night_k (SUHI, K), ati_per_k (ATI, 1/K) and scene counts.\n' +
        'JSON and CSV round temperatures to 0.0001 K and ATI to 6 significant digits.',
    )
    .addOption(new Option('--level <level>', 'one row per district and date, or per district and year').choices(['date', 'year']).default('date'))
    .option('--year <year>', 'only this year', parseYearOption('--year'))
    .addOption(formatOption('table'))
    .addOption(dataDirOption())
    .action(async (opts) => {
      const { runTableCommand } = await import('./commands/table.js');
      await runTableCommand(opts);
    });
}

/** `heatledger trend`. */
function addTrendCommand(program: Command): void {
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
    .addOption(hemisphereOption(true))
    .option('--from <year>', 'first year', parseYearOption('--from'))
    .option('--to <year>', 'last year', parseYearOption('--to'))
    .option('--district <ids...>', 'only these district ids')
    .option('--alpha <a>', 'significance level of direction and of the slope interval', parseNumber('--alpha'), 0.05)
    .addOption(new Option('--serial-correction <method>', 'hamed-rao: Var(S) corrected for serial correlation (adds z_corrected, p_corrected; they then give q and direction)').choices(['none', 'hamed-rao']).default('none'))
    .addOption(new Option('--ci-ranks <mode>', 'slope interval ranks: rounded to the nearest integer, or interpolated between order statistics').choices(['rounded', 'interpolate']).default('rounded'))
    .option('--min-dates <n>', 'a year (or month, with --seasonal-kendall) counts only with at least this many dates', parseInteger('--min-dates', 1, 366), MIN_DATES_PER_YEAR)
    .option('--seasonal-kendall', 'Seasonal Kendall test over monthly means (seasons = months), slope = median of within-month slopes')
    .addOption(formatOption('table'))
    .addOption(dataDirOption())
    .action(async (opts) => {
      const { runTrendCommand } = await import('./commands/trend.js');
      await runTrendCommand(opts);
    });
}

/** `heatledger hotspots`. */
function addHotspotsCommand(program: Command): void {
  program
    .command('hotspots')
    .description(
      'Hot and cold spots of one metric for a year (or the mean of yearly means over --from..--to): Getis–Ord Gi* z and p per district ' +
        '(binary weights including the district itself), classes at 90/95/99 % confidence, and global Moran\'s I (row-standardised weights) ' +
        'with its expectation, variance, z and two-sided p under normality and under randomisation. Values in K (1/K for ati).\n' + CAUTION,
    )
    .requiredOption('--metric <metric>', metricHelp)
    .option('--year <year>', 'the year (give --year, or --from and --to)', parseYearOption('--year'))
    .option('--from <year>', 'first year of a range', parseYearOption('--from'))
    .option('--to <year>', 'last year of a range', parseYearOption('--to'))
    .addOption(seasonOption())
    .option('--months <range>', 'months used instead of --season, e.g. 6-8')
    .addOption(hemisphereOption())
    .addOption(new Option('--weights <kind>', 'queen: districts sharing a boundary point; knn: k nearest centroids (no district left without neighbours)').choices(['queen', 'knn']).default('queen'))
    .option('--k <n>', 'neighbours per district for --weights knn', parseInteger('--k', 1, 100), 4)
    .option('--tolerance-metres <m>', 'boundary points closer than this count as shared (queen)', parseNumber('--tolerance-metres'), 1)
    .option('--fdr', 'classify on Benjamini–Hochberg q across districts instead of p')
    .option('--min-dates <n>', 'a year counts only with at least this many dates', parseInteger('--min-dates', 1, 366), MIN_DATES_PER_YEAR)
    .addOption(formatOption('table'))
    .addOption(dataDirOption())
    .action(async (opts) => {
      const { runHotspotsCommand } = await import('./commands/hotspots.js');
      await runHotspotsCommand(opts);
    });
}

/** `heatledger report`. */
function addReportCommand(program: Command): void {
  program
    .command('report')
    .description(
      'The yearly surface-heat report for a council: one self-contained HTML file (no script, no outside request) and, with --pdf, an A4 PDF printed from it by headless Chromium (Debian package chromium).\n' +
        'Sections: summary sentences; map, ranking and table of the year; trends per district (Mann–Kendall, Sen slope per decade, Benjamini–Hochberg q); ' +
        'hot spots (Gi*) and Moran\'s I; data quality; methods, run settings and cautions; appendix of the input scenes with their SHA-256 hashes.\n' +
        'Every figure comes from the same answers as the HTTP API. ' + CAUTION,
    )
    .option('--year <year>', 'the report year (default: the latest year with values)', parseYearOption('--year'))
    .addOption(new Option('--season <season>', 'months the yearly means cover: summer = Jun-Aug north of the equator, Dec-Feb south of it; all = the whole year').choices(['summer', 'winter', 'spring', 'autumn', 'all']).default('summer'))
    .option('--baseline <years>', 'baseline period the year is compared with, e.g. 2019-2021 (default: the first three stored years before the report year)')
    .addOption(new Option('--units <unit>', 'temperatures in kelvin or degrees Celsius (differences are the same number in both)').choices(['C', 'K']).default('C'))
    .option('--alpha <a>', 'significance level of the trend verdicts (false discovery rate across districts)', parseNumber('--alpha'), 0.05)
    .option('--place <name>', 'name of the city or area for the title')
    .requiredOption('--out <file.html>', 'where to write the HTML report')
    .option('--pdf <file.pdf>', `also print it to PDF with headless Chromium ($${ENV.chromium}, default /usr/bin/chromium)`)
    .addOption(dataDirOption())
    .action(async (opts) => {
      const { runReportCommand } = await import('./commands/report.js');
      await runReportCommand(opts);
    });
}

/** `heatledger export`. */
function addExportCommand(program: Command): void {
  program
    .command('export')
    .description(
      'Write the district numbers to a file for other tools: CSV or Parquet tables with one row per district and scene, date or year ' +
        '(lst_day_k, lst_night_k, suhi_day_k, suhi_night_k in K, ati_per_k in 1/K; Parquet columns typed), or a GeoJSON of the districts ' +
        '(RFC 7946, lon/lat) with each year\'s values (suhi_night_2024_k, dates_2024, ...) and trends over the years (Sen slope per decade with ' +
        'its 95 % interval, Mann–Kendall p, Benjamini–Hochberg q, verdict) as properties.\n' +
        'Numbers are rounded to 0.0001 K and ATI to 6 significant digits. Beside the file, PATH.json records the software version, ' +
        'these options, the runs that stored the values with their parameters, and the content hashes of the scenes behind them.\n' +
        CAUTION,
    )
    .addOption(new Option('--format <format>', 'file format').choices(['csv', 'geojson', 'parquet']).makeOptionMandatory())
    .addOption(new Option('--level <level>', 'one row per district and scene (pass), date, or year (default: date; GeoJSON: year, the only level it takes)').choices(['scene', 'date', 'year']))
    .option('--metric <metrics...>', `only these metrics (default all): ${metricHelp}; several may be given, space- or comma-separated`)
    .option('--from <year>', 'first year (UTC)', parseYearOption('--from'))
    .option('--to <year>', 'last year (UTC)', parseYearOption('--to'))
    .option('--min-dates <n>', 'GeoJSON trends: a year counts only with at least this many dates', parseInteger('--min-dates', 1, 366), MIN_DATES_PER_YEAR)
    .requiredOption('--out <path>', 'file to write (its folder must exist); the sidecar goes to PATH.json')
    .addOption(dataDirOption())
    .action(async (opts) => {
      const { runExportCommand } = await import('./commands/export.js');
      await runExportCommand(opts);
    });
}

/** `heatledger worker`. */
function addWorkerCommand(program: Command): void {
  program
    .command('worker')
    .description(
      'Serve queued jobs (distributed mode): needs REDIS_URL and DATABASE_URL. Run any number, on any machines that see the scene files at the same paths.\n' +
        `Log: one JSON line per event on standard output at $${ENV.logLevel} (fatal, error, warn, info — the default —, debug, trace, silent): ` +
        'ready and stopped, each job done with its milliseconds (info), a failed try (warn), a file refused as bad input or a lost connection (error), jobs taken (debug).',
    )
    .option('--concurrency <n>', `jobs at once per queue (default: $${ENV.concurrency}, else ${DEFAULT_WORKER_CONCURRENCY})`, parseInteger('--concurrency', 1, 1024))
    .option('--stalled-interval <seconds>', 'how often to look for jobs left by a dead worker (a killed worker\'s job comes back within this plus 15 s); every worker on the same Redis must use the same value ' +
      `(default: $${ENV.stalledInterval} in whole seconds, else ${STALLED_INTERVAL_MS / 1000})`, parseNumber('--stalled-interval'))
    .action(async (opts) => {
      const { runWorkerCommand } = await import('./commands/worker.js');
      await runWorkerCommand(opts);
    });
}

/** `heatledger demo`. */
function addDemoCommand(program: Command): void {
  program
    .command('demo')
    .description(
      'Generate an invented city and its multi-year scene archive (first run only), run the whole pipeline (night passes as Level-1 thermal DN), ' +
        'print the hottest districts, the significant night-SUHI trends and the last summer\'s hot spots, and write the exports ' +
        '(CSV, Parquet, GeoJSON with their .json sidecars) and the yearly report (HTML, and PDF when Chromium is installed) into ./heatledger-output.',
    )
    .option('--archive <dir>', 'where the demo archive is (generated into a new or empty folder, never over files it did not write; default: demo-data/.generated under the working folder)')
    .option('--threads <n>', 'worker threads (default: CPU cores)', parseInteger('--threads', 1, 1024))
    .addOption(dataDirOption())
    .action(async (opts) => {
      const { runDemoCommand } = await import('./commands/demo.js');
      await runDemoCommand(opts);
    });
}

/** `heatledger serve`. */
function addServeCommand(program: Command): void {
  program
    .command('serve')
    .description(
      'HTTP API and web page over the store: the routes under /api/ (listed in /api/openapi.json) and / (district page).\n' +
        'While an ingest writes to the same embedded store, the server reads through it and shows its rows once it is done. ' +
        `Log: JSON lines at $${ENV.logLevel} (default info). Scene paths are shown relative to $${ENV.dataRoot} when set.\n` +
        `Writes (POST /api/ingest of files under $${ENV.dataRoot}) need the bearer token $${ENV.apiToken} and are off without it; ` +
        `$${ENV.apiReadToken} closes reads too; $${ENV.corsOrigin} allows one browser origin; ` +
        `$${ENV.readsPerMinute} and $${ENV.writesPerMinute} limit requests per address.`,
    )
    .option('--port <port>', `port (default: $${ENV.apiPort}, else ${DEFAULT_API_PORT})`, parseInteger('--port', 0, 65535))
    .option('--host <host>', `address to listen on (default: $${ENV.apiHost}, else 127.0.0.1: this machine only; 0.0.0.0 lets other machines in)`)
    .addOption(dataDirOption())
    .action(async (opts) => {
      const { runServeCommand } = await import('./commands/serve.js');
      await runServeCommand(opts);
    });
}

/** Each command's name and the function that adds it, in the order of the help. */
const COMMANDS: Record<string, (program: Command) => void> = {
  zonal: addZonalCommand,
  ingest: addIngestCommand,
  status: addStatusCommand,
  table: addTableCommand,
  trend: addTrendCommand,
  hotspots: addHotspotsCommand,
  report: addReportCommand,
  export: addExportCommand,
  worker: addWorkerCommand,
  demo: addDemoCommand,
  serve: addServeCommand,
};

/**
 * The program with its commands.
 * @param argv the command line about to be parsed; when given and its first argument names a command, only that command is added
 */
export function buildProgram(argv?: readonly string[]): Command {
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
    .configureOutput({ writeErr: (s) => process.stderr.write(s) })
    // the store's lock names the subcommand, however the program was started (bin link, npx, node cli.js)
    .hook('preAction', async (_program, action) => {
      const { setCurrentCommand } = await import('./store/command-name.js');
      setCurrentCommand(action.name());
    });

  // Only the command asked for is set up when the first argument names one
  // (setting up the options, choices and help texts of all eleven costs
  // ~2-3 ms of CPU per start-up); help and unknown commands see them all.
  const asked = argv?.[2] !== undefined && Object.hasOwn(COMMANDS, argv[2]) ? argv[2] : undefined;
  for (const [name, add] of Object.entries(COMMANDS)) if (asked === undefined || name === asked) add(program);
  return program;
}

let outputGuarded = false;
let outputFailed = false;

/**
 * A reader that goes away (`heatledger table | head -1`) closes our standard
 * output: writes then fail with EPIPE. That is not an error of the command: the
 * rest of the output is dropped without a word, the command finishes its work
 * and exits with its own code (0 when all went well, as a pipe into `head`
 * expects). Any other write error on the output is reported and fails the command.
 */
function guardOutputStreams(): void {
  if (outputGuarded) return;
  outputGuarded = true;
  for (const [name, stream] of [['standard output', process.stdout], ['standard error', process.stderr]] as const) {
    stream.on('error', (e: NodeJS.ErrnoException) => {
      if (e.code === 'EPIPE') return;
      if (stream !== process.stderr) process.stderr.write(`heatledger: cannot write to ${name} (${e.code ?? e.message})\n`);
      outputFailed = true;
      process.exitCode = 1;
    });
  }
}

export async function main(argv: string[]): Promise<number> {
  guardOutputStreams();
  const program = buildProgram(argv);
  try {
    await program.parseAsync(argv);
    return outputFailed ? 1 : 0;
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
  if (isServiceError(e)) {
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
 * is the normal end (a server: 0). When a handler says a worker thread is stuck
 * in a read, Node's exit would wait for it for ever: the process ends by the
 * signal itself (default action), which a shell reports as the same 130 or 143.
 * A second signal stops at once, the same way.
 */
export function installSignalHandlers(): void {
  let stopping = false;
  const endBySignal = (signal: NodeJS.Signals) => {
    process.removeAllListeners(signal);
    process.kill(process.pid, signal);
  };
  const onSignal = (signal: NodeJS.Signals) => {
    const code = 128 + (SIGNAL_NUMBERS[signal] ?? 0);
    if (stopping) {
      process.stderr.write(`heatledger: ${signal} again; stopping now\n`);
      endBySignal(signal);
      return;
    }
    stopping = true;
    void (async () => {
      const { runInterruptHandlers } = await import('./store/interrupt.js');
      const { messages, exitCode, stuck } = await runInterruptHandlers(signal);
      if (messages.length === 0) messages.push(`interrupted by ${signal}`);
      for (const m of messages) process.stderr.write(`heatledger: ${m}\n`);
      if (stuck) endBySignal(signal);
      else process.exit(exitCode ?? code);
    })();
  };
  process.on('SIGINT', onSignal);
  process.on('SIGTERM', onSignal);
}

/**
 * Run the command line as the `heatledger` bin does (workers/cli.ts calls it,
 * from the start-up bundle or from this module): signal handlers, then `main`;
 * the exit code goes to process.exitCode.
 */
export async function runCli(argv: string[]): Promise<void> {
  // `worker` stops gracefully on its own signal handlers (it finishes or returns its jobs)
  if (argv[2] !== 'worker') installSignalHandlers();
  process.exitCode = await main(argv);
}
