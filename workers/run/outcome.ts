/** How a run ended, from its job tree and what the runner reported. */
import type { FailureKind, ServiceName } from '../core/errors.js';
import type { FlowResult, JobFailure, JobSpec } from '../queue/types.js';

/** How a run ended: every scene stored and the table derived, or not (and why). */
export interface RunOutcome {
  status: 'succeeded' | 'incomplete' | 'failed';
  /** Scenes not finished (neither stored nor refused as bad input); the next ingest finishes them. */
  scenesLeft: number;
  /** Files asked for that were refused as bad input (unreadable paths, corrupt scenes); recorded with their reasons. */
  refused: number;
  /** Whether the derive step produced the district table. */
  derived: boolean;
  /** Why the run is not 'succeeded': a message, without the kind in front. */
  error: string | null;
  /** The kind of the failure `error` reports (input for files refused as bad input); null when no failure is known (the run did not finish). */
  errorKind: FailureKind | null;
  /** The service that kept the run from finishing, when one did, and how long (s) it kept failing. */
  service?: ServiceName;
  serviceFailingSeconds?: number;
}

/**
 * The outcome of a run from its job tree (derive ← scene) and what the runner
 * reported. A scene is finished when its job completed or refused it as bad
 * input (recorded as a failed scene); anything else —
 * a service that stayed away past the budget, a bug, a runner that stopped
 * waiting — leaves it for the next ingest. A derive step failing on a service
 * leaves the run incomplete; failing on anything else fails it. Files refused
 * as bad input (and `unreadable` paths that never became jobs) also keep the
 * run from 'succeeded' — not everything asked for was stored — but re-running
 * will not change them: the error names them, and they stay in the store.
 */
export function runOutcome(root: JobSpec, result: FlowResult, unreadable = 0): RunOutcome {
  const failures = new Map(result.failures.map((f) => [f.id, f]));
  const reasons: JobFailure[] = [];
  const finished = (id: string): boolean => {
    if (result.results.has(id)) return true;
    const f = failures.get(id);
    if (f?.kind === 'input') return true;
    if (f) reasons.push(f);
    return false;
  };
  let scenesLeft = 0;
  let refused = unreadable;
  for (const sceneJob of root.children ?? []) {
    if (!finished(sceneJob.id)) scenesLeft++;
    else if (failures.get(sceneJob.id)?.kind === 'input') refused++;
  }
  const derived = result.results.has(root.id);
  const deriveFailure = failures.get(root.id);
  const first = (kind?: string) => reasons.find((f) => kind === undefined || f.kind === kind);
  const pick = result.stopped ? { error: result.stopped.error, kind: result.stopped.kind, service: result.stopped.service, serviceFailingSeconds: undefined }
    : deriveFailure ?? first('service') ?? first();
  if (deriveFailure && deriveFailure.kind !== 'service' && !result.stopped) {
    return { status: 'failed', scenesLeft, refused, derived, error: deriveFailure.error, errorKind: deriveFailure.kind, service: deriveFailure.service };
  }
  if (!derived || scenesLeft > 0 || result.stopped) {
    return {
      status: 'incomplete', scenesLeft, refused, derived,
      error: pick?.error ?? 'the run did not finish',
      errorKind: pick?.kind ?? null,
      ...(pick?.service ? { service: pick.service } : {}),
      ...(pick?.serviceFailingSeconds !== undefined ? { serviceFailingSeconds: pick.serviceFailingSeconds } : {}),
    };
  }
  if (refused > 0) {
    return {
      status: 'incomplete', scenesLeft: 0, refused, derived,
      error: `${refused} file(s) asked for were refused as bad input and are recorded with their reasons (heatledger status); every other scene is stored`,
      errorKind: 'input',
    };
  }
  return { status: 'succeeded', scenesLeft: 0, refused: 0, derived, error: null, errorKind: null };
}
