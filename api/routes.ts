/**
 * The read routes under /api/. Each declares its query, path and response
 * schemas (./schemas.ts) and stays thin: parse the checked parameters, call
 * its answer function (./answers/), serialise. JSON by default; the district
 * map and the table also as CSV (format=csv or Accept: text/csv).
 */
import path from 'node:path';
import type { FastifyInstance, FastifyReply, FastifyRequest } from 'fastify';
import type {} from '@fastify/swagger';
import type {} from './cache.js';
import { snakeCaseKeys, toCsv } from '../workers/format.js';
import { failures, sceneStatusCounts, thermalPasses, type Store } from '../workers/store/index.js';
import type { RankOrder } from '../workers/core/ranking.js';
import type { SerialCorrection } from '../workers/core/trend/index.js';
import type { Metric, Season } from './answers/common.js';
import { answerDistrict, answerDistricts, DISTRICT_CSV_FIELDS } from './answers/districts.js';
import { answerHealth } from './answers/health.js';
import { answerHotspots } from './answers/hotspots.js';
import { answerRankings } from './answers/rankings.js';
import { answerScene, answerScenes, sceneRoot } from './answers/scenes.js';
import { answerTable, TABLE_FIELDS } from './answers/table.js';
import { answerSeries, answerTrends } from './answers/trends.js';
import { alphaParam, dayParam, idParam, limitParam, yearParam, yearRange } from './params.js';
import { relativeInText, relativeToRoot } from '../workers/core/relative-paths.js';
import {
  DISTRICT_BODY, DISTRICTS_BODY, ERROR_BODY, HEALTH_BODY, HOTSPOTS_BODY, Q, querySchema, RANKINGS_BODY, SCENE_BODY, SCENES_BODY,
  SERIES_BODY, STATUS_BODY, TABLE_BODY, TRENDS_BODY,
} from './schemas.js';

type Query = Record<string, string | undefined>;

/** A CSV table: a header line of field names (units in the names), then one line per row (RFC 4180). */
const CSV_BODY = { type: 'string', description: 'CSV (RFC 4180), header line first' } as const;

/** Error bodies every read route may answer with. */
const ERRORS = { 400: ERROR_BODY, 401: ERROR_BODY, 404: ERROR_BODY, 429: ERROR_BODY, 503: ERROR_BODY };

/** CSV when format=csv, or when the client asks for text/csv and not for JSON. */
function wantsCsv(req: FastifyRequest, format: string | undefined): boolean {
  if (format !== undefined) return format === 'csv';
  const accept = String(req.headers.accept ?? '');
  return /\btext\/csv\b/.test(accept) && !/\bapplication\/(geo\+)?json\b/.test(accept);
}

function sendCsv(reply: FastifyReply, rows: Parameters<typeof toCsv>[0], columns: readonly string[]): string {
  reply.type('text/csv; charset=utf-8');
  return toCsv(rows, columns);
}

export interface ReadRouteOptions {
  dataRoot?: string;
}

export function registerReadRoutes(app: FastifyInstance, store: Store, options: ReadRouteOptions): void {
  const cached = { cacheBody: true };

  app.get('/api/health', {
    config: cached,
    schema: { summary: 'Store kind, schema version, software version, the last run and the years with values', querystring: querySchema({}), response: { 200: HEALTH_BODY, ...ERRORS } },
  }, async () => answerHealth(store));

  app.get<{ Querystring: Query }>('/api/districts', {
    config: cached,
    schema: {
      summary: 'The districts as a GeoJSON FeatureCollection with one season-year\'s means as properties',
      description: 'RFC 7946, lon/lat. The rural reference is the feature with role "rural". format=csv (or Accept: text/csv) gives the same rows without geometry.',
      querystring: querySchema({ year: Q.year, season: Q.season, metric: Q.metric, format: Q.format, limit: Q.limit, cursor: Q.cursor }),
      response: { 200: { description: 'GeoJSON, or CSV on request', content: { 'application/geo+json': { schema: DISTRICTS_BODY }, 'text/csv': { schema: CSV_BODY } } }, ...ERRORS },
    },
  }, async (req, reply) => {
    const q = req.query;
    const body = await answerDistricts(store, {
      year: yearParam(q.year, 'year'), season: q.season as Season, metric: q.metric as Metric, limit: limitParam(q.limit), cursor: q.cursor,
    }, { memo: req.memo });
    if (wantsCsv(req, q.format)) {
      reply.header('X-Next-Cursor', body.next_cursor ?? '');
      return sendCsv(reply, body.features.map((f) => ({ ...f.properties })), DISTRICT_CSV_FIELDS);
    }
    reply.type('application/geo+json; charset=utf-8');
    return body;
  });

  app.get<{ Params: { id: string } }>('/api/districts/:id', {
    config: cached,
    schema: {
      summary: 'One district: outline, stored properties and the years it has values',
      params: { type: 'object', properties: { id: { type: 'string', minLength: 1, maxLength: 200 } }, required: ['id'] },
      querystring: querySchema({}), response: { 200: DISTRICT_BODY, ...ERRORS },
    },
  }, async (req) => answerDistrict(store, req.params.id, { memo: req.memo }));

  app.get<{ Params: { id: string }; Querystring: Query }>('/api/districts/:id/series', {
    config: cached,
    schema: {
      summary: 'One district\'s yearly series of a metric and its trend (the district\'s row of /api/trends)',
      params: { type: 'object', properties: { id: { type: 'string', minLength: 1, maxLength: 200 } }, required: ['id'] },
      querystring: querySchema({
        metric: Q.metric, season: Q.season, from: Q.from, to: Q.to, alpha: Q.alpha,
        serial_correction: Q.serial_correction, dates: Q.boolean('true: list the dates behind each year'),
      }),
      response: { 200: SERIES_BODY, ...ERRORS },
    },
  }, async (req) => {
    const q = req.query;
    return answerSeries(store, req.params.id, {
      metric: q.metric as Metric, season: q.season as Season, ...yearRange(q.from, q.to), alpha: alphaParam(q.alpha),
      serial_correction: q.serial_correction as SerialCorrection | undefined, dates: q.dates === 'true',
    }, { memo: req.memo });
  });

  app.get<{ Querystring: Query }>('/api/trends', {
    config: cached,
    schema: {
      summary: 'Every district\'s trend: Mann–Kendall, Sen slope with interval and pivot, raw p, Benjamini–Hochberg q, direction',
      querystring: querySchema({
        metric: Q.metric, season: Q.season, from: Q.from, to: Q.to, alpha: Q.alpha,
        serial_correction: Q.serial_correction, limit: Q.limit, cursor: Q.cursor,
      }),
      response: { 200: TRENDS_BODY, ...ERRORS },
    },
  }, async (req) => {
    const q = req.query;
    return answerTrends(store, {
      metric: q.metric as Metric, season: q.season as Season, ...yearRange(q.from, q.to), alpha: alphaParam(q.alpha),
      serial_correction: q.serial_correction as SerialCorrection | undefined, limit: limitParam(q.limit), cursor: q.cursor,
    }, { memo: req.memo });
  });

  app.get<{ Querystring: Query }>('/api/rankings', {
    config: cached,
    schema: {
      summary: 'Districts ranked by a metric in one season-year, with the rank change against the previous year with values',
      querystring: querySchema({
        year: Q.year, metric: Q.metric, season: Q.season,
        order: { type: 'string', enum: ['desc', 'asc'], default: 'desc', description: 'desc: rank 1 is the highest value' }, limit: Q.limit, cursor: Q.cursor,
      }),
      response: { 200: RANKINGS_BODY, ...ERRORS },
    },
  }, async (req) => {
    const q = req.query;
    return answerRankings(store, {
      year: yearParam(q.year, 'year'), metric: q.metric as Metric, season: q.season as Season, order: q.order as RankOrder, limit: limitParam(q.limit), cursor: q.cursor,
    }, { memo: req.memo });
  });

  app.get<{ Querystring: Query }>('/api/hotspots', {
    config: cached,
    schema: {
      summary: 'Getis–Ord Gi* per district and the global Moran\'s I of one season-year (queen contiguity)',
      querystring: querySchema({
        year: Q.year, metric: Q.metric, season: Q.season,
        fdr: Q.boolean('true: hot and cold spots from Benjamini–Hochberg q instead of p'),
      }),
      response: { 200: HOTSPOTS_BODY, ...ERRORS },
    },
  }, async (req) => {
    const q = req.query;
    return answerHotspots(store, { year: yearParam(q.year, 'year'), metric: q.metric as Metric, season: q.season as Season, fdr: q.fdr === 'true' }, { memo: req.memo });
  });

  app.get<{ Querystring: Query }>('/api/scenes', {
    config: cached,
    schema: {
      summary: 'Scenes in acquisition order: time (UTC), pass, timing rating, sensor, state, failure reason, valid fraction per district',
      querystring: querySchema({
        state: { type: 'string', enum: ['registered', 'processed', 'failed'] }, kind: { type: 'string', enum: ['lst', 'albedo', 'qa', 'thermal'] },
        pass: { type: 'string', enum: ['day', 'night'] }, from: Q.day('first'), to: Q.day('last'), limit: Q.limit, cursor: Q.cursor,
      }),
      response: { 200: SCENES_BODY, ...ERRORS },
    },
  }, async (req) => {
    const q = req.query;
    return answerScenes(store, {
      state: q.state as never, kind: q.kind as never, pass: q.pass as never, from: dayParam(q.from, 'from'), to: dayParam(q.to, 'to'),
      limit: limitParam(q.limit), cursor: q.cursor,
    }, { memo: req.memo, dataRoot: options.dataRoot });
  });

  app.get<{ Params: { id: string } }>('/api/scenes/:id', {
    config: cached,
    schema: {
      summary: 'One scene',
      params: { type: 'object', properties: { id: { type: 'string', pattern: '^[0-9]{1,15}$', description: 'a scene id in decimal digits' } }, required: ['id'] },
      querystring: querySchema({}), response: { 200: SCENE_BODY, ...ERRORS },
    },
  }, async (req) => answerScene(store, idParam(req.params.id, 'id'), { memo: req.memo, dataRoot: options.dataRoot }));

  app.get<{ Querystring: Query }>('/api/table', {
    config: cached,
    schema: {
      summary: 'The district table by date or by year (units in the field names and CSV headers)',
      querystring: querySchema({ level: { type: 'string', enum: ['date', 'year'], default: 'date' }, year: Q.year, format: { ...Q.format, default: 'json' } }),
      response: { 200: { description: 'JSON, or CSV with format=csv', content: { 'application/json': { schema: TABLE_BODY }, 'text/csv': { schema: CSV_BODY } } }, ...ERRORS },
    },
  }, async (req, reply) => {
    const q = req.query;
    const level = q.level as 'date' | 'year';
    const body = await answerTable(store, { level, year: yearParam(q.year, 'year') });
    if (q.format === 'csv') return sendCsv(reply, body.rows, TABLE_FIELDS[level]);
    return body;
  });

  app.get('/api/status', {
    config: cached,
    schema: {
      summary: 'Scene counts by state, the stored failures and how each thermal pass\'s LST was made (paths relative to the data root)',
      querystring: querySchema({}), response: { 200: STATUS_BODY, ...ERRORS },
    },
  }, async (req) => {
    const root = options.dataRoot !== undefined ? path.resolve(options.dataRoot) : await sceneRoot(store, undefined, req.memo);
    const fails = (await failures(store)).map((f) => {
      const rel = relativeToRoot(f.path, root);
      // the scene's own path first (it may hold blanks), then any other absolute path in the message
      return { ...f, path: rel, error: relativeInText(f.error.split(f.path).join(rel), root) };
    });
    // what `heatledger status` lists for thermal passes, from the same store function
    const rel = (t: string | null) => (t === null ? null : relativeInText(t, root));
    const thermal = (await thermalPasses(store)).map((t) => ({
      ...t, path: relativeToRoot(t.path, root), thermalConstantsSource: rel(t.thermalConstantsSource), emissivitySource: rel(t.emissivitySource),
      howLstWasMade: relativeInText(t.howLstWasMade, root),
    }));
    return snakeCaseKeys({ scenes: await sceneStatusCounts(store), failures: fails, thermalScenes: thermal });
  });
}
