/**
 * The write routes: POST /api/ingest hands scene files under the data root to
 * an ingest job; GET /api/jobs/{id} tells its progress and result. Both need
 * the write token (HEATLEDGER_TOKEN); with none configured they are refused
 * (403), never open. Writes have their own, lower rate limit.
 */
import type { FastifyInstance } from 'fastify';
import type {} from '@fastify/swagger';
import type {} from '@fastify/rate-limit';
import { filesUnderRoot } from './data-root.js';
import { checkBearer } from './tokens.js';
import { ERROR_BODY, INGEST_BODY, INGEST_REQUEST, JOB_BODY, querySchema } from './schemas.js';

export type JobState = 'queued' | 'running' | 'succeeded' | 'incomplete' | 'failed';

export interface JobAnswer {
  id: string;
  state: JobState;
  scenes_asked: number;
  scenes_done: number;
  scenes_failed: number;
  run_id: number | null;
  /** Messages of files refused or failed, paths relative to the data root. */
  errors: string[];
}

/** Where ingest requests go: the serve command gives the runner of its mode. */
export interface IngestJobs {
  /** Start ingesting these files with this district file (real absolute paths under the data root); returns the job id. */
  start(files: string[], districtsPath: string): Promise<string>;
  /** A job's state, or null for an id this server does not know. */
  get(id: string): JobAnswer | null | Promise<JobAnswer | null>;
}

const JOB_ID = '^[A-Za-z0-9-]{1,64}$';

export function registerIngestRoutes(
  app: FastifyInstance,
  o: { token?: string; dataRoot?: string; jobs?: IngestJobs; writesPerMinute: number },
): void {
  const ERRORS = { 400: ERROR_BODY, 401: ERROR_BODY, 403: ERROR_BODY, 404: ERROR_BODY, 429: ERROR_BODY, 503: ERROR_BODY };
  const rateLimit = { max: o.writesPerMinute, timeWindow: 60_000 };

  // the token before validation (after the rate limit): without one configured nothing is written; a wrong one is refused
  const guard = async (req: { headers: { authorization?: string } }, reply: { status: (n: number) => { header: (k: string, v: string) => { send: (b: unknown) => unknown } } }) => {
    if (o.token === undefined) return reply.status(403).header('WWW-Authenticate', 'Bearer').send({ error: 'writes are off on this server: it was started without HEATLEDGER_TOKEN' });
    const denied = checkBearer(req.headers.authorization, [o.token]);
    if (denied) return reply.status(denied.status).header('WWW-Authenticate', 'Bearer').send({ error: denied.error });
    return undefined;
  };

  app.post<{ Body: { files: string[]; districts?: string } }>('/api/ingest', {
    config: { rateLimit },
    preValidation: guard as never,
    schema: {
      summary: 'Ingest scene files that lie under the data root (HEATLEDGER_DATA_ROOT); answers with the job id',
      security: [{ bearer: [] }],
      querystring: querySchema({}), body: INGEST_REQUEST, response: { 202: INGEST_BODY, ...ERRORS },
    },
  }, async (req, reply) => {
    if (o.dataRoot === undefined) return reply.status(503).send({ error: 'ingest over HTTP needs a data root: start the server with HEATLEDGER_DATA_ROOT' });
    if (!o.jobs) return reply.status(503).send({ error: 'this server takes no ingest jobs' });
    const files = await filesUnderRoot(o.dataRoot, req.body.files);
    const [districts] = await filesUnderRoot(o.dataRoot, [req.body.districts ?? 'districts.geojson'], 'districts');
    const id = await o.jobs.start(files, districts);
    return reply.status(202).send({ job_id: id });
  });

  app.get<{ Params: { id: string } }>('/api/jobs/:id', {
    config: { rateLimit },
    preValidation: guard as never,
    schema: {
      summary: 'An ingest job: its state, progress and result',
      security: [{ bearer: [] }],
      params: { type: 'object', properties: { id: { type: 'string', pattern: JOB_ID, description: 'a job id as POST /api/ingest gave it' } }, required: ['id'] },
      querystring: querySchema({}), response: { 200: JOB_BODY, ...ERRORS },
    },
  }, async (req, reply) => {
    const job = o.jobs ? await o.jobs.get(req.params.id) : null;
    if (!job) return reply.status(404).send({ error: `no job with id ${JSON.stringify(req.params.id)} on this server` });
    // job_id as POST /api/ingest names it; id kept for clients written against the earlier answer
    return { job_id: job.id, ...job };
  });
}
