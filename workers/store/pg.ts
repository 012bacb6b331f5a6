/**
 * Store on a PostgreSQL server through a `pg` Pool.
 * Every session runs with TimeZone UTC and DateStyle ISO, so `::date` casts and
 * the text the value parsers read are the same as on the embedded engine, and
 * with JIT compilation off: the district table and series read district by
 * district (sql/migrations/008_district_reads.sql), plans whose estimated cost
 * passes the server's JIT thresholds although they run in a few hundred
 * milliseconds; compiling them cost 60-280 ms a query on the big-store bench
 * (`npm run bench -- --big-store`, which prints both).
 */
import pg from 'pg';
import { parse as parseConnectionString } from 'pg-connection-string';
import { ServiceError } from '../core/errors.js';
import { tlsWithExtraCa, deferredCaList } from '../extra-ca.js';
import { sha256Hex } from '../core/hash.js';
import { TransactionGuard } from './guard.js';
import { sqlHead } from './sql-head.js';
import type { QueryOptions, Store, Transaction } from './interface.js';
import { ARRAY_ELEMENT_OID, SCALAR_PARSERS } from './value-parsers.js';

/** Where the server is, for messages: "host:port/database" (never the password). */
export function describeDatabaseUrl(databaseUrl: string): string {
  try {
    const u = new URL(databaseUrl);
    const host = u.searchParams.get('host') ?? (u.hostname || 'localhost');
    const port = u.port || '5432';
    const db = decodeURIComponent(u.pathname.replace(/^\//, '')) || '(default database)';
    return `${host}:${port}/${db}`;
  } catch {
    return '(unparseable DATABASE_URL)';
  }
}

const CONNECTION_CODES = new Set([
  'ECONNREFUSED', 'ENOTFOUND', 'EAI_AGAIN', 'ETIMEDOUT', 'EHOSTUNREACH', 'ENETUNREACH', 'ECONNRESET', 'EPIPE', 'ENOENT',
]);

function errorCode(e: unknown): string | undefined {
  const err = e as { code?: unknown; errors?: Array<{ code?: unknown }> };
  if (typeof err?.code === 'string') return err.code;
  // Node's happy-eyeballs connect raises an AggregateError whose members carry the code.
  const inner = err?.errors?.find((x) => typeof x?.code === 'string');
  return inner ? String(inner.code) : undefined;
}

/** Map a pg / socket error to a ServiceError whose message says what went wrong and where. */
export function pgServiceError(e: unknown, where: string, sql?: string): ServiceError {
  if (e instanceof ServiceError) return e;
  const code = errorCode(e);
  const message = (e as Error)?.message || String(e);
  const hostPort = where.replace(/\/[^/]*$/, '');
  if (code && CONNECTION_CODES.has(code)) {
    return new ServiceError(`cannot reach PostgreSQL at ${hostPort}: ${code}`, { cause: e, service: 'PostgreSQL' });
  }
  if (/timeout/i.test(message) && /connect/i.test(message)) {
    return new ServiceError(`cannot reach PostgreSQL at ${hostPort}: connection timed out`, { cause: e, service: 'PostgreSQL' });
  }
  if (/Connection terminated/i.test(message)) {
    return new ServiceError(`lost the connection to PostgreSQL at ${hostPort}: ${message}`, { cause: e, service: 'PostgreSQL' });
  }
  if (code === '3D000' || code === '28P01' || code === '28000' || code === '57P03') {
    return new ServiceError(`PostgreSQL at ${where} refused the connection: ${message} (SQLSTATE ${code})`, { cause: e, service: 'PostgreSQL' });
  }
  const state = code ? ` (SQLSTATE ${code})` : '';
  const stmt = sql ? ` in "${sqlHead(sql)}"` : '';
  return new ServiceError(`PostgreSQL query failed at ${where}: ${message}${state}${stmt}`, { cause: e, service: 'PostgreSQL' });
}

/** The settings of every session of the store (see the head of this file). */
export const PG_SESSION_OPTIONS = '-c TimeZone=UTC -c DateStyle=ISO -c jit=off';

// pg-types' arrayParser is an object with create(); its .d.ts declares a function.
const arrayParser = pg.types.arrayParser as unknown as {
  create(source: string, transform: (entry: string) => unknown): { parse(): unknown[] };
};

const typeParsers = {
  getTypeParser(oid: number, format?: string): unknown {
    if (format !== 'binary') {
      const scalar = SCALAR_PARSERS[oid];
      if (scalar) return scalar;
      const element = ARRAY_ELEMENT_OID[oid];
      if (element !== undefined) {
        const parse = SCALAR_PARSERS[element];
        return (text: string) => arrayParser.create(text, parse).parse();
      }
    }
    return (pg.types.getTypeParser as (o: number, f?: string) => unknown)(oid, format);
  },
};

/**
 * Connect a Pool to `databaseUrl` and check it answers. Throws ServiceError
 * ("cannot reach PostgreSQL at host:port: ECONNREFUSED") when it does not.
 */
export async function openPgStore(databaseUrl: string): Promise<Store> {
  const where = describeDatabaseUrl(databaseUrl);
  const pool = new pg.Pool(poolSettings(databaseUrl, {
    max: 8,
    // A dead server must fail, never hang: pg's default connect timeout is none.
    connectionTimeoutMillis: 10_000,
    idleTimeoutMillis: 30_000,
    options: PG_SESSION_OPTIONS,
    types: typeParsers as pg.CustomTypesConfig,
  }));
  // An idle client losing its server emits 'error' on the pool; without a
  // listener Node would crash. The next query reports the problem instead.
  // (Checked-out clients get their own listener: PgStore.connect.)
  pool.on('error', () => undefined);
  try {
    await pool.query('SELECT 1');
  } catch (e) {
    await pool.end().catch(() => undefined);
    throw pgServiceError(e, where);
  }
  return new PgStore(pool, where);
}

/** PGSSLMODE values with which pg turns TLS on when the URL says nothing of it. */
const TLS_SSLMODES = new Set(['prefer', 'require', 'verify-ca', 'verify-full']);

/**
 * A Pool's settings for `databaseUrl`. Normally pg parses the URL itself. In a
 * process whose NODE_EXTRA_CA_CERTS was deferred (extra-ca.ts) the URL is parsed
 * here, by pg's own parser and merged in pg's own order (the URL's settings over
 * ours), so that TLS, whether the URL or PGSSLMODE asks for it, trusts those
 * certificates as well.
 */
export function poolSettings(databaseUrl: string, ours: pg.PoolConfig, env: NodeJS.ProcessEnv = process.env): pg.PoolConfig {
  if (!deferredCaList(env)) return { ...ours, connectionString: databaseUrl };
  const merged = Object.assign({}, ours, parseConnectionString(databaseUrl)) as pg.PoolConfig & { ssl?: unknown };
  let ssl = merged.ssl;
  if (ssl === undefined && TLS_SSLMODES.has(env.PGSSLMODE ?? '')) ssl = true;
  if (ssl === true) ssl = {};
  if (ssl && typeof ssl === 'object') merged.ssl = tlsWithExtraCa(ssl as pg.PoolConfig['ssl'] & object, env);
  return merged;
}

const statementNames = new Map<string, string>();

/**
 * The name of a prepared statement (QueryOptions.prepared): from a hash of its
 * text, so that one name always means one text on every connection (`pg` parses
 * a name once per connection and refuses a name reused for another text).
 * Prepared, the two writes of every scene (registration, zonal rows) cost the
 * server 2.0 ms of CPU a scene instead of 2.9 (300 scenes of 21 rows, three
 * alternating rounds each, 2026-12); the distributed archive bench's
 * PostgreSQL share falls by about a millisecond a scene.
 */
function statementName(sql: string): string {
  let name = statementNames.get(sql);
  if (name === undefined) statementNames.set(sql, (name = `hl_${sha256Hex(sql).slice(0, 32)}`));
  return name;
}

async function run<T>(client: pg.Pool | pg.PoolClient, where: string, sql: string, params?: unknown[], options?: QueryOptions): Promise<T[]> {
  try {
    const result = options?.prepared ? await client.query({ name: statementName(sql), text: sql, values: params }) : await client.query(sql, params);
    return result.rows as T[];
  } catch (e) {
    throw pgServiceError(e, where, sql);
  }
}

async function execSql(client: pg.Pool | pg.PoolClient, where: string, sql: string): Promise<void> {
  try {
    // No parameters: the simple query protocol, which accepts several statements.
    await client.query(sql);
  } catch (e) {
    throw pgServiceError(e, where, sql);
  }
}

class PgStore implements Store {
  readonly kind = 'pg' as const;
  private readonly guard = new TransactionGuard();
  private closed = false;

  constructor(private readonly pool: pg.Pool, private readonly where: string) {}

  query<T = Record<string, unknown>>(sql: string, params?: unknown[], options?: QueryOptions): Promise<T[]> {
    this.guard.check('query()');
    return run<T>(this.pool, this.where, sql, params, options);
  }

  exec(sql: string): Promise<void> {
    this.guard.check('exec()');
    return execSql(this.pool, this.where, sql);
  }

  async transaction<T>(fn: (tx: Transaction) => Promise<T>): Promise<T> {
    this.guard.check('transaction()');
    const client = await this.connect();
    const tx: Transaction = {
      query: <R>(sql: string, params?: unknown[], options?: QueryOptions) => run<R>(client, this.where, sql, params, options),
      exec: (sql: string) => execSql(client, this.where, sql),
    };
    let broken: unknown;
    try {
      await execSql(client, this.where, 'BEGIN');
      const result = await this.guard.run(() => fn(tx));
      await execSql(client, this.where, 'COMMIT');
      return result;
    } catch (e) {
      try {
        await client.query('ROLLBACK');
      } catch (rollbackError) {
        broken = rollbackError; // connection is unusable: destroy it below
      }
      throw e;
    } finally {
      client.release(broken instanceof Error ? broken : undefined);
    }
  }

  async withLock<T>(key: string, fn: () => Promise<T>): Promise<T> {
    const client = await this.connect();
    let broken: Error | undefined;
    try {
      // Session-level advisory lock keyed by a 64-bit hash of the name.
      await run(client, this.where, 'SELECT pg_advisory_lock(hashtextextended($1, 0))', [key]);
      try {
        return await fn();
      } finally {
        await run(client, this.where, 'SELECT pg_advisory_unlock(hashtextextended($1, 0))', [key]).catch((e: Error) => {
          broken = e;
        });
      }
    } finally {
      client.release(broken);
    }
  }

  async close(): Promise<void> {
    if (this.closed) return;
    this.closed = true;
    await this.pool.end();
  }

  /**
   * A client checked out of the pool. While checked out, the pool's own 'error'
   * listener is off it: without one here, a server going away between two
   * queries ("Connection terminated unexpectedly") would be an unhandled
   * 'error' event and end the process. The query in progress fails instead
   * (a ServiceError), and release() drops the broken client.
   */
  private async connect(): Promise<pg.PoolClient> {
    let client: pg.PoolClient;
    try {
      client = await this.pool.connect();
    } catch (e) {
      throw pgServiceError(e, this.where);
    }
    const onError = () => undefined;
    client.on('error', onError);
    const release = client.release.bind(client);
    client.release = (err?: Error | boolean) => {
      client.off('error', onError);
      return release(err);
    };
    return client;
  }
}
