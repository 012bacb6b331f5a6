/**
 * The embedded engine's settings by kind of process (workers/store/pglite.ts):
 * a command that opens the store and ends gets 16 MB of shared buffers (a
 * quicker start), `serve` keeps PGlite's 128 MB. Read back with PostgreSQL's
 * own SHOW (PostgreSQL manual, "SHOW").
 */
import { describe, expect, it } from 'vitest';
import { openPgliteStore } from '../../workers/store/pglite.js';

describe('embedded store settings', () => {
  for (const [longRunning, expected] of [[false, '16MB'], [true, '128MB']] as const) {
    it(`longRunning ${longRunning}: shared_buffers ${expected}, and the store works`, async () => {
      const store = await openPgliteStore({ dataDir: '', memory: true, longRunning });
      try {
        expect((await store.query<{ shared_buffers: string }>('SHOW shared_buffers'))[0].shared_buffers).toBe(expected);
        expect((await store.query<{ n: number }>('SELECT count(*)::int AS n FROM schema_migrations'))[0].n).toBeGreaterThan(0);
      } finally {
        await store.close();
      }
    });
  }
});
