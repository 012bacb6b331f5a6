/**
 * Which server-backed test suites can run here.
 *
 * With HEATLEDGER_REQUIRE_SERVICES=1 (set by .ci/run) a missing server is a
 * test failure; without it, a suite whose server is unreachable is skipped and
 * says so plainly in the output.
 */
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

/**
 * Whether Debian's /usr/bin/python3 imports these modules (a reference tool).
 * Throws when services are required (CI) and they are missing; logs a plain
 * "SKIPPED" line otherwise.
 */
export async function pythonModulesAvailable(modules: readonly string[], suite: string): Promise<boolean> {
  const { spawnSync } = await import('node:child_process');
  const ok = spawnSync('/usr/bin/python3', ['-c', `import ${modules.join(', ')}`], { stdio: 'ignore' }).status === 0;
  if (ok) return true;
  if (requireServices) throw new Error(`${suite}: /usr/bin/python3 with ${modules.join(', ')} is missing and HEATLEDGER_REQUIRE_SERVICES=1`);
  console.log(`SKIPPED ${suite}: /usr/bin/python3 with ${modules.join(', ')} not found (set HEATLEDGER_REQUIRE_SERVICES=1 to make this a failure)`);
  return false;
}
