/** Runs whose process is gone: found when a command opens the store. */
import os from 'node:os';
import { ownerAlive } from './lock.js';
import type { Queryable } from './interface.js';

/**
 * Mark 'abandoned' every run left 'running' whose owner process no longer
 * exists on this host (scenes_left stays unknown: which scenes it had
 * finished is in the scenes table, not in the run). Runs of other hosts, and runs without an owner
 * recorded, cannot be checked and stay as they are. Returns the ids marked.
 */
export async function markAbandonedRuns(db: Queryable, host: string = os.hostname()): Promise<number[]> {
  const running = await db.query<{ id: number; owner_pid: number }>(
    `SELECT id, owner_pid FROM runs WHERE status = 'running' AND owner_host = $1 AND owner_pid IS NOT NULL ORDER BY id`,
    [host],
  );
  const gone = running.filter((r) => r.owner_pid !== process.pid && ownerAlive({ pid: r.owner_pid, host, procStart: null }) === false);
  for (const r of gone) {
    await db.query(
      `UPDATE runs SET status = 'abandoned', finished_at = now(),
              error = coalesce(error, $2) WHERE id = $1 AND status = 'running'`,
      [r.id, `its process (pid ${r.owner_pid} on ${host}) ended without finishing the run; run the same ingest again to finish it`],
    );
  }
  return gone.map((r) => r.id);
}
