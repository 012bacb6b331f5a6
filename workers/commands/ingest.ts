import { InputError, isServiceError, ServiceError } from '../core/errors.js';
import { envNumber } from '../config.js';
import { runtimeConfig } from '../run/config.js';
import { parsePlausible } from './common.js';
import { startProgress } from './progress.js';
import { failureLine, roundNumber, snakeCaseKeys } from '../format.js';
import type { PipelineOptions, PipelineSummary } from '../run/pipeline.js';
import type { FlowProgress } from '../queue/types.js';

export interface IngestCommandOptions {
  districts: string;
  rural?: string;
  ruralInner: number;
  ruralOuter: number;
  water?: string;
  albedo?: string[];
  manifest?: string;
  qaMask?: number;
  emissivity?: number;
  emissivityWindow?: number;
  writeLst?: string;
  idField: string;
  nameField: string;
  coverage: 'centre' | 'fraction';
  plausible: string;
  minValidFraction: number;
  pairingWindow: number;
  albedoWindow: number;
  threads?: number;
  dataDir?: string;
  /** Seconds PostgreSQL or Redis may stay unreachable before the run gives up on them. */
  serviceRetryBudget?: number;
  /** Seconds without worker activity before a distributed run ends incomplete. */
  stallTimeout?: number;
  json?: boolean;
  progress: boolean;
}

/** Scenes done / failed / total from job counts: a scene is one job. */
export function sceneProgress(p: FlowProgress): { done: number; failed: number; total: number } {
  const scene = p.byName?.scene ?? { done: 0, failed: 0, total: 0 };
  return { done: scene.done, failed: scene.failed, total: scene.total };
}

/**
 * One line for a failed job: a file refused as bad input is named by its
 * problem alone (the message starts with the file: `path: problem`); a service
 * failure or a bug says which step it stopped.
 */
export function failedJobLine(f: PipelineSummary['failures'][number]): string {
  return f.kind === 'input' ? f.error : `${f.name} step: ${f.error}`;
}

/**
 * The run summary as `ingest --json` prints it: snake_case keys, each job
 * error's message with its kind beside it, seconds to 0.001 s.
 */
export function summaryJson(s: PipelineSummary): unknown {
  return snakeCaseKeys({
    ...s,
    seconds: roundNumber(s.seconds, { decimals: 3 }),
  });
}

export function summaryLines(s: PipelineSummary): string[] {
  const lines = [
    `run ${s.runId} (${s.mode}): ${s.scenes} scene file(s) in ${s.seconds.toFixed(1)} s` +
      (s.derive ? `; ${s.derive.rows} district-date rows derived (${s.derive.ok} complete)` : ''),
  ];
  for (const d of s.duplicates.slice(0, 20)) lines.push(`  same bytes as ${d.sameAs}, processed once: ${d.path}`);
  if (s.duplicates.length > 20) lines.push(`  ... and ${s.duplicates.length - 20} more duplicate file(s)`);
  if (s.unreadable.length) {
    lines.push(`${s.unreadable.length} path(s) could not be read and are recorded as failed; the rest were processed:`);
    for (const u of s.unreadable.slice(0, 20)) lines.push(`  ${failureLine(u.path, u.reason)}`);
    if (s.unreadable.length > 20) lines.push(`  ... and ${s.unreadable.length - 20} more (see \`heatledger status\`)`);
  }
  if (s.outcome.status !== 'succeeded') {
    lines.push(`run ${s.runId} ${s.outcome.status}: ${s.outcome.scenesLeft} of ${s.scenes} scene(s) left, ${s.outcome.refused} file(s) refused${s.outcome.derived ? '' : ', district table not derived'}`);
  }
  if (s.failures.length) {
    lines.push(`${s.failures.length} job(s) failed or did not finish:`);
    for (const f of s.failures.slice(0, 20)) lines.push(`  ${failedJobLine(f)}`);
    if (s.failures.length > 20) lines.push(`  ... and ${s.failures.length - 20} more (see \`heatledger status\`)`);
  }
  return lines;
}

/**
 * Scene progress of a run, for `ingest` and `demo`: a bar on a terminal, plain
 * lines otherwise (./progress.ts).
 */
export function sceneProgressDisplay(): { onProgress: NonNullable<PipelineOptions['onProgress']>; stop(): void } {
  const progress = startProgress({ label: 'scenes', total: 0 });
  return {
    onProgress: (p) => {
      const s = sceneProgress(p);
      const rate = (s.done + s.failed) / Math.max(p.elapsedSeconds, 1e-3);
      progress.update(s.done, `failed ${s.failed}, ${rate.toFixed(1)} scenes/s`, s.total);
    },
    stop: () => progress.stop(),
  };
}

export async function runIngestCommand(inputs: string[], given: IngestCommandOptions): Promise<void> {
  const opts: IngestCommandOptions = {
    ...given,
    serviceRetryBudget: given.serviceRetryBudget ?? envNumber('serviceRetryBudget'),
    stallTimeout: given.stallTimeout ?? envNumber('stallTimeout'),
  };
  if (!(opts.minValidFraction >= 0 && opts.minValidFraction <= 1)) throw new InputError(`--min-valid-fraction must be between 0 and 1, got ${opts.minValidFraction}`);
  if (!(opts.pairingWindow > 0)) throw new InputError(`--pairing-window must be positive hours, got ${opts.pairingWindow}`);
  if (!(opts.albedoWindow > 0)) throw new InputError(`--albedo-window must be positive days, got ${opts.albedoWindow}`);
  if (opts.serviceRetryBudget !== undefined && !(opts.serviceRetryBudget >= 0)) throw new InputError(`--service-retry-budget must be seconds >= 0, got ${opts.serviceRetryBudget}`);
  if (opts.stallTimeout !== undefined && !(opts.stallTimeout > 0)) throw new InputError(`--stall-timeout must be positive seconds, got ${opts.stallTimeout}`);
  const { runPipeline } = await import('../run/pipeline.js');
  const config = runtimeConfig({ dataDir: opts.dataDir });
  const display = opts.progress && !opts.json ? sceneProgressDisplay() : null;
  const options: PipelineOptions = {
    inputs,
    districtsPath: opts.districts,
    idField: opts.idField,
    nameField: opts.nameField,
    ruralPath: opts.rural,
    ruralInnerMetres: opts.ruralInner,
    ruralOuterMetres: opts.ruralOuter,
    waterPath: opts.water,
    albedoInputs: opts.albedo,
    manifestPath: opts.manifest,
    qaMaskBits: opts.qaMask,
    emissivity: opts.emissivity,
    emissivityWindowDays: opts.emissivityWindow,
    writeLstDir: opts.writeLst,
    coverage: opts.coverage,
    plausibleKelvin: parsePlausible(opts.plausible),
    derive: { minValidFraction: opts.minValidFraction, pairingWindowHours: opts.pairingWindow, albedoWindowDays: opts.albedoWindow },
    threads: opts.threads,
    dataDir: opts.dataDir,
    serviceRetryBudgetSeconds: opts.serviceRetryBudget,
    stallTimeoutSeconds: opts.stallTimeout,
    onNotice: (m) => process.stderr.write(`\nheatledger: ${m}\n`),
    onProgress: display?.onProgress,
  };
  let summary: PipelineSummary;
  try {
    summary = await runPipeline(options, config);
  } catch (e) {
    // Past the budget before the run could start (or end): say how to resume.
    if (isServiceError(e)) throw new ServiceError(`${e.message}. Nothing stored is lost; run the same command again once it is back`, { cause: e, service: e.service });
    throw e;
  } finally {
    display?.stop();
  }
  if (opts.json) {
    process.stdout.write(JSON.stringify(summaryJson(summary), null, 2) + '\n');
  } else {
    process.stdout.write(summaryLines(summary).join('\n') + '\n');
  }
  throwIfRunFailed(summary, opts.json ? 'json' : 'lines');
}

/**
 * Exit code 0 only for a run that did everything asked. A run with scenes
 * left or without its district table ends with a ServiceError saying which
 * service failed, for how long, and how to resume (exit 1); a run whose
 * derive step failed on a bug ends with that error (exit 1). A run that
 * stored every scene it could but refused some files as bad input (unreadable
 * paths, corrupt GeoTIFFs) ends with an InputError after the summary (exit 2);
 * the refused files stay in the store with their reasons for `heatledger status`.
 * `printed` says where the summary went (lines, or `--json`), so the message
 * says where the list of refused files is.
 */
export function throwIfRunFailed(summary: PipelineSummary, printed: 'lines' | 'json' = 'lines'): void {
  const o = summary.outcome;
  if (o.status === 'succeeded') return;
  if (o.status === 'failed') throw new Error(`run ${summary.runId} failed: ${o.error ?? 'the derive step did not complete'}`);
  if (o.scenesLeft === 0 && o.derived && o.refused > 0) {
    const unreadable = summary.unreadable.length;
    const failedJobs = summary.failures.filter((f) => f.kind === 'input').length;
    const what = [
      unreadable ? `${unreadable} path(s) could not be read` : '',
      failedJobs ? `${failedJobs} scene job(s) failed` : '',
    ].filter(Boolean).join(' and ');
    // where the list is: the lines printed above, or the keys of the JSON summary on standard output
    const keys = [unreadable ? '"unreadable"' : '', failedJobs ? '"failures"' : ''].filter(Boolean).join(' and ');
    const where = printed === 'json' ? `listed under ${keys} in the JSON summary on standard output` : 'listed above';
    throw new InputError(`run ${summary.runId}: ${what} (${where} and in \`heatledger status\`); the other scenes are stored`);
  }
  const left = [
    o.scenesLeft > 0 ? `${o.scenesLeft} of ${summary.scenes} scene(s) not finished` : '',
    o.derived ? '' : 'district table not derived',
  ].filter(Boolean).join(', ');
  const service = o.service === 'worker' ? 'stalled'
    : o.service ? `${o.service} failed${o.serviceFailingSeconds !== undefined ? ` for ${o.serviceFailingSeconds} s (longer than the service retry budget)` : ''}`
      : 'a job failed';
  const resume = o.service === 'worker' ? 'start `heatledger worker` and run the same command again' : 'run the same command again to finish the run';
  const reason = o.error ?? 'the run did not finish';
  throw new ServiceError(
    `run ${summary.runId} is incomplete (${left}): ${service}: ${reason}${/[.?!]$/.test(reason) ? '' : '.'} Nothing stored is lost; ${resume}`,
    { service: o.service },
  );
}
