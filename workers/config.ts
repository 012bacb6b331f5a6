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
