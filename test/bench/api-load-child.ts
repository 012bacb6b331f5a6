/**
 * The load generator of the API bench, in its own process: autocannon (a
 * registry HTTP benchmarking library) against one route for a set time,
 * cycling through the given paths, after a 2 s warm-up of the same requests
 * (not counted: the first answer of each question is timed apart by the bench).
 * Prints one JSON line with requests/s and latency percentiles.
 *
 *     node dist/test/bench/api-load-child.js <base-url> <seconds> <connections> <path> [<path> ...]
 */
import autocannon from 'autocannon';

const [base, secondsText, connectionsText, ...paths] = process.argv.slice(2);
let next = 0;
const result = await autocannon({
  url: base,
  warmup: { connections: Number(connectionsText), duration: 2 },
  duration: Number(secondsText),
  connections: Number(connectionsText),
  // one path after another, so a route with an id is asked for every district in turn
  requests: [{ method: 'GET', setupRequest: (req) => ({ ...req, path: paths[next++ % paths.length] }) }],
} as autocannon.Options);
process.stdout.write(JSON.stringify({
  requests_per_second: result.requests.average,
  requests: result.requests.total,
  p50_ms: result.latency.p50,
  p99_ms: result.latency.p99,
  max_ms: result.latency.max,
  non2xx: result.non2xx,
  errors: result.errors,
  timeouts: result.timeouts,
}) + '\n');
