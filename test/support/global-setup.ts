/**
 * Says once, before the suites run, which servers the server suites will use
 * and which of those suites will be skipped on this machine.
 */
import { HUGE_PAGES_TUNABLE } from '../../workers/bin-env.js';
import { reachable, requireServices, testDatabaseUrl, testRedisUrl } from './services.js';

export default async function setup(): Promise<void> {
  // No suite connects over TLS with the certificates NODE_EXTRA_CA_CERTS names (the one that
  // tests them names its own CA), yet Node 20 builds its whole certificate store at the start of
  // every process when the variable is set: ~36 ms of CPU for each test worker and each of the
  // hundreds of CLI children the suites start (`node -e ""`, ten runs each way, 2-core build
  // machine). Unset here, before the workers start, so none of them inherits it.
  delete process.env.NODE_EXTRA_CA_CERTS;
  // The bin's first line asks glibc's malloc for huge pages (workers/cli.ts), but the suites
  // start the CLI as `node dist/workers/cli.js` and their own workers with plain node, so each
  // of those would fault its malloc heap in 4 KB at a time. Asked here as the bin asks, the
  // user's tunables after ours (glibc lets the later one win): `table --level year` on the
  // demo's store 0.87x wall, 0.89x CPU (paired whole-process runs, 11 pairs, 2026-12-03).
  process.env.GLIBC_TUNABLES = `${HUGE_PAGES_TUNABLE}:${process.env.GLIBC_TUNABLES ?? ''}`;
  const pg = await reachable(testDatabaseUrl, 5432);
  const redis = await reachable(testRedisUrl, 6379);
  const line = (name: string, url: string, ok: boolean) =>
    ok ? `  ${name} at ${url}: reachable, its suites run`
      : `  ${name} at ${url}: NOT reachable, its suites are ${requireServices ? 'FAILED (HEATLEDGER_REQUIRE_SERVICES=1)' : 'SKIPPED (set HEATLEDGER_REQUIRE_SERVICES=1 to make that a failure)'}`;
  console.log(['heatledger test servers:', line('PostgreSQL', testDatabaseUrl, pg), line('Redis', testRedisUrl, redis)].join('\n'));
}
