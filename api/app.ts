/**
 * The thin HTTP API: each route validates its query, runs one named query
 * through the store, and serialises. JSON by default, CSV on `format=csv`.
 */
import Fastify, { type FastifyInstance } from 'fastify';
import type { Store } from '../workers/store/index.js';
import { districtTable, TABLE_FIELDS } from '../workers/commands/table.js';
import { toCsv } from '../workers/format.js';
import { listDistricts, sceneStatusCounts, failures } from '../workers/store/repo.js';
import { isInputError } from '../workers/core/errors.js';
import { renderPage } from './page.js';

export const CAUTION =
  'LST is land-surface (skin) temperature, not air temperature. These figures inform, and do not replace, local heat-action plans, codes and licensed professionals.';

const tableQuery = {
  type: 'object',
  properties: {
    level: { type: 'string', enum: ['date', 'year'], default: 'date' },
    year: { type: 'integer', minimum: 1900, maximum: 2200 },
    format: { type: 'string', enum: ['json', 'csv'], default: 'json' },
  },
  additionalProperties: false,
} as const;

export function buildApp(store: Store): FastifyInstance {
  // an unknown query parameter (a misspelt "yaer=2024") is refused, not silently dropped
  const app = Fastify({ logger: false, ajv: { customOptions: { removeAdditional: false } } });

  app.setErrorHandler((err, _req, reply) => {
    const e = err as Error & { statusCode?: number; validation?: unknown };
    if (e.validation || isInputError(e)) return reply.status(400).send({ error: e.message });
    if (e.name === 'ServiceError') return reply.status(503).send({ error: e.message });
    return reply.status(e.statusCode && e.statusCode < 500 ? e.statusCode : 500).send({ error: e.statusCode && e.statusCode < 500 ? e.message : 'internal error' });
  });

  app.get('/api/health', async () => {
    await store.query('SELECT 1');
    return { ok: true, store: store.kind };
  });

  app.get('/api/districts', async () => {
    const rows = await listDistricts(store);
    return rows.map((d) => ({ id: d.id, name: d.name, role: d.role, area_m2: d.areaSquareMetres }));
  });

  app.get<{ Querystring: { level: 'date' | 'year'; year?: number; format: 'json' | 'csv' } }>(
    '/api/table',
    { schema: { querystring: tableQuery } },
    async (req, reply) => {
      const rows = await districtTable(store, req.query.level, req.query.year);
      if (req.query.format === 'csv') {
        reply.type('text/csv; charset=utf-8');
        return toCsv(rows, TABLE_FIELDS[req.query.level]);
      }
      return { units: { lst: 'K', suhi: 'K', ati: '1/K' }, caution: CAUTION, rows };
    },
  );

  app.get('/api/status', async () => ({ scenes: await sceneStatusCounts(store), failures: await failures(store) }));

  app.get('/', async (_req, reply) => {
    reply.type('text/html; charset=utf-8');
    return renderPage(await districtTable(store, 'year'), CAUTION);
  });

  return app;
}
