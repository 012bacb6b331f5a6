/**
 * `npm run bench -- --api`: the HTTP API under load. 200 invented districts ×
 * 20 years stored (three July dates a year), on the embedded engine and, when
 * reachable, on the PostgreSQL server; the server runs in this process on
 * loopback, the load generator (autocannon) in a second process
 * (api-load-child.ts), for a set time per route:
 *   /api/trends, /api/districts, /api/districts/{id}/series (every district in turn).
 * Printed per store and route: requests/s, p50 and p99 latency after a 2 s
 * warm-up with answers kept (the normal server) and, shorter, with nothing kept
 * (every request computes); and where the time of one uncached answer goes
 * (queries, statistics, JSON) — the first request of each question pays it.
 * Figures, not assertions.
 */
import { spawn } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { cpus, loadavg, tmpdir } from 'node:os';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { buildApp } from '../../api/app.js';
import { answerDistricts, answerSeries, answerTrends } from '../../api/answers/index.js';
import { mulberry32 } from '../../workers/core/prng.js';
import { openStore, type Store } from '../../workers/store/store.js';
import { registerScene, replaceDerived, upsertDistricts } from '../../workers/store/index.js';
import { createBenchDatabase, dropBenchDatabase, postgresReachable } from './pipeline-services.js';
import { median } from './timing.js';

const ROOT = resolve(dirname(fileURLToPath(import.meta.url)), '../../..');
const CHILD = join(ROOT, 'dist/test/bench/api-load-child.js');
const POSTGRES = 'postgres://postgres@127.0.0.1:5432/postgres';
const DISTRICTS = 200;
const YEARS = 20;
const FIRST_YEAR = 2005;

export interface LoadFigures { requests_per_second: number; requests: number; p50_ms: number; p99_ms: number; max_ms: number; non2xx: number; errors: number; timeouts: number }
export interface RouteFigures { route: string; kept: LoadFigures; computed: LoadFigures; cold_ms: { total: number; queries: number; statistics: number; json: number } }
export interface ApiBenchResult { store: string; seed_seconds: number; routes: RouteFigures[] }

/** 200 districts on a 20 × 10 grid and 20 years of three July dates each, with drifts and noise. */
async function seed(store: Store): Promise<void> {
  const rand = mulberry32(200020);
  const cell = 0.01;
  const ids = Array.from({ length: DISTRICTS }, (_, i) => `d${String(i).padStart(3, '0')}`);
  await upsertDistricts(store, [
    ...ids.map((id, i) => {
      const x = -35.8 + (i % 20) * cell, y = 44.1 + Math.floor(i / 20) * cell;
      return { id, name: `Ward ${i + 1}`, geometry: [[[[x, y], [x + cell, y], [x + cell, y + cell], [x, y + cell], [x, y]]]], areaSquareMetres: 8.9e5 };
    }),
    { id: 'rural', name: 'rural reference', role: 'rural' as const, geometry: [[[[-36, 43.9], [-35.9, 43.9], [-35.9, 44], [-36, 44], [-36, 43.9]]]], areaSquareMetres: 5e7 },
  ]);
  const base = { kind: 'lst' as const, epsg: 32625, crsDefinition: null, width: 10, height: 10, pixelSizeMetres: 100, scale: 1, offset: 0, nodata: null };
  let h = 0;
  const rows = [];
  for (let y = FIRST_YEAR; y < FIRST_YEAR + YEARS; y++) {
    for (const md of ['07-05', '07-16', '07-27']) {
      const date = `${y}-${md}`;
      const day = await registerScene(store, { ...base, path: `/bench/${y}/day-${md}.tif`, contentHash: (++h).toString(16).padStart(64, '0'), acquiredAt: `${date}T11:40:00Z`, pass: 'day' });
      const night = await registerScene(store, { ...base, path: `/bench/${y}/night-${md}.tif`, contentHash: (++h).toString(16).padStart(64, '0'), acquiredAt: `${date}T23:10:00Z`, pass: 'night' });
      for (const [k, id] of ids.entries()) {
        const drift = ((k % 9) - 4) * 0.03 * (y - FIRST_YEAR);
        const tDay = 305 + (k % 13) * 0.3 + drift + (rand() - 0.5) * 2;
        const tNight = 290 + (k % 7) * 0.2 + drift * 0.6 + (rand() - 0.5) * 1.2;
        rows.push({
          obsDate: date, districtId: id, daySceneId: day, nightSceneId: night, albedoSceneId: null, albedoSource: 'property' as const,
          tDayKelvin: tDay, tNightKelvin: tNight, albedo: 0.15, atiPerKelvin: 0.85 / (tDay - tNight), suhiDayKelvin: tDay - 303, suhiNightKelvin: tNight - 289, status: 'ok',
        });
      }
    }
  }
  await replaceDerived(store, rows);
}

/** Run the load child against `paths` for `seconds`; its one JSON line. */
function load(base: string, seconds: number, connections: number, paths: string[]): Promise<LoadFigures> {
  return new Promise((res, rej) => {
    const child = spawn(process.execPath, [CHILD, base, String(seconds), String(connections), ...paths], { stdio: ['ignore', 'pipe', 'pipe'] });
    let out = '', err = '';
    child.stdout.on('data', (d) => { out += d; });
    child.stderr.on('data', (d) => { err += d; });
    child.on('close', (code) => {
      try { res(JSON.parse(out.trim().split('\n').pop() ?? '') as LoadFigures); } catch { rej(new Error(`load generator failed (${code}): ${err.trim()}`)); }
    });
  });
}

/**
 * A store whose queries are timed: `spent.ms` gathers the wall time during which at least
 * one query was in flight (queries an answer runs side by side are counted once).
 */
function timedStore(store: Store, spent: { ms: number }): Store {
  let inFlight = 0;
  let since = 0;
  return new Proxy(store, {
    get(target, prop, receiver) {
      if (prop === 'query') {
        return async (sql: string, params?: unknown[]) => {
          if (inFlight++ === 0) since = performance.now();
          try { return await target.query(sql, params); } finally { if (--inFlight === 0) spent.ms += performance.now() - since; }
        };
      }
      const v = Reflect.get(target, prop, receiver);
      return typeof v === 'function' ? v.bind(target) : v;
    },
  });
}

/** Median over `reps` cold answers (nothing kept): total, queries, statistics (the rest of the answer), JSON. */
async function coldAnswer(store: Store, answer: (s: Store) => Promise<unknown>, reps = 5): Promise<RouteFigures['cold_ms']> {
  const total: number[] = [], queries: number[] = [], json: number[] = [];
  await answer(store); // warm-up (JIT, prepared query text)
  for (let r = 0; r < reps; r++) {
    const spent = { ms: 0 };
    const t = performance.now();
    const body = await answer(timedStore(store, spent));
    total.push(performance.now() - t);
    queries.push(spent.ms);
    const j = performance.now();
    JSON.stringify(body);
    json.push(performance.now() - j);
  }
  const q = median(queries), t = median(total);
  return { total: t, queries: q, statistics: Math.max(0, t - q), json: median(json) };
}

export async function runApiBench(say: (line?: string) => void, options: { seconds?: number; computedSeconds?: number; connections?: number } = {}): Promise<ApiBenchResult[]> {
  const seconds = options.seconds ?? 20;
  const computedSeconds = options.computedSeconds ?? 5;
  const connections = options.connections ?? 10;
  say(`\n[api] ${DISTRICTS} districts × ${YEARS} years stored; server in this process on 127.0.0.1, autocannon in a second process, ${connections} connections; ` +
    `${seconds} s per route (after 2 s of warm-up) with answers kept, ${computedSeconds} s with nothing kept; ${cpus().length} CPU(s), load average ${loadavg().map((x) => x.toFixed(2)).join(' ')}`);
  const kinds: { name: string; open: () => Promise<{ store: Store; done: () => Promise<void> }> }[] = [
    { name: 'pglite', open: async () => { const dir = mkdtempSync(join(tmpdir(), 'heatledger-api-bench-')); const store = await openStore({ dataDir: dir }); return { store, done: async () => { await store.close(); rmSync(dir, { recursive: true, force: true }); } }; } },
  ];
  if (await postgresReachable(POSTGRES)) {
    kinds.push({ name: 'pg', open: async () => { const db = await createBenchDatabase(POSTGRES); const store = await openStore({ databaseUrl: db.url }); return { store, done: async () => { await store.close(); await dropBenchDatabase(POSTGRES, db.name); } }; } });
  } else say(`  (no PostgreSQL at ${POSTGRES}: the server is left out)`);
  const ids = Array.from({ length: DISTRICTS }, (_, i) => `d${String(i).padStart(3, '0')}`);
  const routes: { route: string; paths: string[]; answer: (s: Store) => Promise<unknown> }[] = [
    { route: '/api/trends', paths: ['/api/trends?metric=suhi_night'], answer: (s) => answerTrends(s, { metric: 'suhi_night', season: 'all' }) },
    { route: '/api/districts', paths: ['/api/districts?metric=suhi_night'], answer: (s) => answerDistricts(s, { season: 'all', metric: 'suhi_night' }) },
    { route: '/api/districts/{id}/series', paths: ids.map((id) => `/api/districts/${id}/series?metric=suhi_night`), answer: (s) => answerSeries(s, 'd101', { metric: 'suhi_night', season: 'all' }) },
  ];
  const results: ApiBenchResult[] = [];
  for (const kind of kinds) {
    const { store, done } = await kind.open();
    try {
      const t0 = performance.now();
      await seed(store);
      const seedSeconds = (performance.now() - t0) / 1000;
      const figures: RouteFigures[] = [];
      for (const r of routes) {
        const cold = await coldAnswer(store, r.answer);
        const rows: Partial<RouteFigures> = { route: r.route, cold_ms: cold };
        for (const keep of [true, false]) {
          const app = buildApp(store, { logLevel: 'silent', readsPerMinute: 1e9, keepAnswers: keep });
          await app.listen({ port: 0, host: '127.0.0.1' });
          const base = `http://127.0.0.1:${(app.server.address() as { port: number }).port}`;
          try {
            const f = await load(base, keep ? seconds : computedSeconds, connections, r.paths);
            if (keep) rows.kept = f; else rows.computed = f;
          } finally {
            await app.close();
          }
        }
        const x = rows as RouteFigures;
        figures.push(x);
        say(`  ${kind.name} ${x.route}: kept ${x.kept.requests_per_second.toFixed(0)} req/s, p50 ${x.kept.p50_ms} ms, p99 ${x.kept.p99_ms} ms` +
          `${x.kept.non2xx || x.kept.errors ? ` (non-2xx ${x.kept.non2xx}, errors ${x.kept.errors})` : ''}; ` +
          `nothing kept ${x.computed.requests_per_second.toFixed(0)} req/s, p50 ${x.computed.p50_ms} ms, p99 ${x.computed.p99_ms} ms; ` +
          `one uncached answer ${cold.total.toFixed(1)} ms = queries ${cold.queries.toFixed(1)} + statistics ${cold.statistics.toFixed(1)}, JSON ${cold.json.toFixed(1)} ms`);
      }
      results.push({ store: kind.name, seed_seconds: seedSeconds, routes: figures });
    } finally {
      await done();
    }
  }
  say('  (kept: a request costs a lookup of the last run (one small query) and the kept body; the ratio kept / nothing kept is the gain of the cache)');
  return results;
}
