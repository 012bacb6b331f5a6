/**
 * Says once, before the suites run, which servers the server suites will use
 * and which of those suites will be skipped on this machine.
 */
import { reachable, requireServices, testDatabaseUrl, testRedisUrl } from './services.js';

export default async function setup(): Promise<void> {
  // No suite connects over TLS with the certificates NODE_EXTRA_CA_CERTS names (the one that
  // tests them names its own CA), yet Node 20 builds its whole certificate store at the start of
  // every process when the variable is set: ~36 ms of CPU for each test worker and each of the
  // hundreds of CLI children the suites start (`node -e ""`, ten runs each way, 2-core build
  // machine). Unset here, before the workers start, so none of them inherits it.
  delete process.env.NODE_EXTRA_CA_CERTS;
  const pg = await reachable(testDatabaseUrl, 5432);
  const redis = await reachable(testRedisUrl, 6379);
  const line = (name: string, url: string, ok: boolean) =>
    ok ? `  ${name} at ${url}: reachable, its suites run`
      : `  ${name} at ${url}: NOT reachable, its suites are ${requireServices ? 'FAILED (HEATLEDGER_REQUIRE_SERVICES=1)' : 'SKIPPED (set HEATLEDGER_REQUIRE_SERVICES=1 to make that a failure)'}`;
  console.log(['heatledger test servers:', line('PostgreSQL', testDatabaseUrl, pg), line('Redis', testRedisUrl, redis)].join('\n'));
}
