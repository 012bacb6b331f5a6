/**
 * The one logger of long-running processes (`heatledger serve`, `heatledger
 * worker`): pino, the logger Fastify itself uses, writing one JSON object per
 * line (`level` as pino's number: 10 trace, 20 debug, 30 info, 40 warn, 50
 * error, 60 fatal; `time` in epoch milliseconds; `msg`), at the level named by
 * LOG_LEVEL — read here only.
 */
import { pino, type Logger } from 'pino';
import { ENV } from './config.js';
import { InputError } from './core/errors.js';
import { quoteGiven } from './core/year.js';

/** Log levels `LOG_LEVEL` may name (pino's levels, as Fastify's logger takes them). */
export const LOG_LEVELS = ['fatal', 'error', 'warn', 'info', 'debug', 'trace', 'silent'] as const;
export type LogLevel = (typeof LOG_LEVELS)[number];

/** `LOG_LEVEL` from the environment, default info; anything else is refused by name. */
export function logLevelFromEnv(env: NodeJS.ProcessEnv = process.env): LogLevel {
  const v = env[ENV.logLevel];
  if (v === undefined || v === '') return 'info';
  if (!(LOG_LEVELS as readonly string[]).includes(v)) throw new InputError(`${ENV.logLevel} must be one of ${LOG_LEVELS.join(', ')}, got ${quoteGiven(v)}`);
  return v as LogLevel;
}

export type { Logger };

/** A JSON-lines logger at `level` (default LOG_LEVEL) to `stream` (default standard output). */
export function createLogger(options: { level?: LogLevel; stream?: NodeJS.WritableStream; name?: string } = {}): Logger {
  const level = options.level ?? logLevelFromEnv();
  const opts = { level, ...(options.name ? { name: options.name } : {}) };
  return options.stream ? pino(opts, options.stream) : pino(opts);
}
