/**
 * One fresh embedded store opened in this (new) process, for the store-open
 * bench (./store-open.ts): `node dist/test/bench/store-open-child.js <template|scratch> <dataDir>`.
 * Prints one JSON line { open_ms, cpu_ms } (module loading included, as a command pays it;
 * cpu_ms is this process's user + system time, which moves less than wall time on a loaded machine).
 *   template  openStore({ dataDir }): the owner's lock, the prepared template, migrations, read socket
 *   scratch   the engine's initdb and every migration (openPgliteStore fromScratch, then prepareStore)
 */
const t0 = performance.now();
const [mode, dataDir] = process.argv.slice(2);
if ((mode !== 'template' && mode !== 'scratch') || !dataDir) {
  process.stderr.write('usage: store-open-child.js <template|scratch> <dataDir>\n');
  process.exit(2);
}
const { openStore, prepareStore } = await import('../../workers/store/store.js');
let store;
if (mode === 'template') {
  store = await openStore({ dataDir, command: 'bench' });
} else {
  const { openPgliteStore } = await import('../../workers/store/pglite.js');
  store = await openPgliteStore({ dataDir, memory: false, fromScratch: true });
  await prepareStore(store);
}
const openMs = performance.now() - t0;
const cpu = process.cpuUsage();
const cpuMs = (cpu.user + cpu.system) / 1000;
const rows = await store.query<{ n: number }>('SELECT count(*)::int AS n FROM schema_migrations');
await store.close();
process.stdout.write(JSON.stringify({ open_ms: openMs, cpu_ms: cpuMs, migrations: rows[0].n }) + '\n');
