/**
 * How a run ends, from its job tree and what the runner reported
 * (workers/run/outcome.ts runOutcome) — the run states of
 * sql/migrations/004_run_states.sql: `succeeded` only when every scene was
 * stored and the table derived; `incomplete` (with the scenes left) when a
 * service or a bug kept scenes or the derive step from finishing, or the
 * runner stopped waiting, and also (no scene left, but `refused` counted) when
 * files were refused as bad input, which a re-run cannot fix;
 * `failed` when the derive step failed on something other than a service.
 * Expected values are counted by hand from the trees below (common practice,
 * no source: exit 0 means everything asked for was done).
 */
import { describe, expect, it } from 'vitest';
import { runOutcome } from '../../workers/run/outcome.js';
import type { FlowResult, JobFailure, JobSpec } from '../../workers/queue/types.js';

/** derive ← scene-i for scenes 1..n. */
function tree(n: number): JobSpec {
  return {
    name: 'derive', id: 'derive', data: null,
    children: Array.from({ length: n }, (_, i) => ({ name: 'scene', id: `scene-${i + 1}`, data: null })),
  };
}
const all = (n: number) => ['derive', ...Array.from({ length: n }, (_, i) => `scene-${i + 1}`)];
function result(n: number, failures: JobFailure[], stopped?: FlowResult['stopped']): FlowResult {
  const failed = new Set(failures.map((f) => f.id));
  return { results: new Map(all(n).filter((id) => !failed.has(id)).map((id) => [id, {}])), failures, ...(stopped ? { stopped } : {}) };
}
const pgDown: Omit<JobFailure, 'id' | 'name'> = { kind: 'service', service: 'PostgreSQL', error: 'cannot reach PostgreSQL at db:5432: ECONNREFUSED', serviceFailingSeconds: 301 };

describe('run outcome', () => {
  it('succeeds when every job completed', () => {
    expect(runOutcome(tree(3), result(3, []))).toEqual({ status: 'succeeded', scenesLeft: 0, refused: 0, derived: true, error: null, errorKind: null });
  });

  it('is incomplete with nothing left when a scene was refused as bad input or a path was unreadable (recorded; a re-run cannot fix it)', () => {
    const r = result(3, [{ id: 'scene-2', name: 'scene', kind: 'input', error: 'b.tif: has no acquisition time' }]);
    expect(runOutcome(tree(3), r)).toMatchObject({ status: 'incomplete', scenesLeft: 0, refused: 1, derived: true, errorKind: 'input' });
    expect(runOutcome(tree(3), result(3, []), 2)).toMatchObject({ status: 'incomplete', scenesLeft: 0, refused: 2, derived: true });
  });

  it('is incomplete, with the scenes left and the service, when scenes failed on a service', () => {
    const r = result(4, [
      { id: 'scene-1', name: 'scene', ...pgDown },
      { id: 'scene-3', name: 'scene', ...pgDown },
    ]);
    expect(runOutcome(tree(4), r)).toEqual({ status: 'incomplete', scenesLeft: 2, refused: 0, derived: true, error: pgDown.error, errorKind: 'service', service: 'PostgreSQL', serviceFailingSeconds: 301 });
  });

  it('is incomplete when only the derive step failed on a service', () => {
    expect(runOutcome(tree(2), result(2, [{ id: 'derive', name: 'derive', ...pgDown }]))).toMatchObject({ status: 'incomplete', scenesLeft: 0, derived: false, service: 'PostgreSQL' });
  });

  it('is incomplete, every unfinished scene left, when the runner stopped waiting', () => {
    const stopped = { kind: 'service' as const, service: 'worker' as const, error: 'no heatledger worker made progress on this run for 180 s' };
    const unfinished = all(3).map((id) => ({ id, name: id.split('-')[0], kind: 'service' as const, error: 'job not finished (state waiting)' }));
    expect(runOutcome(tree(3), { results: new Map(), failures: unfinished, stopped })).toEqual({ status: 'incomplete', scenesLeft: 3, refused: 0, derived: false, error: stopped.error, errorKind: 'service', service: 'worker' });
  });

  it('is incomplete when a scene failed on a bug (it may pass on a re-run), and failed when the derive step did', () => {
    const bug = { kind: 'bug' as const, error: 'x is undefined' };
    expect(runOutcome(tree(2), result(2, [{ id: 'scene-2', name: 'scene', ...bug }]))).toEqual({ status: 'incomplete', scenesLeft: 1, refused: 0, derived: true, error: bug.error, errorKind: 'bug' });
    expect(runOutcome(tree(2), result(2, [{ id: 'derive', name: 'derive', ...bug }]))).toEqual({ status: 'failed', scenesLeft: 0, refused: 0, derived: false, error: bug.error, errorKind: 'bug' });
  });
});
