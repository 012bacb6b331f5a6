import { failureLine, formatRows, snakeCaseKeys, toCsv, type OutputFormat } from '../format.js';
import { withStore } from './common.js';

/** Columns of `status --format csv`: scene counts by kind, pass and state. */
export const STATUS_CSV_FIELDS = ['kind', 'pass', 'status', 'scenes'] as const;

/**
 * `heatledger status`. Table: counts, the last run and every failed file with
 * its reason. JSON: the same with snake_case keys. CSV: the scene counts by
 * kind, pass and state only, as one table (failed files with their reasons are
 * in the other two formats).
 */
export async function runStatusCommand(opts: { dataDir?: string; format: OutputFormat }): Promise<void> {
  const { sceneStatusCounts, failures, thermalPasses } = await import('../store/index.js');
  await withStore(opts, async (store, config) => {
    const counts = await sceneStatusCounts(store);
    const fails = await failures(store);
    const byKind = await store.query<{ kind: string | null; pass: string | null; status: string; n: number }>(
      `SELECT kind, pass, status, count(*)::int AS n FROM scenes GROUP BY kind, pass, status ORDER BY kind NULLS LAST, pass NULLS LAST, status`,
    );
    const runs = await store.query<{ id: number; status: string; started_at: string; finished_at: string | null; mode: string; software_version: string; scenes_left: number | null; error: string | null; error_kind: string | null }>(
      `SELECT id, status, started_at, finished_at, mode, software_version, scenes_left, error, error_kind FROM runs ORDER BY id DESC LIMIT 1`,
    );
    // how each thermal (Level-1 DN) pass had its LST made, the missing atmospheric correction said plainly
    const thermal = await thermalPasses(store);
    const lastRun = runs[0] ?? null;
    if (opts.format === 'json') {
      const body = {
        store: config.databaseUrl ? 'postgresql' : `embedded (${config.dataDir})`,
        scenes: counts,
        byKind: byKind.map((r) => ({ kind: r.kind, pass: r.pass, status: r.status, scenes: r.n })),
        failures: fails,
        thermalScenes: thermal,
        lastRun,
      };
      process.stdout.write(JSON.stringify(snakeCaseKeys(body), null, 2) + '\n');
      return;
    }
    if (opts.format === 'csv') {
      process.stdout.write(toCsv(byKind.map((r) => ({ kind: r.kind, pass: r.pass, status: r.status, scenes: r.n })), STATUS_CSV_FIELDS));
      return;
    }
    process.stdout.write(`store: ${config.databaseUrl ? 'PostgreSQL server' : `embedded, ${config.dataDir}`}\n`);
    process.stdout.write(`scenes: ${counts.total} (processed ${counts.processed}, registered ${counts.registered}, failed ${counts.failed})\n`);
    if (lastRun) process.stdout.write(`last run: ${lastRun.id} ${lastRun.status} (${lastRun.mode}, started ${lastRun.started_at})\n`);
    if (lastRun?.status === 'incomplete') {
      process.stdout.write(`  ${lastRun.scenes_left ?? '?'} scene(s) left: ${lastRun.error ?? 'no reason recorded'}\n  run the same ingest command again to finish them\n`);
    }
    if (byKind.length) process.stdout.write('\n' + formatRows(byKind.map((r) => ({ kind: r.kind ?? '-', pass: r.pass ?? '-', status: r.status, scenes: r.n })), 'table'));
    if (thermal.length) {
      process.stdout.write('\npasses converted from thermal DN:\n');
      for (const t of thermal) process.stdout.write(`  ${t.acquiredAt ?? '-'} ${t.pass ?? '-'} ${t.path} (${t.status}): ${t.howLstWasMade}\n`);
    }
    if (fails.length) {
      process.stdout.write('\nfailed scenes:\n');
      for (const f of fails) process.stdout.write(`  ${failureLine(f.path, f.error)}\n`);
    }
  });
}
