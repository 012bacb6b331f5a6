/** The runs table: one row per ingest run, its parameters and how it ended. */
import type { Kelvin, UtcIso } from '../core/units.js';
import { type Db, json } from './db.js';
import type { FailureKind } from '../core/errors.js';

/** What a run was computed with; stored as runs.parameters (jsonb). */
export interface RunParameters {
  /** Pixel-to-polygon rule, e.g. 'centre' (GDAL rasterize default) or 'fraction'. */
  coverageRule?: string;
  /** The rural reference: which districts row (role 'rural') and how it was defined. */
  ruralReference?: { districtId: string; description: string };
  /** Plausible LST range [min, max], Kelvin; values outside are counted implausible. */
  plausibleRangeKelvin?: [Kelvin, Kelvin] | null;
  /** Minimum valid fraction of a district's pixels for its statistics to be used. */
  minValidFraction?: number;
  /** Largest day–night separation for an ATI pair, hours. */
  pairingWindowHours?: number;
  /** Largest distance in time from a day scene to the albedo used, days. */
  albedoWindowDays?: number;
  [key: string]: unknown;
}

export interface RunInput {
  softwareVersion: string;
  mode: 'embedded' | 'distributed';
  parameters: RunParameters;
  /** The process that runs it (host name and pid), so a later command can tell a run whose process died. */
  ownerHost?: string;
  ownerPid?: number;
  /** Scene files the run was asked to process. */
  scenesAsked?: number;
}

/** Record the start of a run; returns its id. */
export async function startRun(db: Db, run: RunInput): Promise<number> {
  const rows = await db.query<{ id: number }>(
    `INSERT INTO runs (software_version, mode, parameters, owner_host, owner_pid, scenes_asked) VALUES ($1, $2, $3::text::jsonb, $4, $5, $6) RETURNING id`,
    [run.softwareVersion, run.mode, json(run.parameters), run.ownerHost ?? null, run.ownerPid ?? null, run.scenesAsked ?? null],
  );
  return rows[0].id;
}

/** How a run ended (see sql/migrations/004_run_states.sql for what each state means). */
export type RunEndState = 'succeeded' | 'incomplete' | 'failed' | 'interrupted' | 'abandoned';
export type RunState = 'running' | RunEndState;

/** Record the end of run `runId`: its state, the reason (when not 'succeeded') and the scenes left unfinished. */
export async function finishRun(
  db: Db,
  runId: number,
  outcome: { status: RunEndState; error?: string | null; errorKind?: FailureKind | null; scenesLeft?: number | null },
): Promise<void> {
  await db.query(`UPDATE runs SET finished_at = now(), status = $2, error = $3, error_kind = $5, scenes_left = $4 WHERE id = $1`, [
    runId,
    outcome.status,
    outcome.error ?? null,
    outcome.scenesLeft ?? null,
    outcome.error ? outcome.errorKind ?? null : null,
  ]);
}

export interface RunRow {
  id: number;
  startedAt: UtcIso;
  finishedAt: UtcIso | null;
  softwareVersion: string;
  mode: 'embedded' | 'distributed';
  parameters: RunParameters;
  status: RunState;
  /** Why the run did not succeed, the message alone (null when it did). */
  error: string | null;
  /** The kind of that failure, when it was one job's (input, service or bug); null otherwise. */
  errorKind: FailureKind | null;
}

/** One run by id, or null. */
export async function getRun(db: Db, runId: number): Promise<RunRow | null> {
  const rows = await db.query<RunRow>(
    `SELECT id, started_at AS "startedAt", finished_at AS "finishedAt", software_version AS "softwareVersion",
            mode, parameters, status, error, error_kind AS "errorKind"
     FROM runs WHERE id = $1`,
    [runId],
  );
  return rows[0] ?? null;
}
