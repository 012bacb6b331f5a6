import { execFileSync } from 'node:child_process';
import { mkdtempSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { PassThrough } from 'node:stream';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { FastifyInstance } from 'fastify';
import { buildApp, CAUTION, logLevelFromEnv } from '../../api/app.js';
import { openStore, type Store } from '../../workers/store/store.js';
import { FORMULA_NAME, seedHeatStore, type SeededStore } from '../support/heat-store.js';
import { ensurePageBuild } from '../support/page-build.js';
import { pythonModulesAvailable } from '../support/services.js';

/** Python's csv and os.path are the outside references of the CSV and path checks (test/support/services.ts decides). */
const hasPython = await pythonModulesAvailable(['csv', 'json', 'os.path'], 'api CSV and path checks');

const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');
let store: Store;
let app: FastifyInstance;
let tmp: string;
let archive: string;
let seeded: SeededStore;

/** Every string anywhere in a JSON value. */
function strings(v: unknown): string[] {
  if (typeof v === 'string') return [v];
  if (Array.isArray(v)) return v.flatMap(strings);
  if (v && typeof v === 'object') return Object.values(v).flatMap(strings);
  return [];
}

/** Python's os.path as the outside reference for common folders and relative paths. */
function pythonPaths(paths: string[], target: string, root: string | null): { common: string; rel: string } {
  const code = [
    'import json, os, sys',
    'paths = json.loads(sys.argv[1]); target = sys.argv[2]; root = sys.argv[3] or None',
    'common = os.path.commonpath([os.path.dirname(p) for p in paths])',
    'print(json.dumps({"common": common, "rel": os.path.relpath(target, root or common)}))',
  ].join('\n');
  return JSON.parse(execFileSync('/usr/bin/python3', ['-c', code, JSON.stringify(paths), target, root ?? ''], { encoding: 'utf8' }));
}

/** An app whose JSON log lines are collected. */
function loggedApp(s: Store, logLevel: 'info' | 'warn') {
  const stream = new PassThrough();
  let text = '';
  stream.on('data', (d) => { text += d; });
  const a = buildApp(s, { logLevel, logStream: stream });
  return { app: a, lines: () => text.split('\n').filter(Boolean).map((l) => JSON.parse(l) as Record<string, unknown>) };
}

beforeAll(async () => {
  await ensurePageBuild();
  tmp = mkdtempSync(path.join(tmpdir(), 'heatledger-api-'));
  archive = path.join(tmp, 'archive');
  store = await openStore({ memory: true });
  seeded = await seedHeatStore(store, archive);
  app = buildApp(store, { logLevel: 'silent' });
});
afterAll(async () => {
  await app?.close();
  await store?.close();
  if (tmp) rmSync(tmp, { recursive: true, force: true });
});

describe('HTTP API', () => {
  it('answers health with the store kind, schema and software versions, last run and years', async () => {
    const r = await app.inject({ method: 'GET', url: '/api/health' });
    expect(r.statusCode).toBe(200);
    // the schema version is the highest numbered file of sql/migrations; the software version is package.json's
    const migrations = readdirSync(path.join(ROOT, 'sql', 'migrations')).map((f) => Number(/^(\d+)_/.exec(f)?.[1] ?? NaN)).filter(Number.isFinite);
    const pkg = JSON.parse(readFileSync(path.join(ROOT, 'package.json'), 'utf8')) as { version: string };
    // the seeded store holds one July 2024 pair and no recorded run
    expect(r.json()).toEqual({ ok: true, store: 'pglite', schema_version: Math.max(...migrations), version: pkg.version, last_run: null, years: [2024] });
  });
  it('serves the district table as JSON with units and the caution', async () => {
    const r = await app.inject({ method: 'GET', url: '/api/table?level=date' });
    expect(r.statusCode).toBe(200);
    const body = r.json();
    expect(body.units).toEqual({ lst_day_k: 'K', lst_night_k: 'K', suhi_day_k: 'K', suhi_night_k: 'K', ati_per_k: '1/K' });
    expect(body.caution).toBe(CAUTION);
    const core = body.rows.find((x: { district: string }) => x.district === 'core');
    // hand arithmetic: SUHI day 315 - 305 = 10 K, night 293 - 289 = 4 K; ATI (1 - 0.12) / 22
    expect(core).toMatchObject({ date: '2024-07-14', lst_day_k: 315, lst_night_k: 293, suhi_day_k: 10, suhi_night_k: 4, day_scenes: 1, night_scenes: 1 });
    // printed to 6 significant digits (README, `table`): 0.88 / 22 = 0.04 exactly in decimal
    expect(core.ati_per_k).toBe(Number((0.88 / 22).toPrecision(6)));
  });
  it('serves CSV with the table header', async () => {
    const r = await app.inject({ method: 'GET', url: '/api/table?level=year&format=csv' });
    expect(r.statusCode).toBe(200);
    expect(r.headers['content-type']).toMatch(/text\/csv/);
    const lines = r.body.trim().split('\n');
    expect(lines[0]).toBe('district,name,year,dates,lst_day_k,lst_night_k,suhi_day_k,suhi_night_k,ati_per_k,day_scenes,night_scenes');
    expect(lines[1]).toMatch(/^core,Core,2024,1,315,293,10,4,/);
  });
  it.runIf(hasPython)('escapes a formula-like district name in CSV but keeps a negative SUHI a number', async () => {
    const r = await app.inject({ method: 'GET', url: '/api/table?level=date&format=csv' });
    expect(r.statusCode).toBe(200);
    // OWASP "CSV Injection": a cell starting with = + - @ tab or CR gets a leading single quote and is quoted;
    // the cells read back with Python's csv module (RFC 4180 reader) as the outside reference
    const rows: string[][] = JSON.parse(execFileSync('/usr/bin/python3', ['-c', 'import csv, io, json, sys; print(json.dumps(list(csv.reader(io.StringIO(sys.stdin.read())))))'], { input: r.body, encoding: 'utf8' }));
    const header = rows[0];
    const quay = rows.find((row) => row[0] === 'quay')!;
    expect(quay[header.indexOf('name')]).toBe(`'${FORMULA_NAME}`);
    const park = rows.find((row) => row[0] === 'park')!;
    // hand arithmetic: SUHI day 304 - 305 = -1 K, written as the plain number -1
    expect(park[header.indexOf('suhi_day_k')]).toBe('-1');
    expect(r.body).toContain('\npark,Park,2024-07-14,304,288,-1,-1,');
  });
  it('refuses a bad query with 400 and a message naming the parameter and what it accepts', async () => {
    const cases: [string, RegExp][] = [
      ['/api/table?level=week', /query parameter level must be one of date, year/],
      ['/api/table?format=xml', /query parameter format must be one of json, csv/],
      ['/api/table?unknown=1', /unknown query parameter "unknown"; known: level, year, format/],
      ['/api/table?year=abc', /query parameter year must be a year written in decimal digits from 1950 to 2100, got "abc"/],
    ];
    for (const [url, message] of cases) {
      const r = await app.inject({ method: 'GET', url });
      expect(r.statusCode, url).toBe(400);
      expect(r.json().error, url).toMatch(message);
      expect(r.body, url).not.toMatch(/\bat \S+:\d+/);
    }
  });
  it('refuses every year that is not plain decimal digits in 1950-2100, with 400 and no stack, SQL or path', async () => {
    // ECMA-262 StringToNumber (§7.1.4.1.1) reads "0x7e4" as 2020, "1e309" as Infinity and " 2020" as 2020:
    // the language's own conversion is the trap these requests set
    expect(Number('0x7e4')).toBe(2020);
    expect(Number('1e309')).toBe(Infinity);
    const bad = ['1e309', 'Infinity', '-Infinity', 'NaN', '0x7e4', '0b11111100100', '0o3744', '2.02e3', '2020.0', '2020.5', '%202020', '+2020', '-2020', '1949', '2101', '99999999999999999999', '', '2020&year=2021'];
    for (const y of bad) {
      const r = await app.inject({ method: 'GET', url: `/api/table?year=${y}` });
      expect(r.statusCode, y).toBe(400);
      const error: string = r.json().error;
      expect(error, y).toMatch(/year/);
      expect(error, y).toMatch(/1950 to 2100|given once/);
      expect(r.body, y).not.toMatch(/\bat \S+:\d+|SELECT|WHERE|\/work\/|node_modules/);
    }
  });
  it('answers a plain decimal year with that year only; the ends of the range pass the check and, without values, are a 404 naming the years that have them', async () => {
    const r = await app.inject({ method: 'GET', url: '/api/table?level=date&year=2024' });
    expect(r.statusCode).toBe(200);
    expect(r.json().rows.length).toBe(3); // the three districts (the rural reference has no derived row)
    for (const year of ['1950', '2100']) {
      const none = await app.inject({ method: 'GET', url: `/api/table?level=date&year=${year}` });
      expect(none.statusCode, year).toBe(404);
      expect(none.json(), year).toEqual({ error: `query parameter year: ${year} has no values in the store; years with values: 2024`, years: [2024] });
    }
  });
  it('serves the built web page at / (its numbers come from the API routes)', async () => {
    const r = await app.inject({ method: 'GET', url: '/' });
    expect(r.statusCode).toBe(200);
    expect(r.headers['content-type']).toMatch(/^text\/html/);
    expect(r.body).toContain('<h1>District surface heat</h1>');
    expect(r.body).toMatch(/<script type="module" crossorigin src="\/assets\/[\w.-]+\.js"><\/script>/);
  });
  it('lists districts and status', async () => {
    const d = await app.inject({ method: 'GET', url: '/api/districts' });
    expect(d.json().features.map((x: { id: string }) => x.id)).toEqual(['core', 'park', 'quay', 'rural']);
    const s = await app.inject({ method: 'GET', url: '/api/status' });
    expect(s.json().scenes).toMatchObject({ processed: 2, failed: 1, total: 3 });
  });
  it('answers an unknown route with a JSON 404', async () => {
    const r = await app.inject({ method: 'GET', url: '/api/nothing-here' });
    expect(r.statusCode).toBe(404);
    expect(r.json().error).toMatch(/no such resource: GET "\/api\/nothing-here"/);
  });
});

describe('paths in /api/status', () => {
  const scenePaths = () => [path.join(archive, '2024', 'day-0714.tif'), path.join(archive, '2024', 'night-0715.tif'), path.join(archive, '2023', 'broken.tif')];

  it.runIf(hasPython)('are relative to the common folder of the stored scenes by default, messages included', async () => {
    const r = await app.inject({ method: 'GET', url: '/api/status' });
    expect(r.statusCode).toBe(200);
    const body = r.json();
    const ref = pythonPaths(scenePaths(), seeded.failedPath, null); // Python os.path.commonpath / relpath
    expect(ref.rel).toBe(path.join('2023', 'broken.tif'));
    expect(body.failures).toHaveLength(1);
    expect(body.failures[0].path).toBe(ref.rel);
    // the reader's message names the file: the same relative path, once
    expect(seeded.failedError.startsWith(`${seeded.failedPath}: `)).toBe(true);
    expect(body.failures[0].error).toBe(`${ref.rel}: ${seeded.failedError.slice(seeded.failedPath.length + 2)}`);
    for (const s of strings(body)) {
      expect(s).not.toContain(tmp);
      expect(s).not.toMatch(/(^|[\s"'(])\//);
    }
  });
  it.runIf(hasPython)('are relative to the configured data root when one is set', async () => {
    const rooted = buildApp(store, { logLevel: 'silent', dataRoot: tmp });
    try {
      const body = (await rooted.inject({ method: 'GET', url: '/api/status' })).json();
      const ref = pythonPaths(scenePaths(), seeded.failedPath, tmp);
      expect(ref.rel).toBe(path.join('archive', '2023', 'broken.tif'));
      expect(body.failures[0].path).toBe(ref.rel);
      expect(body.failures[0].error.startsWith(`${ref.rel}: `)).toBe(true);
      for (const s of strings(body)) expect(s).not.toContain(tmp);
    } finally {
      await rooted.close();
    }
  });
  it('shows a file outside the configured root by its name alone', async () => {
    const other = mkdtempSync(path.join(tmpdir(), 'heatledger-api-root-'));
    const rooted = buildApp(store, { logLevel: 'silent', dataRoot: other });
    try {
      const body = (await rooted.inject({ method: 'GET', url: '/api/status' })).json();
      expect(body.failures[0].path).toBe('broken.tif');
      for (const s of strings(body)) expect(s).not.toContain(tmp);
    } finally {
      await rooted.close();
      rmSync(other, { recursive: true, force: true });
    }
  });
});

describe('security headers', () => {
  // W3C Content Security Policy Level 3: without 'unsafe-inline' (or a hash/nonce), style-src
  // blocks <style> elements and style attributes, and script-src blocks inline scripts
  it('sends a Content-Security-Policy that allows only the server itself', async () => {
    const r = await app.inject({ method: 'GET', url: '/' });
    const csp = String(r.headers['content-security-policy'] ?? '');
    expect(csp).not.toBe('');
    const directives = Object.fromEntries(csp.split(';').map((d) => d.trim().split(/\s+/)).filter((p) => p[0]).map(([name, ...sources]) => [name, sources]));
    for (const name of ['default-src', 'script-src', 'style-src']) expect(directives[name], name).toEqual(["'self'"]);
    for (const [name, sources] of Object.entries(directives)) {
      for (const s of sources as string[]) expect(["'self'", "'none'"], `${name} ${s}`).toContain(s);
    }
    expect(csp).not.toMatch(/unsafe-inline|unsafe-eval|https:|\*/);
    // other headers of the same middleware (helmet defaults; from memory)
    expect(r.headers['x-content-type-options']).toBe('nosniff');
    expect(r.headers['x-frame-options']).toBe('SAMEORIGIN');
  });
  it('keeps the page working under that policy: no inline script or style, scripts and styles served from the same origin', async () => {
    const page = (await app.inject({ method: 'GET', url: '/' })).body;
    for (const tag of page.match(/<script\b[^>]*>/gi) ?? []) expect(tag).toMatch(/\ssrc="\/assets\//);
    expect(page).not.toMatch(/<script\b[^>]*>[^<\s]/i); // no inline script body
    expect(page).not.toMatch(/<style\b/i);
    expect(page).not.toMatch(/\sstyle\s*=/i);
    const css = /<link rel="stylesheet" crossorigin href="([^"]+)">/.exec(page)?.[1];
    const js = /<script type="module" crossorigin src="([^"]+)">/.exec(page)?.[1];
    expect(css).toMatch(/^\/assets\//);
    expect(js).toMatch(/^\/assets\//);
    const cssAnswer = await app.inject({ method: 'GET', url: css! });
    expect(cssAnswer.statusCode).toBe(200);
    expect(cssAnswer.headers['content-type']).toMatch(/^text\/css/);
    const jsAnswer = await app.inject({ method: 'GET', url: js! });
    expect(jsAnswer.statusCode).toBe(200);
    expect(jsAnswer.headers['content-type']).toMatch(/javascript/);
    // nothing outside the built files is reachable through the page's routes
    expect((await app.inject({ method: 'GET', url: '/assets/../../package.json' })).statusCode).toBe(404);
  });
});

describe('logging', () => {
  // pino's numeric levels: 30 info, 40 warn, 50 error (from memory)
  it('logs each request as a JSON line at info', async () => {
    const { app: a, lines } = loggedApp(store, 'info');
    try {
      expect((await a.inject({ method: 'GET', url: '/api/health' })).statusCode).toBe(200);
    } finally {
      await a.close();
    }
    const logged = lines();
    expect(logged.some((l) => l.level === 30 && (l.req as { url?: string })?.url === '/api/health')).toBe(true);
    expect(logged.some((l) => l.level === 30 && (l.res as { statusCode?: number })?.statusCode === 200)).toBe(true);
  });
  it('logs no requests at warn', async () => {
    const { app: a, lines } = loggedApp(store, 'warn');
    try {
      expect((await a.inject({ method: 'GET', url: '/api/health' })).statusCode).toBe(200);
    } finally {
      await a.close();
    }
    expect(lines().filter((l) => (l.level as number) < 40)).toEqual([]);
  });
  it('logs a 5xx with its stack on the server and answers without it', async () => {
    const closed = await openStore({ memory: true });
    await closed.close(); // every query on a closed store fails
    const { app: a, lines } = loggedApp(closed, 'info');
    let r;
    try {
      r = await a.inject({ method: 'GET', url: '/api/health' });
    } finally {
      await a.close();
    }
    expect(r.statusCode).toBeGreaterThanOrEqual(500);
    expect(r.body).not.toMatch(/\bat \S+:\d+|SELECT|\/work\/|node_modules/);
    const errors = lines().filter((l) => (l.level as number) >= 50);
    expect(errors.length).toBeGreaterThan(0);
    expect(String((errors[0].err as { stack?: string })?.stack)).toMatch(/\n\s+at /);
  });
  it('reads LOG_LEVEL, default info, and refuses an unknown level by name', () => {
    expect(logLevelFromEnv({})).toBe('info');
    expect(logLevelFromEnv({ LOG_LEVEL: 'warn' })).toBe('warn');
    expect(() => logLevelFromEnv({ LOG_LEVEL: 'verbose' })).toThrow(/LOG_LEVEL must be one of fatal, error, warn, info, debug, trace, silent, got "verbose"/);
  });
});
