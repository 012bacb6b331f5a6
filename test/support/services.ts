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

/**
 * A suite's reference tool is missing: with HEATLEDGER_REQUIRE_SERVICES=1
 * this throws; otherwise it logs a plain "SKIPPED <suite>: <what> not found"
 * line and returns false, so the suite is skipped.
 */
export function missingTool(suite: string, what: string): false {
  if (requireServices) throw new Error(`${suite}: ${what} is missing and HEATLEDGER_REQUIRE_SERVICES=1`);
  console.log(`SKIPPED ${suite}: ${what} not found (set HEATLEDGER_REQUIRE_SERVICES=1 to make this a failure)`);
  return false;
}

/** Where the browser tests find Chromium (Debian's `chromium` package; `.ci/run` installs it when missing). */
export const CHROMIUM_PATH = process.env.HEATLEDGER_CHROMIUM || '/usr/bin/chromium';

/** Local tools the suites call, with the Debian package that holds each. */
const TOOLS = {
  chromium: { debianPackage: 'chromium' },
  pdftotext: { debianPackage: 'poppler-utils' },
  pdfinfo: { debianPackage: 'poppler-utils' },
} as const;
export type ToolName = keyof typeof TOOLS;

/** The full path of a tool (Chromium at CHROMIUM_PATH, the others on PATH), or null. */
export function toolPath(name: ToolName): string | null {
  const candidates = name === 'chromium' ? [CHROMIUM_PATH] : (process.env.PATH ?? '/usr/bin:/bin').split(':').map((dir) => `${dir || '.'}/${name}`);
  for (const p of candidates) {
    try {
      fs.accessSync(p, fs.constants.X_OK);
      return p;
    } catch { /* not here */ }
  }
  return null;
}

/**
 * Whether a suite that needs a local tool can run. Like {@link serviceAvailable}:
 * with HEATLEDGER_REQUIRE_SERVICES=1 a missing tool throws, otherwise the suite
 * is skipped with a plain "SKIPPED" line naming the Debian package to install.
 */
export function toolAvailable(name: ToolName, suite: string): boolean {
  return toolPath(name) !== null || missingTool(suite, `${name} (Debian package ${TOOLS[name].debianPackage})`);
}

/**
 * Whether Debian's /usr/bin/python3 imports these modules (a reference tool).
 * Throws when services are required (CI) and they are missing; logs a plain
 * "SKIPPED" line otherwise.
 */
export async function pythonModulesAvailable(modules: readonly string[], suite: string): Promise<boolean> {
  const { spawnSync } = await import('node:child_process');
  const ok = spawnSync('/usr/bin/python3', ['-c', `import ${modules.join(', ')}`], { stdio: 'ignore' }).status === 0;
  return ok || missingTool(suite, `/usr/bin/python3 with ${modules.join(', ')}`);
}

/**
 * Whether `Rscript` loads these R packages (a reference tool). Like
 * {@link pythonModulesAvailable}: throws when services are required (CI) and
 * they are missing; logs a plain "SKIPPED" line otherwise.
 */
export async function rPackagesAvailable(packages: readonly string[], suite: string): Promise<boolean> {
  const { spawnSync } = await import('node:child_process');
  const load = packages.map((p) => `library(${p})`).join('; ');
  const ok = spawnSync('Rscript', ['-e', `suppressMessages({${load}})`], { stdio: 'ignore' }).status === 0;
  return ok || missingTool(suite, `Rscript with ${packages.join(', ')}`);
}
