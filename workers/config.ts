/**
 * Environment variables heatledger reads, in one place. docker-compose.yml sets
 * the same names (a test checks that they stay in step).
 *
 * Embedded mode (default): neither DATABASE_URL nor REDIS_URL is set; jobs run
 * in-process and results go to a PGlite data directory (default ./.heatledger).
 * Distributed mode: REDIS_URL selects BullMQ workers; DATABASE_URL a
 * PostgreSQL server (both are needed: workers on several machines must share
 * one database).
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
  /** Seconds between BullMQ's checks for jobs of dead workers (worker --stalled-interval; the same on every worker). */
  stalledInterval: 'HEATLEDGER_STALLED_INTERVAL',
  /** Folder the API shows scene paths relative to (default: the common folder of the stored scenes). */
  dataRoot: 'HEATLEDGER_DATA_ROOT',
  /** API log level: fatal, error, warn, info (default), debug, trace or silent. */
  logLevel: 'LOG_LEVEL',
} as const;

export const DEFAULT_DATA_DIR = '.heatledger';
export const DEFAULT_API_PORT = 8080;

export interface RuntimeConfig {
  mode: 'embedded' | 'distributed';
  databaseUrl?: string;
  redisUrl?: string;
  dataDir: string;
}

/** Resolve where the store and queue live, from options (first) and the environment. */
export function runtimeConfig(options: { dataDir?: string } = {}, env: NodeJS.ProcessEnv = process.env): RuntimeConfig {
  const redisUrl = env[ENV.redisUrl] || undefined;
  const databaseUrl = env[ENV.databaseUrl] || undefined;
  return {
    mode: redisUrl ? 'distributed' : 'embedded',
    redisUrl,
    databaseUrl,
    dataDir: options.dataDir ?? env[ENV.dataDir] ?? DEFAULT_DATA_DIR,
  };
}
