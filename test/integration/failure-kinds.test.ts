/**
 * Migration 007: a stored failure's kind apart from its message, on PGlite and on
 * the PostgreSQL server. Rows written as the program wrote them before 007 (a run's
 * error with the error's class name in front) are converted: the kinds are those of
 * workers/core/errors.ts (InputError input, ServiceError and its subclass
 * StoreBusyError service, any other class a bug); every row and every message stays.
 * Then a run and a failed scene written through the store keep message and kind apart.
 */
import { createHash } from 'node:crypto';
import { afterAll, describe, expect, it } from 'vitest';
import { listMigrations, migrate } from '../../workers/store/migrate.js';
import { finishRun, getRun, startRun } from '../../workers/store/runs.js';
import { failures, markSceneFailed } from '../../workers/store/scenes.js';
import type { Store } from '../../workers/store/store.js';
import { createTempDatabase, type TempDatabase } from '../support/pipeline-harness.js';
import { serviceAvailable } from '../support/services.js';

const pgAvailable = await serviceAvailable('postgres', 'failure-kinds.test.ts (PostgreSQL server)');

/** Run errors as stored before 007, and what 007 makes of each: [stored, message, kind]. */
const RUN_ERRORS: [string | null, string | null, string | null][] = [
  ['InputError: /srv/a.tif: not a TIFF file', '/srv/a.tif: not a TIFF file', 'input'],
  ['ServiceError: cannot reach PostgreSQL at db:5432: ECONNREFUSED', 'cannot reach PostgreSQL at db:5432: ECONNREFUSED', 'service'],
  ['StoreBusyError: the store is in use by ingest (pid 12)', 'the store is in use by ingest (pid 12)', 'service'],
  ['TypeError: x is undefined', 'x is undefined', 'bug'],
  ['Error: worker exited', 'worker exited', 'bug'],
  // no class name in front: kept whole, kind unknown
  ['2 file(s) asked for were refused as bad input', '2 file(s) asked for were refused as bad input', null],
  ['stopped by SIGTERM: GDAL Error: x', 'stopped by SIGTERM: GDAL Error: x', null],
  [null, null, null],
];

const hash = (tag: string) => createHash('sha256').update(tag).digest('hex');

function suite(name: string, open: () => Promise<Store>): void {
  describe(name, () => {
    let store: Store;
    afterAll(async () => { await store?.close(); });

    it('moves a leading class name into the kind and keeps every failure and its message', async () => {
      store = await open();
      const all = listMigrations();
      await migrate(store, all.filter((m) => m.version < 7));
      for (const [error] of RUN_ERRORS) {
        await store.query(`INSERT INTO runs (software_version, mode, status, error) VALUES ('0.0.9', 'embedded', $1, $2)`, [error === null ? 'succeeded' : 'incomplete', error]);
      }
      await store.query(`INSERT INTO scenes (content_hash, path, status, error) VALUES
        ($1, '/srv/b.tif', 'failed', '/srv/b.tif: band 1 has no GDAL_NODATA tag'),
        (NULL, '/srv/gone', 'failed', '/srv/gone: ENOENT'),
        ($2, '/srv/c.tif', 'failed', 'InputError: /srv/c.tif: not a TIFF file')`, [hash('b'), hash('c')]);
      const before = await store.query<{ n: number }>(`SELECT (SELECT count(*) FROM runs) + (SELECT count(*) FROM scenes) AS n`);

      expect(await migrate(store, all.filter((m) => m.version <= 7))).toEqual({ applied: ['007_failure_kinds'] });
      const runs = await store.query<{ error: string | null; error_kind: string | null }>('SELECT error, error_kind FROM runs ORDER BY id');
      expect(runs).toEqual(RUN_ERRORS.map(([, error, kind]) => ({ error, error_kind: kind })));
      const scenes = await store.query<{ path: string; error: string; error_kind: string }>('SELECT path, error, error_kind FROM scenes ORDER BY path');
      expect(scenes).toEqual([
        { path: '/srv/b.tif', error: '/srv/b.tif: band 1 has no GDAL_NODATA tag', error_kind: 'input' },
        { path: '/srv/c.tif', error: '/srv/c.tif: not a TIFF file', error_kind: 'input' },
        { path: '/srv/gone', error: '/srv/gone: ENOENT', error_kind: 'input' },
      ]);
      expect(await store.query<{ n: number }>(`SELECT (SELECT count(*) FROM runs) + (SELECT count(*) FROM scenes) AS n`)).toEqual(before);
      // a failed scene without a kind is refused from now on (scenes_failed_has_kind)
      const refused = await store.query(`INSERT INTO scenes (content_hash, path, status, error) VALUES ($1, '/srv/d.tif', 'failed', 'x')`, [hash('d')]).catch((e: unknown) => e);
      expect((refused as Error).message).toMatch(/scenes_failed_has_kind/);
    });

    it('writes a run\'s failure and a failed scene with message and kind apart', async () => {
      const runId = await startRun(store, { softwareVersion: '0.1.0', mode: 'embedded', parameters: {} });
      await finishRun(store, runId, { status: 'failed', error: 'derive step: x is undefined', errorKind: 'bug', scenesLeft: 0 });
      expect(await getRun(store, runId)).toMatchObject({ status: 'failed', error: 'derive step: x is undefined', errorKind: 'bug' });
      const ok = await startRun(store, { softwareVersion: '0.1.0', mode: 'embedded', parameters: {} });
      await finishRun(store, ok, { status: 'succeeded', error: null, errorKind: 'input', scenesLeft: 0 });
      expect(await getRun(store, ok)).toMatchObject({ status: 'succeeded', error: null, errorKind: null });
      await markSceneFailed(store, { contentHash: hash('e'), path: '/srv/e.tif', error: '/srv/e.tif: not a TIFF file', runId });
      expect((await failures(store)).find((f) => f.path === '/srv/e.tif')).toMatchObject({ error: '/srv/e.tif: not a TIFF file', errorKind: 'input' });
    });
  });
}

suite('failure kinds on PGlite', async () => {
  const { openPgliteStore } = await import('../../workers/store/pglite.js');
  return openPgliteStore({ dataDir: '', memory: true, fromScratch: true });
});

let db: TempDatabase | null = null;
afterAll(async () => { if (db) await db.drop(); });
if (pgAvailable) {
  suite('failure kinds on the PostgreSQL server', async () => {
    db = await createTempDatabase('kinds');
    const { openPgStore } = await import('../../workers/store/pg.js');
    return openPgStore(db.url);
  });
}
