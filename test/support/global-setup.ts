/**
 * Says once, before the suites run, which servers the server suites will use
 * and which of those suites will be skipped on this machine.
 */
import { reachable, requireServices, testDatabaseUrl, testRedisUrl } from './services.js';

export default async function setup(): Promise<void> {
  const pg = await reachable(testDatabaseUrl, 5432);
  const redis = await reachable(testRedisUrl, 6379);
  const line = (name: string, url: string, ok: boolean) =>
    ok ? `  ${name} at ${url}: reachable, its suites run`
      : `  ${name} at ${url}: NOT reachable, its suites are ${requireServices ? 'FAILED (HEATLEDGER_REQUIRE_SERVICES=1)' : 'SKIPPED (set HEATLEDGER_REQUIRE_SERVICES=1 to make that a failure)'}`;
  console.log(['heatledger test servers:', line('PostgreSQL', testDatabaseUrl, pg), line('Redis', testRedisUrl, redis)].join('\n'));
}
