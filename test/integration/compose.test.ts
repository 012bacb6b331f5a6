/**
 * docker-compose.yml against the code: the services the deployment needs, their
 * health checks, images, environment (only names workers/config.ts reads),
 * commands (only subcommands the CLI has) and named volumes.
 *
 * Sources: the Compose Specification (compose-spec.io: `services`, `healthcheck`,
 * `depends_on` conditions, short volume syntax SOURCE:TARGET[:MODE], top-level
 * `volumes` for named volumes; from memory) and the YAML 1.1 merge key
 * (yaml.org/type/merge.html), which `<<: *app` uses; parsed with the `yaml`
 * package with merge keys enabled.
 */
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { parse } from 'yaml';
import { describe, expect, it } from 'vitest';
import { DEFAULT_API_PORT, ENV } from '../../workers/config.js';
import { buildProgram } from '../../workers/cli-program.js';

const repoRoot = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');

interface Service {
  image?: string;
  command?: string[] | string;
  entrypoint?: string[] | string;
  environment?: Record<string, string | number | boolean | null> | string[];
  healthcheck?: { test?: string[] | string };
  volumes?: (string | { type?: string; source?: string; target?: string; read_only?: boolean })[];
  depends_on?: Record<string, { condition?: string }> | string[];
  ports?: (string | number)[];
}

const compose = parse(readFileSync(path.join(repoRoot, 'docker-compose.yml'), 'utf8'), { merge: true }) as {
  services: Record<string, Service>;
  volumes?: Record<string, unknown>;
};
const services = compose.services;
const packageJson = JSON.parse(readFileSync(path.join(repoRoot, 'package.json'), 'utf8')) as { engines: { node: string } };

/** Services that run heatledger itself (Node image with the project mounted), not the servers. */
const appServices = Object.entries(services).filter(([, s]) => /^node:/.test(s.image ?? '') && /dist\/workers\/cli\.js/.test(JSON.stringify([s.command, s.entrypoint])));

function envOf(s: Service): Record<string, string> {
  if (Array.isArray(s.environment)) {
    return Object.fromEntries(s.environment.map((kv) => { const i = kv.indexOf('='); return [kv.slice(0, i), kv.slice(i + 1)]; }));
  }
  return Object.fromEntries(Object.entries(s.environment ?? {}).map(([k, v]) => [k, v === null ? '' : String(v)]));
}

const asArray = (v: string[] | string | undefined): string[] => (v === undefined ? [] : Array.isArray(v) ? v : v.split(/\s+/));

/** The heatledger subcommand a service runs: argv after `dist/workers/cli.js`. */
function cliArgs(s: Service): string[] {
  const argv = [...asArray(s.entrypoint), ...asArray(s.command)];
  const i = argv.findIndex((a) => a.endsWith('dist/workers/cli.js'));
  return i < 0 ? [] : argv.slice(i + 1);
}

function volumeSources(s: Service): { source: string; target: string; mode: string }[] {
  return (s.volumes ?? []).map((v) => {
    if (typeof v === 'string') {
      const [source, target, mode = 'rw'] = v.split(':');
      return { source, target, mode };
    }
    return { source: v.source ?? '', target: v.target ?? '', mode: v.read_only ? 'ro' : 'rw' };
  });
}

describe('docker-compose.yml', () => {
  it('has the postgres, redis, worker and api services, with health checks on postgres, redis and api', () => {
    for (const name of ['postgres', 'redis', 'worker', 'api']) expect(Object.keys(services)).toContain(name);
    const pgEnv = envOf(services.postgres);
    const pgTest = asArray(services.postgres.healthcheck?.test).join(' ');
    expect(pgTest).toMatch(/pg_isready/);
    expect(pgTest).toContain(`-U ${pgEnv.POSTGRES_USER}`);
    expect(pgTest).toContain(`-d ${pgEnv.POSTGRES_DB}`);
    expect(asArray(services.redis.healthcheck?.test).slice(-2)).toEqual(['redis-cli', 'ping']);
    const apiTest = asArray(services.api.healthcheck?.test).join(' ');
    const port = envOf(services.api)[ENV.apiPort];
    expect(apiTest).toContain(`http://127.0.0.1:${port}/`);
  });

  it('uses the server images the code targets', () => {
    // sql/migrations are written for PostgreSQL 15 (001_init.sql header); Redis 7 is the build machines' server
    expect(services.postgres.image).toBe('postgres:15');
    expect(services.redis.image).toBe('redis:7');
    const nodeMajor = /^>=(\d+)/.exec(packageJson.engines.node)![1];
    expect(appServices.length).toBeGreaterThanOrEqual(2);
    for (const [name, s] of [...appServices, ['setup', services.setup] as const]) {
      expect(s.image, name).toMatch(new RegExp(`^node:${nodeMajor}(\\b|-)`));
    }
  });

  it('sets only environment variables the code reads, and both server URLs, pointing at the compose servers', () => {
    const known = new Set<string>(Object.values(ENV));
    const pgEnv = envOf(services.postgres);
    for (const [name, s] of appServices) {
      const env = envOf(s);
      for (const key of Object.keys(env)) expect(known.has(key), `${name}: ${key} is not one of ENV in workers/config.ts`).toBe(true);
      const db = new URL(env[ENV.databaseUrl]);
      expect(db.protocol).toBe('postgres:');
      expect(db.hostname).toBe('postgres');
      expect(db.port).toBe('5432');
      expect(decodeURIComponent(db.username)).toBe(pgEnv.POSTGRES_USER);
      expect(decodeURIComponent(db.password)).toBe(pgEnv.POSTGRES_PASSWORD);
      expect(db.pathname).toBe(`/${pgEnv.POSTGRES_DB}`);
      const redis = new URL(env[ENV.redisUrl]);
      expect(redis.protocol).toBe('redis:');
      expect(redis.hostname).toBe('redis');
      expect(redis.port || '6379').toBe('6379');
      if (env[ENV.concurrency] !== undefined) expect(env[ENV.concurrency]).toMatch(/^[1-9]\d*$/);
    }
    const apiEnv = envOf(services.api);
    expect(Number(apiEnv[ENV.apiPort])).toBe(DEFAULT_API_PORT);
    expect(services.api.ports?.map(String)).toContain(`${apiEnv[ENV.apiPort]}:${apiEnv[ENV.apiPort]}`);
  });

  it('runs `heatledger worker` and `heatledger serve`, subcommands the CLI has', () => {
    expect(cliArgs(services.worker)).toEqual(['worker']);
    expect(cliArgs(services.api)).toEqual(['serve']);
    // the bin runs by its first line (workers/cli.ts), as `heatledger` does on a host
    expect(asArray(services.worker.command)[0]).toBe('dist/workers/cli.js');
    const commands = buildProgram().commands.map((c) => c.name());
    for (const [name, s] of appServices) {
      const sub = cliArgs(s)[0];
      if (sub !== undefined) expect(commands, `${name} runs \`heatledger ${sub}\``).toContain(sub);
    }
    for (const name of ['worker', 'api']) {
      const deps = services[name].depends_on as Record<string, { condition?: string }>;
      expect(deps.postgres?.condition).toBe('service_healthy');
      expect(deps.redis?.condition).toBe('service_healthy');
    }
  });

  it('declares its named volumes and mounts the archive at the same path for the CLI and the workers', () => {
    const declared = Object.keys(compose.volumes ?? {});
    expect(declared.sort()).toEqual(['pgdata', 'redisdata']);
    const named = Object.values(services).flatMap((s) => volumeSources(s).map((v) => v.source)).filter((src) => !/^[./~]/.test(src));
    expect([...new Set(named)].sort()).toEqual(declared.sort());
    expect(volumeSources(services.postgres)).toContainEqual({ source: 'pgdata', target: '/var/lib/postgresql/data', mode: 'rw' });
    expect(volumeSources(services.redis).map((v) => v.source)).toContain('redisdata');
    // workers open scenes by the path the CLI enqueued (workers/run/pipeline.ts passes absolute paths)
    const archiveMount = (s: Service) => volumeSources(s).find((v) => v.target === '/archive');
    expect(archiveMount(services.worker)).toEqual({ source: './archive', target: '/archive', mode: 'ro' });
    expect(archiveMount(services.cli)).toEqual(archiveMount(services.worker));
  });
});
