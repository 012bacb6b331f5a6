/**
 * The HTTP API: the routes under /api/ (./routes.ts, the write routes in
 * ./ingest-routes.ts), their OpenAPI document, and what guards them: tokens,
 * rate limits, security headers, CORS, body limits, response tags (ETag) and
 * the cache of what depends only on the store's last run.
 *
 * Responses never carry a stack trace, an SQL fragment or an absolute server
 * path: a bad request is a 400 naming the parameter and what it accepts; a
 * store that does not answer is a 503; anything else is a 500 whose details
 * (with the stack) go to the server log only.
 */
import type { Writable } from 'node:stream';
import Fastify, { type FastifyBaseLogger, type FastifyError, type FastifyInstance } from 'fastify';
import cors from '@fastify/cors';
import helmet from '@fastify/helmet';
import rateLimit from '@fastify/rate-limit';
import swagger from '@fastify/swagger';
import type { Store } from '../workers/store/index.js';
import { runMarks } from '../workers/store/store-summary.js';
import { InputError, isInputError } from '../workers/core/errors.js';
import { quoteGiven } from '../workers/core/year.js';
import { CAUTION_TEXT } from '../workers/core/defaults.js';
import { VERSION } from '../workers/version.js';
import { noMemo, UNITS, YearWithoutValuesError } from './answers/common.js';
import { freshRead, RunCache } from './cache.js';
import { checkBearer } from './tokens.js';
import { registerReadRoutes } from './routes.js';
import { registerIngestRoutes, type IngestJobs } from './ingest-routes.js';
import { createLogger, logLevelFromEnv, type LogLevel } from '../workers/log.js';
import { registerPage } from './page.js';

/** The caution every answer carries (the one wording of workers/core/defaults.ts). */
export const CAUTION = CAUTION_TEXT;

/** Unit of each measured field of the district table (the suffix of its name). */
export const TABLE_UNITS = UNITS;

/** The levels and the one reader of LOG_LEVEL live with the logger (workers/log.ts). */
export { LOG_LEVELS, logLevelFromEnv, type LogLevel } from '../workers/log.js';

/** Requests per minute per client address, unless configured otherwise. */
export const DEFAULT_READS_PER_MINUTE = 6000;
export const DEFAULT_WRITES_PER_MINUTE = 30;
/** Largest request body accepted, bytes. */
export const BODY_LIMIT_BYTES = 64 * 1024;

export interface AppOptions {
  /** Logger level; default `LOG_LEVEL` from the environment, else info. */
  logLevel?: LogLevel;
  /** Where the JSON log lines go; default standard output. */
  logStream?: Writable;
  /** Folder scene paths are shown relative to, and the folder ingest requests must stay in. */
  dataRoot?: string;
  /** Bearer token of the write routes; without one, writes are refused (403). */
  token?: string;
  /** Bearer token the read routes ask for too; without one, reads are open. */
  readToken?: string;
  /** The one origin allowed to call from a browser page elsewhere (CORS); without one, CORS stays off. */
  corsOrigin?: string;
  /** Per client address and minute. */
  readsPerMinute?: number;
  writesPerMinute?: number;
  /** What POST /api/ingest hands its files to; without it, ingest answers 503. */
  jobs?: IngestJobs;
  /** Keep answers while the last run stays the same (default true; the bench turns it off to show the cost of computing them). */
  keepAnswers?: boolean;
}

interface SchemaError {
  keyword: string;
  instancePath: string;
  params: Record<string, unknown>;
  message?: string;
  data?: unknown;
  parentSchema?: { properties?: Record<string, unknown>; description?: string };
}

/** One plain sentence per schema error, naming the parameter and what it accepts. */
function schemaMessage(errors: readonly SchemaError[], dataVar: string): string {
  const where = dataVar === 'querystring' ? 'query parameter' : dataVar === 'params' ? 'path parameter' : `${dataVar} field`;
  return errors
    .map((e) => {
      const name = e.instancePath.replace(/^\//, '').replace(/\//g, '.');
      if (e.keyword === 'additionalProperties') {
        const known = Object.keys(e.parentSchema?.properties ?? {});
        return `unknown ${where} ${quoteGiven(String(e.params.additionalProperty))}; known: ${known.join(', ') || 'none'}`;
      }
      if (e.keyword === 'enum') return `${where} ${name} must be one of ${(e.params.allowedValues as unknown[]).join(', ')}`;
      if (e.keyword === 'type') return `${where} ${name} must be given once, as ${String(e.params.type)}`;
      if (e.keyword === 'pattern' && e.parentSchema?.description) return `${where} ${name} must be ${e.parentSchema.description}, got ${quoteGiven(String(e.data))}`;
      if (e.keyword === 'required') return `${where} ${String(e.params.missingProperty)} is required`;
      return `${where} ${name} ${e.message ?? 'is invalid'}`;
    })
    .join('; ');
}

/**
 * The tag of what the store holds: software version and the run that finished
 * last; null while a run is running (its rows are arriving: nothing is tagged or kept).
 */
async function runTag(store: Store): Promise<string | null> {
  const marks = await runMarks(store);
  if (marks.runningId !== null) return null;
  return marks.last ? `"${VERSION}-r${marks.last.id}-${Date.parse(marks.last.finished_at)}"` : `"${VERSION}-r0"`;
}

/** Whether an If-None-Match header names `tag` (a list, weak tags and * included; RFC 9110 §13.1.2). */
function tagMatches(header: string | undefined, tag: string): boolean {
  if (!header) return false;
  return header.split(',').some((t) => {
    const v = t.trim();
    return v === '*' || v.replace(/^W\//, '') === tag;
  });
}

export function buildApp(store: Store, options: AppOptions = {}): FastifyInstance {
  const level = options.logLevel ?? logLevelFromEnv();
  const app = Fastify({
    // the one logger (workers/log.ts); Fastify's own type of it, so routes keep their usual types
    loggerInstance: createLogger({ level, stream: options.logStream }) as FastifyBaseLogger,
    bodyLimit: BODY_LIMIT_BYTES,
    // an unknown query parameter (a misspelt "yaer=2024") is refused, not silently dropped; nothing is
    // coerced (numbers are read by the routes, digits only); verbose: errors carry their schema, so a
    // message can list the known parameters and what a value must look like
    ajv: { customOptions: { removeAdditional: false, coerceTypes: false, verbose: true } },
    schemaErrorFormatter: (errors, dataVar) => new Error(schemaMessage(errors as unknown as SchemaError[], dataVar)),
  });
  const cache = new RunCache();
  const currentTag = freshRead(() => runTag(store));

  void app.register(rateLimit, {
    global: true,
    max: options.readsPerMinute ?? DEFAULT_READS_PER_MINUTE,
    timeWindow: 60_000,
    errorResponseBuilder: (_req, ctx) => ({ statusCode: ctx.statusCode, error: 'Too Many Requests', message: `too many requests from this address: at most ${ctx.max} a minute; retry after ${ctx.after}` }),
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

  if (options.corsOrigin) void app.register(cors, { origin: options.corsOrigin, methods: ['GET', 'HEAD', 'POST'], allowedHeaders: ['Authorization', 'Content-Type', 'If-None-Match'], exposedHeaders: ['ETag', 'X-Next-Cursor'] });

  void app.register(swagger, {
    openapi: {
      openapi: '3.1.0',
      info: {
        title: 'heatledger API',
        version: VERSION,
        description: `District land-surface temperature (LST), surface urban heat island (SUHI) and apparent thermal inertia (ATI) from a store of satellite scenes. ${CAUTION_TEXT}`,
      },
      components: { securitySchemes: { bearer: { type: 'http', scheme: 'bearer', description: 'HEATLEDGER_TOKEN for writes; HEATLEDGER_READ_TOKEN (when set) for reads' } } },
    },
  });

  app.setErrorHandler((err: FastifyError, req, reply) => {
    if (err.validation) return reply.status(400).send({ error: err.message });
    if (err.code === 'FST_ERR_CTP_BODY_TOO_LARGE') return reply.status(400).send({ error: `request body is larger than the ${BODY_LIMIT_BYTES} bytes this server accepts` });
    if (err instanceof YearWithoutValuesError) return reply.status(404).send({ error: err.message, years: err.years });
    if (isInputError(err)) return reply.status(err.statusCode === 404 ? 404 : 400).send({ error: err.message });
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
    // the path is the client's own, quoted back; GET /api/openapi.json lists what there is
    return reply.status(404).send({ error: `no such resource: ${req.method} ${quoteGiven(where, 200)}; GET /api/openapi.json lists the routes` });
  });

  app.decorateRequest('runTag', '');
  app.decorateRequest('memo', null as never);

  // the hooks and routes in one context; the token and tag check runs before validation, after the
  // rate limit (an onRequest hook of every route), so every request is counted, a refused token included
  void app.register(async (api) => {
    // reads: open, or closed by the read token; the write routes check their own token
    api.addHook('preValidation', async (req, reply) => {
      if (!req.url.startsWith('/api/')) return;
      if (options.readToken !== undefined && req.method !== 'POST') {
        const denied = checkBearer(req.headers.authorization, [options.readToken, options.token]);
        if (denied) return reply.status(denied.status).header('WWW-Authenticate', 'Bearer').send({ error: denied.error });
      }
      const tag = await currentTag();
      if (tag === null) {
        // a run is running: its rows are arriving, so nothing is tagged or kept
        req.memo = noMemo;
        reply.header('Cache-Control', 'no-store');
        return;
      }
      reply.header('ETag', tag);
      if (options.keepAnswers === false) req.memo = noMemo;
      else {
        req.runTag = tag;
        req.memo = cache.memo(tag);
      }
      if ((req.method === 'GET' || req.method === 'HEAD') && tagMatches(req.headers['if-none-match'], tag)) return reply.status(304).send();
    });

    api.addHook('preHandler', async (req, reply) => {
      if (req.method !== 'GET' || !req.routeOptions.config.cacheBody || !req.runTag) return;
      const kept = cache.body(req.runTag, `${req.headers.accept ?? ''} ${req.url}`);
      if (kept) return reply.type(kept.contentType).send(kept.payload);
    });

    api.addHook('onSend', async (req, reply, payload) => {
      if (req.method === 'GET' && req.runTag && req.routeOptions.config?.cacheBody && reply.statusCode === 200 && typeof payload === 'string') {
        cache.keepBody(req.runTag, `${req.headers.accept ?? ''} ${req.url}`, { contentType: String(reply.getHeader('content-type')), payload });
      }
      return payload;
    });

    registerReadRoutes(api, store, { dataRoot: options.dataRoot });
    registerIngestRoutes(api, { token: options.token, dataRoot: options.dataRoot, jobs: options.jobs, writesPerMinute: options.writesPerMinute ?? DEFAULT_WRITES_PER_MINUTE });

    api.get('/api/openapi.json', { schema: { summary: 'This document (OpenAPI 3.1)' } }, async () => api.swagger());

    // the web page (built from api/web/ into dist/web/) at /
    registerPage(api);
  });

  return app;
}
