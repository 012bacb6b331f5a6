/**
 * The thin HTTP API: each route validates its query, runs one named query
 * through the store, and serialises. JSON by default, CSV on `format=csv`.
 *
 * Responses never carry a stack trace, an SQL fragment or an absolute server
 * path: a bad request is a 400 naming the parameter and what it accepts; a
 * store that does not answer is a 503; anything else is a 500 whose details
 * (with the stack) go to the server log only.
 */
import path from 'node:path';
import type { Writable } from 'node:stream';
import Fastify, { type FastifyError, type FastifyInstance } from 'fastify';
import helmet from '@fastify/helmet';
import type { Store } from '../workers/store/index.js';
import { districtTable, roundTableRows, TABLE_FIELDS } from '../workers/store/district-table.js';
import { problemText, snakeCaseKeys, toCsv } from '../workers/format.js';
import { listDistricts, sceneStatusCounts, failures } from '../workers/store/index.js';
import { InputError, isInputError } from '../workers/core/errors.js';
import { parseYear, quoteGiven } from '../workers/core/year.js';
import { CAUTION_TEXT } from '../workers/core/defaults.js';
import { registerPage } from './page.js';
import { commonDirectory, relativeInText, relativeToRoot } from './relative-paths.js';

/** The caution every answer carries (the one wording of workers/core/defaults.ts). */
export const CAUTION = CAUTION_TEXT;

/** Log levels `LOG_LEVEL` may name (the levels of Fastify's logger). */
export const LOG_LEVELS = ['fatal', 'error', 'warn', 'info', 'debug', 'trace', 'silent'] as const;
export type LogLevel = (typeof LOG_LEVELS)[number];

/** `LOG_LEVEL` from the environment, default info; anything else is refused by name. */
export function logLevelFromEnv(env: NodeJS.ProcessEnv = process.env): LogLevel {
  const v = env.LOG_LEVEL;
  if (v === undefined || v === '') return 'info';
  if (!(LOG_LEVELS as readonly string[]).includes(v)) throw new InputError(`LOG_LEVEL must be one of ${LOG_LEVELS.join(', ')}, got ${quoteGiven(v)}`);
  return v as LogLevel;
}

export interface AppOptions {
  /** Logger level; default `LOG_LEVEL` from the environment, else info. */
  logLevel?: LogLevel;
  /** Where the JSON log lines go; default standard output. */
  logStream?: Writable;
  /** Folder scene paths are shown relative to; default the common folder of the stored scenes. */
  dataRoot?: string;
}

/** Unit of each measured field of the district table (the suffix of its name). */
export const TABLE_UNITS = { lst_day_k: 'K', lst_night_k: 'K', suhi_day_k: 'K', suhi_night_k: 'K', ati_per_k: '1/K' } as const;

const tableQuery = {
  type: 'object',
  properties: {
    level: { type: 'string', enum: ['date', 'year'], default: 'date' },
    // parsed by parseYear in the handler: decimal digits only, in range
    year: { type: 'string' },
    format: { type: 'string', enum: ['json', 'csv'], default: 'json' },
  },
  additionalProperties: false,
} as const;

interface SchemaError {
  keyword: string;
  instancePath: string;
  params: Record<string, unknown>;
  message?: string;
  parentSchema?: { properties?: Record<string, unknown> };
}

/** One plain sentence per schema error, naming the query parameter and what it accepts. */
function schemaMessage(errors: readonly SchemaError[], dataVar: string): string {
  const where = dataVar === 'querystring' ? 'query parameter' : `${dataVar} field`;
  return errors
    .map((e) => {
      const name = e.instancePath.replace(/^\//, '');
      if (e.keyword === 'additionalProperties') {
        const known = Object.keys(e.parentSchema?.properties ?? {});
        return `unknown ${where} ${quoteGiven(String(e.params.additionalProperty))}; known: ${known.join(', ')}`;
      }
      if (e.keyword === 'enum') return `${where} ${name} must be one of ${(e.params.allowedValues as unknown[]).join(', ')}`;
      if (e.keyword === 'type') return `${where} ${name} must be given once, as ${String(e.params.type)}`;
      return `${where} ${name} ${e.message ?? 'is invalid'}`;
    })
    .join('; ');
}

export function buildApp(store: Store, options: AppOptions = {}): FastifyInstance {
  const level = options.logLevel ?? logLevelFromEnv();
  const app = Fastify({
    logger: options.logStream ? { level, stream: options.logStream } : { level },
    // an unknown query parameter (a misspelt "yaer=2024") is refused, not silently dropped;
    // verbose: schema errors carry their schema, so a message can list the known parameters
    ajv: { customOptions: { removeAdditional: false, verbose: true } },
    schemaErrorFormatter: (errors, dataVar) => new Error(schemaMessage(errors as unknown as SchemaError[], dataVar)),
  });

  // Security headers; the Content-Security-Policy allows only this server's own files
  // (the page has no inline script or style).
  void app.register(helmet, {
    contentSecurityPolicy: {
      useDefaults: false,
      directives: {
        defaultSrc: ["'self'"],
        scriptSrc: ["'self'"],
        styleSrc: ["'self'"],
        imgSrc: ["'self'"],
        fontSrc: ["'self'"],
        connectSrc: ["'self'"],
        formAction: ["'self'"],
        baseUri: ["'self'"],
        frameAncestors: ["'self'"],
        objectSrc: ["'none'"],
      },
    },
  });

  app.setErrorHandler((err: FastifyError, req, reply) => {
    if (err.validation || isInputError(err)) return reply.status(400).send({ error: err.message });
    if (err.name === 'ServiceError') {
      req.log.error({ err }, 'the store did not answer');
      return reply.status(503).send({ error: 'the store is not answering; see the server log' });
    }
    if (err.statusCode && err.statusCode >= 400 && err.statusCode < 500) return reply.status(err.statusCode).send({ error: err.message });
    req.log.error({ err }, 'request failed');
    return reply.status(500).send({ error: 'internal error; see the server log' });
  });

  app.setNotFoundHandler((req, reply) => {
    const where = (req.url.split('?')[0] ?? '').slice(0, 200);
    return reply.status(404).send({ error: `no such resource: ${req.method} ${where}` });
  });

  app.get('/api/health', async () => {
    await store.query('SELECT 1');
    return { ok: true, store: store.kind };
  });

  app.get('/api/districts', async () => {
    const rows = await listDistricts(store);
    return rows.map((d) => ({ id: d.id, name: d.name, role: d.role, area_m2: d.areaSquareMetres }));
  });

  app.get<{ Querystring: { level: 'date' | 'year'; year?: string; format: 'json' | 'csv' } }>(
    '/api/table',
    { schema: { querystring: tableQuery } },
    async (req, reply) => {
      const year = req.query.year === undefined ? undefined : parseYear(req.query.year, 'query parameter year');
      const rows = roundTableRows(await districtTable(store, req.query.level, year));
      if (req.query.format === 'csv') {
        reply.type('text/csv; charset=utf-8');
        return toCsv(rows, TABLE_FIELDS[req.query.level]);
      }
      return { units: TABLE_UNITS, caution: CAUTION, rows };
    },
  );

  app.get('/api/status', async () => {
    const root = options.dataRoot !== undefined ? path.resolve(options.dataRoot) : commonDirectory((await store.query<{ path: string }>('SELECT path FROM scenes')).map((r) => r.path));
    const fails = (await failures(store)).map((f) => {
      const rel = relativeToRoot(f.path, root);
      // the scene's own path first (it may hold blanks), then any other absolute path in the message
      return { ...f, path: rel, error: relativeInText(problemText(f.error).split(f.path).join(rel), root) };
    });
    return snakeCaseKeys({ scenes: await sceneStatusCounts(store), failures: fails });
  });

  // the web page (built from api/web/ into dist/web/) at /
  registerPage(app);

  return app;
}
