/**
 * The CLI's option parsing and output edges, through the built
 * dist/workers/cli.js: years, numeric options, CSV escaping, a closed output,
 * a busy port, the API server's log and paths, failure lines.
 */
import { execFileSync, spawn, spawnSync } from 'node:child_process';
import { closeSync, existsSync, mkdtempSync, openSync, rmSync } from 'node:fs';
import net from 'node:net';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { buildProgram } from '../../workers/cli-program.js';
import { openStore } from '../../workers/store/store.js';
import { FORMULA_NAME, seedHeatStore, type SeededStore } from '../support/heat-store.js';
import { cleanEnv, cliPath, ensurePipelineBuild, killAllChildren, repoRoot, runCli, startCliUntil, stopChild, waitFor } from '../support/pipeline-harness.js';

let tmp: string;
let dataDir: string;
let seeded: SeededStore;
const env = () => cleanEnv();
const STACK = /\n\s+at \S|node:internal|Error: /;

beforeAll(async () => {
  await ensurePipelineBuild();
  tmp = mkdtempSync(path.join(tmpdir(), 'heatledger-cli-'));
  dataDir = path.join(tmp, 'store');
  const store = await openStore({ dataDir });
  try {
    seeded = await seedHeatStore(store, path.join(tmp, 'archive'));
  } finally {
    await store.close();
  }
});
afterAll(async () => {
  await killAllChildren();
  if (tmp) rmSync(tmp, { recursive: true, force: true });
});

describe('years and numeric options', () => {
  it('refuses --year in hex, binary, exponent or out of range, naming the option and the range', async () => {
    // ECMA-262 StringToNumber reads "0x7e4" and "0b11111100100" as 2020 and "2.02e3" as 2020: none may pass
    for (const year of ['0x7e4', '0b11111100100', '2.02e3', '2020.0', '1949', '2101', 'Infinity']) {
      const r = await runCli(['table', '--year', year, '--data-dir', dataDir], env());
      expect(r.code, `${year}: ${r.stderr}`).toBe(2);
      expect(r.stderr).toContain(`heatledger: --year must be a year written in decimal digits from 1950 to 2100, got "${year}"`);
      expect(r.stderr).not.toMatch(STACK);
      expect(r.stdout).toBe('');
    }
  });
  it('answers a decimal --year with that year only', async () => {
    const r = await runCli(['table', '--year', '2024', '--format', 'json', '--data-dir', dataDir], env());
    expect(r.code, r.stderr).toBe(0);
    const rows = JSON.parse(r.stdout) as { date: string }[];
    expect(rows.map((x) => x.date)).toEqual(['2024-07-14', '2024-07-14', '2024-07-14']);
  });
  it('reads counts and ports in decimal only, QA masks also in hex and binary', () => {
    const program = buildProgram();
    const option = (command: string, flag: string) => program.commands.find((c) => c.name() === command)!.options.find((o) => o.long === flag)!;
    const parse = (command: string, flag: string, text: string) => option(command, flag).parseArg!(text, undefined as never) as number;
    // positional notation: 0x18 = 1*16 + 8 = 24 = 0b11000 (common practice, no source)
    for (const text of ['24', '0x18', '0X18', '0b11000']) expect(parse('zonal', '--qa-mask', text), text).toBe(24);
    expect(parse('ingest', '--threads', '2')).toBe(2);
    expect(parse('serve', '--port', '0')).toBe(0);
    for (const [command, flag, text] of [['ingest', '--threads', '0x2'], ['ingest', '--threads', '0'], ['serve', '--port', '65536'], ['serve', '--port', '1e3'], ['worker', '--concurrency', ' 2'], ['zonal', '--qa-mask', '0x1ffffffff'], ['zonal', '--qa-mask', '-1']]) {
      expect(() => parse(command, flag, text), `${flag} ${text}`).toThrow(new RegExp(`${flag} must be`));
    }
    for (const text of ['', ' ', '0x10', 'Infinity', '1,5']) expect(() => parse('ingest', '--pairing-window', text), JSON.stringify(text)).toThrow(/--pairing-window must be a decimal number/);
    expect(parse('ingest', '--rural-outer', '1e4')).toBe(10000);
  });
});

describe('output', () => {
  it('escapes formula-like text cells in CSV and keeps negative numbers as numbers', async () => {
    const r = await runCli(['table', '--format', 'csv', '--data-dir', dataDir], env());
    expect(r.code, r.stderr).toBe(0);
    // OWASP "CSV Injection": leading = + - @ tab or CR -> prefix a single quote and quote the cell;
    // read back with Python's csv module (RFC 4180) as the outside reference
    const rows: string[][] = JSON.parse(execFileSync('/usr/bin/python3', ['-c', 'import csv, io, json, sys; print(json.dumps(list(csv.reader(io.StringIO(sys.stdin.read())))))'], { input: r.stdout, encoding: 'utf8' }));
    const header = rows[0];
    expect(rows.find((x) => x[0] === 'quay')![header.indexOf('name')]).toBe(`'${FORMULA_NAME}`);
    // hand arithmetic: park SUHI day 304 - 305 = -1 K, night 288 - 289 = -1 K
    const park = rows.find((x) => x[0] === 'park')!;
    expect([park[header.indexOf('suhi_day_k')], park[header.indexOf('suhi_night_k')]]).toEqual(['-1', '-1']);
    expect(r.stdout).toContain('\npark,Park,2024-07-14,304,288,-1,-1,');
  });
  it('ends quietly with exit 0 when the reader of its output has gone (EPIPE)', () => {
    // POSIX write(2): writing to a pipe nobody reads fails with EPIPE. The pipe's read end is
    // closed before the command starts, so the failure is certain, whatever the machine's speed.
    const harness = [
      'import json, os, subprocess, sys',
      'r, w = os.pipe()',
      'os.close(r)',
      'p = subprocess.run(json.loads(sys.argv[1]), stdout=w, stderr=subprocess.PIPE, cwd=sys.argv[2], timeout=600)',
      'os.close(w)',
      'print(json.dumps({"code": p.returncode, "stderr": p.stderr.decode()}))',
    ].join('\n');
    for (const format of ['csv', 'table', 'json']) {
      const command = [process.execPath, cliPath, 'table', '--format', format, '--data-dir', dataDir];
      const out = spawnSync('/usr/bin/python3', ['-c', harness, JSON.stringify(command), repoRoot], { env: env(), encoding: 'utf8', timeout: 660_000 });
      expect(out.status, out.stderr).toBe(0);
      const result = JSON.parse(out.stdout) as { code: number; stderr: string };
      expect(result, format).toEqual({ code: 0, stderr: '' });
    }
  });
  it.skipIf(!existsSync('/dev/full'))('reports any other output failure and exits 1 (output written to /dev/full)', async () => {
    // Linux null(4): every write to /dev/full fails with ENOSPC
    const full = openSync('/dev/full', 'w');
    try {
      const child = spawn(process.execPath, [cliPath, 'table', '--format', 'csv', '--data-dir', dataDir], { cwd: repoRoot, env: env(), stdio: ['ignore', full, 'pipe'] });
      let stderr = '';
      child.stderr!.on('data', (d) => { stderr += d; });
      const code = await new Promise<number | null>((resolve) => child.once('close', (c) => resolve(c)));
      expect(code, stderr).toBe(1);
      expect(stderr).toBe('heatledger: cannot write to standard output (ENOSPC)\n');
    } finally {
      closeSync(full);
    }
  });
  it('names a failed file once in `status`', async () => {
    const r = await runCli(['status', '--data-dir', dataDir], env());
    expect(r.code, r.stderr).toBe(0);
    const line = r.stdout.split('\n').find((l) => l.includes('broken.tif'));
    expect(line).toBeDefined();
    expect(line!.split(seeded.failedPath).length - 1).toBe(1);
    expect(line!.trim()).toBe(seeded.failedError);
  });
});

describe('serve', () => {
  it('reports a port in use by its number and address, exit 2, no stack', async () => {
    const blocker = net.createServer();
    await new Promise<void>((resolve, reject) => { blocker.once('error', reject); blocker.listen(0, '127.0.0.1', () => resolve()); });
    const port = (blocker.address() as net.AddressInfo).port;
    try {
      const r = await runCli(['serve', '--port', String(port), '--host', '127.0.0.1', '--data-dir', dataDir], env({}));
      expect(r.code, r.stderr).toBe(2);
      expect(r.stderr).toContain(`heatledger: port ${port} on 127.0.0.1 is already in use`);
      expect(r.stderr).not.toMatch(/internal error|\n\s+at \S/);
    } finally {
      await new Promise((resolve) => blocker.close(resolve));
    }
  });
  it('refuses an unknown LOG_LEVEL by name', async () => {
    const r = await runCli(['serve', '--port', '0', '--data-dir', dataDir], cleanEnv({ LOG_LEVEL: 'verbose' }));
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('heatledger: LOG_LEVEL must be one of fatal, error, warn, info, debug, trace, silent, got "verbose"');
  });
  it('logs requests as JSON lines and shows paths relative to HEATLEDGER_DATA_ROOT', async () => {
    const server = await startCliUntil(['serve', '--port', '0', '--host', '127.0.0.1', '--data-dir', dataDir], cleanEnv({ LOG_LEVEL: 'info', HEATLEDGER_DATA_ROOT: tmp }), /heatledger API on http:\/\/127\.0\.0\.1:\d+\//);
    try {
      const port = Number(/127\.0\.0\.1:(\d+)\//.exec(server.stderr())![1]);
      expect(port).toBeGreaterThan(0); // port 0: the system chose a free one
      const res = await fetch(`http://127.0.0.1:${port}/api/status`);
      expect(res.status).toBe(200);
      const body = await res.json() as { failures: { path: string; error: string }[] };
      expect(body.failures[0].path).toBe(path.relative(tmp, seeded.failedPath)); // Node's path.relative
      expect(JSON.stringify(body)).not.toContain(tmp);
      // every read route of the OpenAPI document (ids from the listings): no answer names a folder of this machine
      // (this small store has too few districts for hot spots: that answer is a refusal, checked alike)
      const json = async (u: string) => {
        const r = await fetch(`http://127.0.0.1:${port}${u}`);
        const text = await r.text();
        expect(r.status, `${u}: ${text.slice(0, 300)}`).toBe(u.startsWith('/api/hotspots') ? 400 : 200);
        return text;
      };
      const doc = JSON.parse(await json('/api/openapi.json')) as { paths: Record<string, { get?: unknown }> };
      const districtId = (JSON.parse(await json('/api/districts')) as { features: { id: string }[] }).features[0].id;
      const sceneId = (JSON.parse(await json('/api/scenes')) as { rows: { id: number | string }[] }).rows[0].id;
      const routes = Object.keys(doc.paths).filter((r) => doc.paths[r].get && r.startsWith('/api/') && !r.startsWith('/api/jobs'));
      expect(routes.length).toBeGreaterThanOrEqual(10);
      for (const r of routes) {
        const u = r.replace('/districts/{id}', `/districts/${encodeURIComponent(districtId)}`).replace('/scenes/{id}', `/scenes/${encodeURIComponent(String(sceneId))}`);
        expect(await json(u), u).not.toContain(tmp);
      }
      // the log line may reach us after the response: wait for it
      const requestLogged = () => server.stdout().split('\n').filter(Boolean).some((l) => {
        try { const j = JSON.parse(l); return j.level === 30 && j.res?.statusCode === 200; } catch { return false; }
      });
      await waitFor(requestLogged, 'the request log line');
    } finally {
      const stopped = await stopChild(server.child, 'SIGTERM');
      expect(stopped.forced).toBe(false);
    }
  });
});
