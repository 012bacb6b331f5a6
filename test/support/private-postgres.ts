/**
 * A private PostgreSQL server for fault tests that stop or restart it: its
 * own cluster (initdb) in a temporary folder, on a free port of 54040-54059,
 * never the shared server. Under root the server runs as the `postgres` user
 * (PostgreSQL refuses to run as root).
 */
import { execFile } from 'node:child_process';
import { chownSync, existsSync, mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import net from 'node:net';
import os from 'node:os';
import path from 'node:path';
import { promisify } from 'node:util';

const run = promisify(execFile);

/** Folder of initdb and pg_ctl (Debian's layout), or null when PostgreSQL's server binaries are not installed. */
export function postgresBinDir(): string | null {
  const root = '/usr/lib/postgresql';
  if (!existsSync(root)) return null;
  const versions = readdirSync(root).filter((v) => existsSync(path.join(root, v, 'bin', 'initdb'))).sort((a, b) => Number(b) - Number(a));
  return versions.length ? path.join(root, versions[0], 'bin') : null;
}

export const PORT_RANGE = [54040, 54059] as const;

function portFree(port: number): Promise<boolean> {
  return new Promise((resolve) => {
    const s = net.createServer();
    s.once('error', () => resolve(false));
    s.listen(port, '127.0.0.1', () => s.close(() => resolve(true)));
  });
}

/** A port of `range` (default 54040-54059) nobody listens on now (tried in random order). */
export async function freeFaultPort(range: readonly [number, number] = PORT_RANGE): Promise<number> {
  const ports = Array.from({ length: range[1] - range[0] + 1 }, (_, i) => range[0] + i).sort(() => Math.random() - 0.5);
  for (const p of ports) if (await portFree(p)) return p;
  throw new Error(`no free port in ${range[0]}-${range[1]}`);
}

export interface PrivatePostgres {
  port: number;
  /** postgres://postgres@127.0.0.1:<port>/<database> */
  url(database?: string): string;
  /** Stop the server: 'immediate' is a crash (recovery on the next start), 'fast' a clean shutdown. */
  stop(mode?: 'immediate' | 'fast'): Promise<void>;
  start(): Promise<void>;
  /** Restart (every connection is cut). */
  restart(): Promise<void>;
  /** Stop the server and remove its folder. */
  destroy(): Promise<void>;
  /** Process id of the running postmaster (first line of postmaster.pid). */
  postmasterPid(): number;
}

export interface PrivatePostgresOptions {
  /** Ports to choose from (default the fault-test range 54040-54059). */
  ports?: readonly [number, number];
  /** Keep fsync and full-page writes on, as a production server has them (default off: fault tests need no durability on disk). */
  durable?: boolean;
  /** Serve TLS with this certificate and key (PEM); plain connections are still accepted. */
  tls?: { certPem: string; keyPem: string };
}

/** initdb a cluster in a temp folder and start it on a free port of the fault-test range. */
export async function startPrivatePostgres(tag: string, options: PrivatePostgresOptions = {}): Promise<PrivatePostgres> {
  const bin = postgresBinDir();
  if (!bin) throw new Error('PostgreSQL server binaries (initdb, pg_ctl) are not installed');
  const dir = mkdtempSync(path.join(os.tmpdir(), `hl-pg-${tag}-`));
  const asRoot = process.getuid?.() === 0;
  // as root, the server runs as the postgres user, whose the folder (and key file) must be
  let owner: { uid: number; gid: number } | null = null;
  if (asRoot) {
    const { stdout } = await run('id', ['-u', 'postgres']);
    const { stdout: gid } = await run('id', ['-g', 'postgres']);
    owner = { uid: Number(stdout.trim()), gid: Number(gid.trim()) };
    chownSync(dir, owner.uid, owner.gid);
  }
  const cmd = (tool: string, args: string[]) =>
    asRoot ? run('runuser', ['-u', 'postgres', '--', path.join(bin, tool), ...args], { timeout: 120_000 }) : run(path.join(bin, tool), args, { timeout: 120_000 });
  const data = path.join(dir, 'data');
  let tlsSettings = '';
  if (options.tls) {
    // the server refuses a key file others can read
    const cert = path.join(dir, 'server.crt'), key = path.join(dir, 'server.key');
    writeFileSync(cert, options.tls.certPem);
    writeFileSync(key, options.tls.keyPem, { mode: 0o600 });
    if (owner) for (const f of [cert, key]) chownSync(f, owner.uid, owner.gid);
    tlsSettings = ` -c ssl=on -c ssl_cert_file=${cert} -c ssl_key_file=${key}`;
  }
  await cmd('initdb', ['-D', data, '-A', 'trust', '-U', 'postgres', '--no-sync', '-E', 'UTF8']);
  let port = 0;
  const startOn = async () => {
    await cmd('pg_ctl', ['-D', data, '-l', path.join(dir, 'server.log'), '-w', '-t', '110',
      '-o', `-p ${port} -k ${dir} -c listen_addresses=127.0.0.1${options.durable ? '' : ' -c fsync=off -c full_page_writes=off'}${tlsSettings}`, 'start']);
  };
  // Another test may take the port between the check and the start: try a few.
  for (let tries = 0; ; tries++) {
    port = await freeFaultPort(options.ports);
    try {
      await startOn();
      break;
    } catch (e) {
      if (tries >= 4) throw e;
    }
  }
  const stop = async (mode: 'immediate' | 'fast' = 'fast') => { await cmd('pg_ctl', ['-D', data, '-m', mode, '-w', '-t', '110', 'stop']); };
  return {
    port,
    url: (database = 'postgres') => `postgres://postgres@127.0.0.1:${port}/${database}`,
    stop,
    start: startOn,
    restart: async () => { await cmd('pg_ctl', ['-D', data, '-m', 'fast', '-w', '-t', '110', '-l', path.join(dir, 'server.log'), 'restart']); },
    postmasterPid: () => Number(readFileSync(path.join(data, 'postmaster.pid'), 'utf8').split('\n')[0]),
    destroy: async () => {
      await stop('immediate').catch(() => undefined);
      rmSync(dir, { recursive: true, force: true });
    },
  };
}
