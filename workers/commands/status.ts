import { failureLine, formatRows, type OutputFormat } from '../format.js';
import { withStore } from './common.js';

export async function runStatusCommand(opts: { dataDir?: string; format: OutputFormat }): Promise<void> {
  const { sceneStatusCounts, failures } = await import('../store/index.js');
  await withStore(opts, async (store, config) => {
    const counts = await sceneStatusCounts(store);
    const fails = await failures(store);
    const byKind = await store.query<{ kind: string | null; pass: string | null; status: string; n: number }>(
      `SELECT kind, pass, status, count(*)::int AS n FROM scenes GROUP BY kind, pass, status ORDER BY kind NULLS LAST, pass NULLS LAST, status`,
    );
    const runs = await store.query<{ id: number; status: string; started_at: string; finished_at: string | null; mode: string; software_version: string; scenes_left: number | null; error: string | null }>(
      `SELECT id, status, started_at, finished_at, mode, software_version, scenes_left, error FROM runs ORDER BY id DESC LIMIT 1`,
    );
    if (opts.format === 'json') {
      process.stdout.write(JSON.stringify({ store: config.databaseUrl ? 'postgresql' : `embedded (${config.dataDir})`, scenes: counts, byKind, failures: fails, lastRun: runs[0] ?? null }, null, 2) + '\n');
      return;
    }
    process.stdout.write(`store: ${config.databaseUrl ? 'PostgreSQL server' : `embedded, ${config.dataDir}`}\n`);
    process.stdout.write(`scenes: ${counts.total} (processed ${counts.processed}, registered ${counts.registered}, failed ${counts.failed})\n`);
    if (runs[0]) process.stdout.write(`last run: ${runs[0].id} ${runs[0].status} (${runs[0].mode}, started ${runs[0].started_at})\n`);
    if (runs[0]?.status === 'incomplete') {
      process.stdout.write(`  ${runs[0].scenes_left ?? '?'} scene(s) left: ${runs[0].error ?? 'no reason recorded'}\n  run the same ingest command again to finish them\n`);
    }
    if (byKind.length) process.stdout.write('\n' + formatRows(byKind.map((r) => ({ kind: r.kind ?? '-', pass: r.pass ?? '-', status: r.status, scenes: r.n })), opts.format === 'csv' ? 'csv' : 'table'));
    if (fails.length) {
      process.stdout.write('\nfailed scenes:\n');
      for (const f of fails) process.stdout.write(`  ${failureLine(f.path, f.error)}\n`);
    }
  });
}
