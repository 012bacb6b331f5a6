/**
 * The `heatledger` bin starts node without NODE_EXTRA_CA_CERTS (its first line,
 * workers/cli.ts; workers/extra-ca.ts says why), yet its TLS connections must
 * trust the certificates named there exactly as Node's own start-up would.
 *
 * A private PostgreSQL serves TLS with a certificate signed by a CA made here
 * with the openssl command line; `sslmode=verify-full` (libpq's meaning, as
 * pg-connection-string reads it: the chain and the host name are checked;
 * PostgreSQL manual, "SSL Support", table "SSL Mode Descriptions") succeeds
 * only when that CA is trusted. Reference: the same command run as
 * `node dist/workers/cli.js`, where Node itself reads NODE_EXTRA_CA_CERTS.
 */
import { execFileSync, spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { missingTool } from '../support/services.js';
import { freeFaultPort, postgresBinDir, startPrivatePostgres, type PrivatePostgres } from '../support/private-postgres.js';
import { cleanEnv, ensurePipelineBuild, killAllChildren, runCli, startCliUntil, stopChild, waitFor } from '../support/pipeline-harness.js';

const hasOpenssl = spawnSync('openssl', ['version']).status === 0 || missingTool('bin and NODE_EXTRA_CA_CERTS', 'openssl (Debian package openssl)');
const canRun = hasOpenssl && (postgresBinDir() !== null || missingTool('bin and NODE_EXTRA_CA_CERTS', 'initdb and pg_ctl (Debian package postgresql)'))
  && (spawnSync('redis-server', ['--version']).status === 0 || missingTool('bin and NODE_EXTRA_CA_CERTS', 'redis-server (Debian package redis-server)'));

/** A CA and a server certificate for 127.0.0.1 signed by it, in `dir`. */
function makeCertificates(dir: string): { caPem: string; certPem: string; keyPem: string; certFile: string; keyFile: string } {
  const at = (f: string) => path.join(dir, f);
  const openssl = (args: string[]) => execFileSync('openssl', args, { cwd: dir, stdio: 'pipe' });
  openssl(['req', '-x509', '-newkey', 'rsa:2048', '-nodes', '-keyout', at('ca.key'), '-out', at('ca.pem'), '-days', '2', '-subj', '/CN=heatledger test CA']);
  openssl(['req', '-newkey', 'rsa:2048', '-nodes', '-keyout', at('server.key'), '-out', at('server.csr'), '-subj', '/CN=127.0.0.1']);
  writeFileSync(at('san.ext'), 'subjectAltName=IP:127.0.0.1\n');
  openssl(['x509', '-req', '-in', at('server.csr'), '-CA', at('ca.pem'), '-CAkey', at('ca.key'), '-CAcreateserial', '-out', at('server.crt'), '-days', '2', '-extfile', at('san.ext')]);
  return { caPem: at('ca.pem'), certPem: readFileSync(at('server.crt'), 'utf8'), keyPem: readFileSync(at('server.key'), 'utf8'), certFile: at('server.crt'), keyFile: at('server.key') };
}

describe.skipIf(!canRun)('the bin and NODE_EXTRA_CA_CERTS: TLS to PostgreSQL with a private CA', () => {
  let dir = '';
  let server: PrivatePostgres | null = null;
  let caPath = '';
  let certs: ReturnType<typeof makeCertificates>;
  let redis: ChildProcess | null = null;

  beforeAll(async () => {
    await ensurePipelineBuild();
    dir = mkdtempSync(path.join(os.tmpdir(), 'hl-extra-ca-'));
    certs = makeCertificates(dir);
    caPath = certs.caPem;
    server = await startPrivatePostgres('tls', { tls: { certPem: certs.certPem, keyPem: certs.keyPem } });
  }, 240_000);

  afterAll(async () => {
    await killAllChildren(); // a worker left by a failed check
    if (redis) await stopChild(redis, 'SIGKILL');
    await server?.destroy();
    if (dir) rmSync(dir, { recursive: true, force: true });
  });

  const env = (extra: Record<string, string>, withCa: boolean) => {
    const e = cleanEnv();
    delete e.NODE_EXTRA_CA_CERTS;
    delete e.PGSSLMODE;
    Object.assign(e, extra);
    if (withCa) e.NODE_EXTRA_CA_CERTS = caPath;
    return e;
  };

  it('verify-full in the URL: the bin connects with the CA named in NODE_EXTRA_CA_CERTS, as `node cli.js` does, and is refused without it', async () => {
    const url = `${server!.url()}?sslmode=verify-full`;
    const viaBin = await runCli(['status'], env({ DATABASE_URL: url }, true), 120_000, 'bin');
    expect(viaBin.stderr).toBe('');
    expect(viaBin.code).toBe(0);
    expect(viaBin.stdout).toContain('store: PostgreSQL server');
    const viaNode = await runCli(['status'], env({ DATABASE_URL: url }, true), 120_000, 'node');
    expect(viaNode.code).toBe(0);
    expect(viaNode.stdout).toBe(viaBin.stdout);
    const untrusted = await runCli(['status'], env({ DATABASE_URL: url }, false), 120_000, 'bin');
    expect(untrusted.code).toBe(1);
    expect(untrusted.stderr).toMatch(/certificate/i);
  }, 240_000);

  it('TLS asked for by PGSSLMODE=verify-full alone: the bin trusts the CA too, and is refused without it', async () => {
    const trusted = await runCli(['status'], env({ DATABASE_URL: server!.url(), PGSSLMODE: 'verify-full' }, true), 120_000, 'bin');
    expect(trusted.stderr).toBe('');
    expect(trusted.code).toBe(0);
    const untrusted = await runCli(['status'], env({ DATABASE_URL: server!.url(), PGSSLMODE: 'verify-full' }, false), 120_000, 'bin');
    expect(untrusted.code).toBe(1);
    expect(untrusted.stderr).toMatch(/certificate/i);
  }, 240_000);

  it('a CA file that cannot be read: a warning naming it, as Node gives, and the connection refused', async () => {
    const missing = path.join(dir, 'no-such-ca.pem');
    const e = env({ DATABASE_URL: `${server!.url()}?sslmode=verify-full` }, false);
    e.NODE_EXTRA_CA_CERTS = missing;
    const r = await runCli(['status'], e, 120_000, 'bin');
    expect(r.code).toBe(1);
    expect(r.stderr).toContain(missing);
    expect(r.stderr).toMatch(/certificate/i);
  }, 240_000);

  it('rediss://: a worker started by the bin connects to Redis over TLS with the CA in NODE_EXTRA_CA_CERTS, and reports the certificate without it', async () => {
    // a private redis-server of this test serving TLS only, with the same CA's certificate
    const port = await freeFaultPort();
    let log = '';
    redis = spawn('redis-server', ['--port', '0', '--tls-port', String(port), '--tls-cert-file', certs.certFile, '--tls-key-file', certs.keyFile,
      '--tls-ca-cert-file', caPath, '--tls-auth-clients', 'no', '--bind', '127.0.0.1', '--save', '', '--appendonly', 'no'], { stdio: ['ignore', 'pipe', 'pipe'] });
    redis.stdout!.on('data', (d) => { log += d; });
    await waitFor(() => log.includes('Ready to accept connections') || (redis!.exitCode !== null && Promise.reject(new Error(`redis-server exited: ${log}`))), 'the TLS redis-server', 60_000);
    // PostgreSQL without TLS here, so that a certificate error can only be Redis's
    const urls = { DATABASE_URL: `${server!.url()}?sslmode=disable`, REDIS_URL: `rediss://127.0.0.1:${port}`, HEATLEDGER_QUEUE_PREFIX: 'hl-extra-ca' };
    // until it serves or reports a certificate it refused (then the test fails at once)
    const trusted = await startCliUntil(['worker'], env(urls, true), /heatledger worker: serving|certificate/i, 120_000, 'bin');
    expect(trusted.stderr()).not.toMatch(/certificate/i);
    expect(trusted.stderr()).toContain('heatledger worker: serving');
    expect((await stopChild(trusted.child, 'SIGTERM')).code).toBe(0);
    const untrusted = await startCliUntil(['worker'], env(urls, false), /certificate/i, 120_000, 'bin');
    expect(untrusted.stderr()).not.toContain('heatledger worker: serving');
    await stopChild(untrusted.child, 'SIGKILL');
  }, 240_000);
});
