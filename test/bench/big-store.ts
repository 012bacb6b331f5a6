/**
 * `npm run bench -- --big-store [--keep] [--json]`: the district table, the
 * trend series and the scene listing on a store of 1,000 districts × 10 years
 * × 2 passes a day (7.3 million district-pass rows, 3.65 million derived rows)
 * on the PostgreSQL server (HEATLEDGER_TEST_DATABASE_URL, default
 * postgres://postgres@127.0.0.1:5432/test), before migration 006, after 006 and
 * after 008, in one run (the load average is printed at the start and the end).
 *
 * 1. The store is generated once into a database of its own
 *    (hlbigstore_<fingerprint of the generator and the migrations before 006>),
 *    kept for the next run; each run works on a copy (CREATE DATABASE ... TEMPLATE).
 * 2. Before 006: the queries as they read before 006 (QUERIES_BEFORE_006), the
 *    scene listing (the scenes route's own query) without its index.
 * 3. Migrations 006 and 007 are applied to the copy (the time is printed: 006 fills the summaries).
 * 4. After 006: the queries as they read before 008 (QUERIES_BEFORE_008), in sessions
 *    with JIT on (the server's default, as the store ran them then).
 * 5. Migration 008; after 008: the named queries (sql/queries) through the store
 *    (JIT off, workers/store/pg.ts), then the same with JIT on, then with a minimum
 *    valid fraction (computed, not kept).
 * Each query: median client wall time of 3 runs after one warm-up (one run for the
 * slow ones: before 006 and the computed readings), the median on a bare client that
 * parses no value ("unparsed": the server and the transfer; the rest of the wall time
 * is the store's parsing of the rows), the CPU time of the bench process in the store's
 * runs (decoding and parsing, a figure the machine's load does not stretch), and the
 * server's own EXPLAIN (ANALYZE, BUFFERS) execution time and buffers; the full
 * plans go to test/bench/.work/big-store-plans.txt. Figures, not assertions.
 * --keep leaves the working copy (its name is printed); --big-store-shape DxY (e.g. 20x2)
 * tries the bench on a smaller store of D districts and Y years.
 */
import { createHash } from 'node:crypto';
import { cpus, loadavg } from 'node:os';
import { mkdirSync, writeFileSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import pg from 'pg';
import { listMigrations, migrate } from '../../workers/store/migrate.js';
import { PG_SESSION_OPTIONS, openPgStore } from '../../workers/store/pg.js';
import { districtTableByDate } from '../../workers/store/district-tables.js';
import { namedQuery } from '../../workers/store/queries.js';
import type { Queryable, Store } from '../../workers/store/interface.js';
import { BIG_STORE, QUERIES_BEFORE_006, QUERIES_BEFORE_008, bigStoreStatements, type BigStoreShape } from './big-store-data.js';
import { median } from './timing.js';

const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), '../../..');
const PLANS_FILE = join(ROOT, 'test/bench/.work/big-store-plans.txt');
const SUMMARY_MIGRATION = 6;
const DISTRICT_READS_MIGRATION = 8;

export interface QueryFigure {
  name: string;
  rows: number;
  /** Median client wall time, ms (query, transfer and parsing in `pg`). */
  wall_ms: number;
  /** Median wall time on a bare `pg` client that keeps every value as its text and each row as an array, ms: server and transfer, no value parsing. */
  raw_ms: number;
  /** Median CPU time of this process (user + system) in those runs, ms: decoding and parsing the rows, whatever the load. */
  client_cpu_ms: number;
  /** Server execution time of EXPLAIN (ANALYZE, BUFFERS), ms. */
  server_ms: number;
  /** Shared buffers hit + read by the plan. */
  buffers: string;
}

export interface BigStoreResult {
  districts: number;
  years: number;
  zonal_rows: number;
  derived_rows: number;
  scenes: number;
  database_size: string;
  generate_seconds: number | null;
  copy_seconds: number;
  migration_006_seconds: number;
  before: QueryFigure[];
  /** After 006 and 007, before 008: the queries as they read then, JIT on. */
  after_006: QueryFigure[];
  /** After 008: the named queries through the store (JIT off). */
  after: QueryFigure[];
  /** After 008 with JIT on. */
  after_jit: QueryFigure[];
  /** A minimum valid fraction asked: computed from the derived and zonal rows, as before 006. */
  after_computed: QueryFigure[];
}

function urlOf(serverUrl: string, db: string): string {
  const u = new URL(serverUrl);
  u.pathname = `/${db}`;
  return u.href;
}

async function admin<T>(serverUrl: string, body: (c: pg.Client) => Promise<T>): Promise<T> {
  const c = new pg.Client({ connectionString: urlOf(serverUrl, 'postgres') });
  await c.connect();
  try {
    return await body(c);
  } finally {
    await c.end();
  }
}

async function exists(serverUrl: string, db: string): Promise<boolean> {
  return admin(serverUrl, async (c) => (await c.query('SELECT 1 FROM pg_database WHERE datname = $1', [db])).rowCount === 1);
}

/** The kept store: generated (migrations before 006, then the generator) unless already there. Returns the seconds spent, or null. */
async function ensureBase(serverUrl: string, base: string, shape: BigStoreShape, say: (l: string) => void): Promise<number | null> {
  if (await exists(serverUrl, base)) return null;
  const building = `${base}_building`;
  const t0 = performance.now();
  await admin(serverUrl, async (c) => {
    await c.query(`DROP DATABASE IF EXISTS ${building} WITH (FORCE)`);
    await c.query(`CREATE DATABASE ${building}`);
  });
  say(`  generating ${building} (once; later runs reuse it) ...`);
  const store = await openPgStore(urlOf(serverUrl, building));
  try {
    await migrate(store, listMigrations().filter((m) => m.version < SUMMARY_MIGRATION));
    // one transaction on one connection; the generated rows satisfy the foreign keys by
    // construction, so their checks are skipped for it (SET LOCAL: most of the time otherwise)
    await store.transaction(async (tx) => {
      await tx.exec('SET LOCAL session_replication_role = replica');
      for (const sql of bigStoreStatements(shape)) {
        const t = performance.now();
        await tx.exec(sql);
        say(`    ${sql.trim().split('\n')[0].slice(0, 48).padEnd(48)} ${((performance.now() - t) / 1000).toFixed(1)} s`);
      }
    });
  } finally {
    await store.close();
  }
  await admin(serverUrl, (c) => c.query(`ALTER DATABASE ${building} RENAME TO ${base}`));
  return (performance.now() - t0) / 1000;
}

interface Measured {
  name: string;
  sql: string;
  params: unknown[];
  /** How the store reads it, when not as the query's rows (the table by date unfolds each district's packed days). */
  read?: (db: Queryable) => Promise<unknown[]>;
}

/**
 * The store's queries in sessions with JIT compilation on (the server's default), as the store
 * ran them before it turned JIT off (workers/store/pg.ts): one transaction a query.
 */
function withJit(store: Store): Queryable {
  return {
    query: <T>(sql: string, params?: unknown[]) => store.transaction(async (tx) => {
      await tx.exec('SET LOCAL jit = on');
      return tx.query<T>(sql, params);
    }),
  };
}

/** A bare client on the same database: every value stays the server's text (no type parsers). */
async function rawClient(url: string): Promise<pg.Client> {
  const keepText = (text: string) => text;
  const c = new pg.Client({
    connectionString: url,
    options: PG_SESSION_OPTIONS,
    types: { getTypeParser: () => keepText } as unknown as pg.CustomTypesConfig,
  });
  await c.connect();
  return c;
}

/**
 * `runs` timed runs through the store and as many on the bare client (after one warm-up
 * each when more than one), then EXPLAIN (ANALYZE, BUFFERS).
 */
async function measure(store: Queryable, raw: pg.Client, q: Measured, plans: string[], runs = 3, jitOn = false): Promise<QueryFigure> {
  let rows = 0;
  const read = q.read ?? ((db: Queryable) => db.query(q.sql, q.params));
  if (runs > 1) await read(store); // warm-up
  const walls: number[] = [];
  const cpu: number[] = [];
  for (let i = 0; i < runs; i++) {
    const t = performance.now();
    const c = process.cpuUsage();
    rows = (await read(store)).length;
    walls.push(performance.now() - t);
    const used = process.cpuUsage(c);
    cpu.push((used.user + used.system) / 1000);
  }
  // (the slow single-run readings skip the bare client: their time is the server's)
  const raws: number[] = [];
  await raw.query(`SET jit = ${jitOn ? 'on' : 'off'}`);
  if (runs > 1) await raw.query({ text: q.sql, values: q.params, rowMode: 'array' });
  for (let i = 0; runs > 1 && i < runs; i++) {
    const t = performance.now();
    await raw.query({ text: q.sql, values: q.params, rowMode: 'array' });
    raws.push(performance.now() - t);
  }
  const plan = (await store.query<{ 'QUERY PLAN': string }>(`EXPLAIN (ANALYZE, BUFFERS) ${q.sql}`, q.params)).map((r) => r['QUERY PLAN']);
  plans.push(`== ${q.name} ${JSON.stringify(q.params)}\n${plan.join('\n')}\n`);
  const exec = plan.find((l) => l.startsWith('Execution Time'))?.match(/([\d.]+) ms/);
  const buffers = plan.find((l) => l.trim().startsWith('Buffers:'))?.trim().replace(/^Buffers:\s*/, '') ?? '';
  return { name: q.name, rows, wall_ms: median(walls), client_cpu_ms: median(cpu), raw_ms: raws.length > 0 ? median(raws) : NaN, server_ms: exec ? Number(exec[1]) : NaN, buffers };
}

function line(f: QueryFigure): string {
  return `  ${f.name.padEnd(34)} ${String(f.rows).padStart(7)} rows  wall ${f.wall_ms.toFixed(0).padStart(6)} ms  client cpu ${f.client_cpu_ms.toFixed(0).padStart(5)} ms  unparsed ${Number.isNaN(f.raw_ms) ? '     -' : f.raw_ms.toFixed(0).padStart(6)} ms  server ${f.server_ms.toFixed(0).padStart(6)} ms  buffers ${f.buffers}`;
}

export async function runBigStoreBench(say: (l?: string) => void, options: { keep?: boolean; shape?: BigStoreShape } = {}): Promise<BigStoreResult> {
  const shape = options.shape ?? BIG_STORE;
  const serverUrl = process.env.HEATLEDGER_TEST_DATABASE_URL ?? 'postgres://postgres@127.0.0.1:5432/test';
  const before006 = listMigrations().filter((m) => m.version < SUMMARY_MIGRATION);
  const fingerprint = createHash('sha256')
    .update(JSON.stringify([bigStoreStatements(shape), before006.map((m) => m.sql)]))
    .digest('hex').slice(0, 12);
  const base = `hlbigstore_${fingerprint}`;
  const work = `hlbigstore_run_${process.pid}`;
  say(`\n[big store] ${shape.districts} districts × ${shape.years} years × 2 passes a day on ${new URL(serverUrl).host}`);
  say(`  load average (1, 5, 15 min) at the start: ${loadavg().map((x) => x.toFixed(2)).join(', ')} on ${cpus().length} CPUs`);
  const generated = await ensureBase(serverUrl, base, shape, say);
  if (generated !== null) say(`  generated in ${generated.toFixed(0)} s`);
  let t = performance.now();
  await admin(serverUrl, async (c) => {
    await c.query(`DROP DATABASE IF EXISTS ${work} WITH (FORCE)`);
    await c.query(`CREATE DATABASE ${work} TEMPLATE ${base}`);
  });
  const copySeconds = (performance.now() - t) / 1000;
  const store = await openPgStore(urlOf(serverUrl, work));
  const raw = await rawClient(urlOf(serverUrl, work));
  const plans: string[] = [];
  try {
    const [counts] = await store.query<{ zonal: number; derived: number; scenes: number; size: string }>(
      `SELECT (SELECT count(*) FROM zonal_stats)::bigint AS zonal, (SELECT count(*) FROM derived_metrics)::bigint AS derived,
              (SELECT count(*) FROM scenes)::bigint AS scenes, pg_size_pretty(pg_database_size(current_database())) AS size`);
    say(`  ${counts.zonal} zonal (district-pass) rows, ${counts.derived} derived rows, ${counts.scenes} scenes; ${counts.size}; copied for this run in ${copySeconds.toFixed(0)} s`);
    const lastYear = shape.firstYear + shape.years - 1;
    const midScene = await store.query<{ acquired_at: string; id: number }>(
      `SELECT acquired_at, id FROM scenes ORDER BY acquired_at, id OFFSET (SELECT count(*) / 2 FROM scenes) LIMIT 1`);
    // the scenes route's own query (sql/queries/scene_listing.sql), as it pages: 100 rows after a cursor
    const listing: Measured[] = [
      { name: 'scene listing, first page', sql: namedQuery('scene_listing'), params: ['processed', 'lst', 'day', null, null, null, null, 101, null] },
      { name: 'scene listing, a middle page', sql: namedQuery('scene_listing'), params: ['processed', 'lst', 'night', null, null, midScene[0].acquired_at, midScene[0].id, 101, null] },
    ];
    const queries = (text: (n: keyof typeof QUERIES_BEFORE_006) => string, minValid: number | null, viaReader = false): Measured[] => [
      {
        name: `district table by date, ${lastYear}`, sql: text('district_table_date'), params: [lastYear, minValid],
        ...(viaReader ? { read: (db: Queryable) => districtTableByDate(db, { year: lastYear, minValidFraction: minValid }) } : {}),
      },
      { name: 'district table by year, all years', sql: text('district_table_year'), params: [null, minValid] },
      { name: `district table by year, ${lastYear}`, sql: text('district_table_year'), params: [lastYear, minValid] },
      { name: 'series, yearly, all districts', sql: text('district_series'), params: ['suhi_night', null, null, false, minValid] },
      { name: 'series, Jun-Aug by month', sql: text('district_series'), params: ['lst_day', '6,7,8', null, true, minValid] },
    ];

    say('  before 006 (the queries as they read before; no listing index; one timed run each, the slow ones take seconds):');
    const before: QueryFigure[] = [];
    for (const q of [...queries((n) => QUERIES_BEFORE_006[n], null), ...listing]) {
      const f = await measure(store, raw, q, plans, 1);
      before.push(f);
      say(line(f));
    }

    t = performance.now();
    const applied = await migrate(store, listMigrations().filter((m) => m.version < DISTRICT_READS_MIGRATION));
    const migrationSeconds = (performance.now() - t) / 1000;
    await store.exec('ANALYZE');
    say(`  migration ${applied.applied.join(', ')}: ${migrationSeconds.toFixed(1)} s (fills the summaries from ${counts.derived} derived rows)`);

    say('  after 006, before 008 (the queries as they read then, every district joined and sorted as one; JIT on as the server has it):');
    const after006: QueryFigure[] = [];
    for (const q of [...queries((n) => QUERIES_BEFORE_008[n], null), ...listing]) {
      const f = await measure(withJit(store), raw, q, plans, 3, true);
      after006.push(f);
      say(line(f));
    }

    const applied008 = await migrate(store);
    await store.exec('ANALYZE');
    say(`  migration ${applied008.applied.join(', ')}`);
    say('  after 008 (the named queries, district by district; the store\'s sessions, JIT off):');
    const after: QueryFigure[] = [];
    for (const q of [...queries((n) => namedQuery(n), null, true), ...listing]) {
      const f = await measure(store, raw, q, plans);
      after.push(f);
      say(line(f));
    }
    say('  after 008 with JIT on (what JIT compilation alone would add):');
    const afterJit: QueryFigure[] = [];
    for (const q of queries((n) => namedQuery(n), null, true)) {
      const f = await measure(withJit(store), raw, { ...q, name: `${q.name} (JIT)` }, plans, 3, true);
      afterJit.push(f);
      say(line(f));
    }
    say('  after 008 with a minimum valid fraction of 0.5 (computed from the derived and zonal rows, as before 006; one query of each kind):');
    const afterComputed: QueryFigure[] = [];
    for (const q of queries((n) => namedQuery(n), 0.5, true).filter((q) => q.name.includes(String(lastYear)) || q.name.includes('series, yearly'))) {
      const f = await measure(store, raw, q, plans, 1);
      afterComputed.push(f);
      say(line(f));
    }
    say('  ratios of wall times: before 006 / after 008, after 006 / after 008:');
    for (const a of after) {
      const b = before.find((x) => x.name === a.name);
      const m = after006.find((x) => x.name === a.name);
      if (b && m) say(`    ${a.name.padEnd(34)} ${(b.wall_ms / a.wall_ms).toFixed(1).padStart(6)}x ${(m.wall_ms / a.wall_ms).toFixed(1).padStart(6)}x`);
    }
    say(`  load average (1, 5, 15 min) at the end: ${loadavg().map((x) => x.toFixed(2)).join(', ')} on ${cpus().length} CPUs`);
    mkdirSync(dirname(PLANS_FILE), { recursive: true });
    writeFileSync(PLANS_FILE, plans.join('\n'));
    say(`  plans: ${PLANS_FILE}`);
    say(`  kept for the next run: database ${base} (drop it with DROP DATABASE ${base})`);
    return {
      districts: shape.districts, years: shape.years, zonal_rows: Number(counts.zonal), derived_rows: Number(counts.derived),
      scenes: Number(counts.scenes), database_size: counts.size, generate_seconds: generated, copy_seconds: copySeconds,
      migration_006_seconds: migrationSeconds, before, after_006: after006, after, after_jit: afterJit, after_computed: afterComputed,
    };
  } finally {
    await raw.end();
    await store.close();
    if (options.keep) say(`  working copy kept: ${work}`);
    else await admin(serverUrl, (c) => c.query(`DROP DATABASE IF EXISTS ${work} WITH (FORCE)`));
  }
}
