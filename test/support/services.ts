/**
 * Which server-backed test suites can run here.
 *
 * With HEATLEDGER_REQUIRE_SERVICES=1 (set by .ci/run) a missing server is a
 * test failure; without it, a suite whose server is unreachable is skipped and
 * says so plainly in the output.
 */
import fs from 'node:fs';
import net from 'node:net';

export const requireServices = process.env.HEATLEDGER_REQUIRE_SERVICES === '1';
export const testDatabaseUrl =
  process.env.HEATLEDGER_TEST_DATABASE_URL ?? 'postgres://postgres@127.0.0.1:5432/test';
export const testRedisUrl = process.env.HEATLEDGER_TEST_REDIS_URL ?? 'redis://127.0.0.1:6379';

/** Whether a TCP connection to the URL's host and port opens (within a generous 15 s: the machine may be loaded). */
export function reachable(url: string, defaultPort: number): Promise<boolean> {
  const u = new URL(url);
  const port = Number(u.port || defaultPort);
  return new Promise((resolve) => {
    const socket = net.connect({ host: u.hostname, port, timeout: 15_000 });
    socket.once('connect', () => { socket.destroy(); resolve(true); });
    socket.once('timeout', () => { socket.destroy(); resolve(false); });
    socket.once('error', () => resolve(false));
  });
}

/**
 * Resolve whether a server suite should run. Throws when services are
 * required but unreachable; logs a plain "skipped" line otherwise.
 */
export async function serviceAvailable(name: 'postgres' | 'redis', suite: string): Promise<boolean> {
  const url = name === 'postgres' ? testDatabaseUrl : testRedisUrl;
  const ok = await reachable(url, name === 'postgres' ? 5432 : 6379);
  if (ok) return true;
  if (requireServices) {
    throw new Error(`${suite}: ${name} at ${url} is unreachable and HEATLEDGER_REQUIRE_SERVICES=1`);
  }
  console.log(`SKIPPED ${suite}: no ${name} server at ${url} (set HEATLEDGER_REQUIRE_SERVICES=1 to make this a failure)`);
  return false;
}

/** Reference tools the suites call, with the Debian package that holds each. */
export const TOOLS = {
  chromium: { command: 'chromium', debianPackage: 'chromium' },
  pdftotext: { command: 'pdftotext', debianPackage: 'poppler-utils' },
  pdfinfo: { command: 'pdfinfo', debianPackage: 'poppler-utils' },
} as const;
export type ToolName = keyof typeof TOOLS;

/** The full path of a tool's command on PATH, or null. */
export function toolPath(name: ToolName): string | null {
  for (const dir of (process.env.PATH ?? '/usr/bin:/bin').split(':')) {
    const p = `${dir || '.'}/${TOOLS[name].command}`;
    try {
      fs.accessSync(p, fs.constants.X_OK);
      return p;
    } catch { /* not here */ }
  }
  return null;
}

/**
 * Whether every tool a suite needs is installed. Throws when services are
 * required (CI) and one is missing; logs a plain "SKIPPED" line otherwise.
 */
export function toolsAvailable(names: readonly ToolName[], suite: string): boolean {
  const missing = names.filter((n) => toolPath(n) === null);
  if (missing.length === 0) return true;
  const what = missing.map((n) => `${TOOLS[n].command} (Debian package ${TOOLS[n].debianPackage})`).join(', ');
  if (requireServices) throw new Error(`${suite}: ${what} not installed and HEATLEDGER_REQUIRE_SERVICES=1`);
  console.log(`SKIPPED ${suite}: ${what} not installed (set HEATLEDGER_REQUIRE_SERVICES=1 to make this a failure)`);
  return false;
}
