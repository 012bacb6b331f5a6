/**
 * Environment variables heatledger reads, in one place. docker-compose.yml sets
 * the same names (a test checks that they stay in step).
 *
 * Embedded mode (default): neither DATABASE_URL nor REDIS_URL is set; jobs run
 * in-process and results go to an embedded data directory (default ./.heatledger).
 * Distributed mode: REDIS_URL selects queue workers; DATABASE_URL a
 * PostgreSQL server (both are needed: workers on several machines must share
 * one database). Only workers/queue (queue/configured.ts) and workers/store
 * (store/configured.ts) read the two URLs and decide the mode.
 */
import { InputError } from './core/errors.js';
import { decimalWhole, quoteGiven } from './core/year.js';

export const ENV = {
  databaseUrl: 'DATABASE_URL',
  redisUrl: 'REDIS_URL',
  dataDir: 'HEATLEDGER_DATA_DIR',
  concurrency: 'HEATLEDGER_CONCURRENCY',
  queuePrefix: 'HEATLEDGER_QUEUE_PREFIX',
  apiPort: 'HEATLEDGER_API_PORT',
  apiHost: 'HEATLEDGER_API_HOST',
  /** Seconds a database or Redis may stay unreachable before a run gives up (ingest --service-retry-budget). */
  serviceRetryBudget: 'HEATLEDGER_SERVICE_RETRY_BUDGET',
  /** Seconds ingest waits with no worker activity before it ends the run incomplete (ingest --stall-timeout). */
  stallTimeout: 'HEATLEDGER_STALL_TIMEOUT',
  /** Seconds between the queue's checks for jobs of dead workers (worker --stalled-interval; the same on every worker). */
  stalledInterval: 'HEATLEDGER_STALLED_INTERVAL',
  /** Folder the API shows scene paths relative to (default: the common folder of the stored scenes). */
  dataRoot: 'HEATLEDGER_DATA_ROOT',
  /** API log level: fatal, error, warn, info (default), debug, trace or silent. */
  logLevel: 'LOG_LEVEL',
  /** Headless Chromium that prints `report --pdf` (default /usr/bin/chromium, from the Debian package chromium). */
  chromium: 'HEATLEDGER_CHROMIUM',
  /** Bearer token the API's write routes (POST /api/ingest, GET /api/jobs/{id}) need; unset = writes refused. */
  apiToken: 'HEATLEDGER_TOKEN',
  /** Bearer token the API's read routes need too; unset = reads open. */
  apiReadToken: 'HEATLEDGER_READ_TOKEN',
  /** The one browser origin allowed to call the API from elsewhere (CORS); unset = CORS off. */
  corsOrigin: 'HEATLEDGER_CORS_ORIGIN',
  /** API reads per client address and minute (default 6000). */
  readsPerMinute: 'HEATLEDGER_READS_PER_MINUTE',
  /** API writes per client address and minute (default 30). */
  writesPerMinute: 'HEATLEDGER_WRITES_PER_MINUTE',
} as const;

/** Defaults the CLI shows for --data-dir and --port (from the defaults module). */
export { DATA_DIR_NAME as DEFAULT_DATA_DIR, API_PORT as DEFAULT_API_PORT } from './core/defaults.js';

/**
 * A whole number from the environment variable `name`: plain decimal digits
 * only (no sign, blanks, point, exponent or 0x), within [min, max]; undefined
 * when the variable is unset or empty. The one reader of numeric variables:
 * a bad value is an InputError naming the variable and what it takes.
 */
export function envWholeNumber(name: string, range: { min: number; max: number; unit: string }, env: NodeJS.ProcessEnv = process.env): number | undefined {
  const text = env[name];
  if (text === undefined || text === '') return undefined;
  const n = decimalWhole(text, 15);
  if (!(n >= range.min && n <= range.max)) {
    throw new InputError(`${name} must be a whole number of ${range.unit} from ${range.min} to ${range.max} in decimal digits, got ${quoteGiven(text)}`);
  }
  return n;
}

/** What each numeric variable takes (the unit its message names, and its range). */
export const ENV_RANGES = {
  concurrency: { min: 1, max: 1024, unit: 'jobs at once' },
  apiPort: { min: 0, max: 65535, unit: 'port' },
  serviceRetryBudget: { min: 0, max: 86_400, unit: 'seconds' },
  stallTimeout: { min: 1, max: 86_400, unit: 'seconds' },
  stalledInterval: { min: 1, max: 3600, unit: 'seconds' },
  readsPerMinute: { min: 1, max: 1e9, unit: 'requests per minute' },
  writesPerMinute: { min: 1, max: 1e9, unit: 'requests per minute' },
} as const satisfies Partial<Record<keyof typeof ENV, { min: number; max: number; unit: string }>>;

/** The numeric variable `key` (see ENV_RANGES), or undefined when unset. */
export function envNumber(key: keyof typeof ENV_RANGES, env: NodeJS.ProcessEnv = process.env): number | undefined {
  return envWholeNumber(ENV[key], ENV_RANGES[key], env);
}
