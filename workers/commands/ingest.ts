import { InputError, ServiceError } from '../core/errors.js';
import { runtimeConfig } from '../config.js';
import { parsePlausible } from './common.js';
import type { PipelineOptions, PipelineSummary } from '../pipeline.js';
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
  idField: string;
  nameField: string;
  coverage: 'centre' | 'fraction';
  plausible: string;
  minValidFraction: number;
  pairingWindow: number;
  albedoWindow: number;
  threads?: number;
  dataDir?: string;
  json?: boolean;
  progress: boolean;
}

/**
 * Scenes done / failed / total from job counts: a scene is one ingest and one
 * zonal job; it failed when either did (a zonal job whose ingest failed
 * completes as a skip, so it is not counted as done).
 */
export function sceneProgress(p: FlowProgress): { done: number; failed: number; total: number } {
  const ingest = p.byName?.ingest ?? { done: 0, failed: 0, total: 0 };
  const zonal = p.byName?.zonal ?? { done: 0, failed: 0, total: 0 };
  const failed = ingest.failed + zonal.failed;
  return { done: Math.max(0, zonal.done - ingest.failed), failed, total: zonal.total };
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
    for (const u of s.unreadable.slice(0, 20)) lines.push(`  ${u.path}: ${u.reason}`);
    if (s.unreadable.length > 20) lines.push(`  ... and ${s.unreadable.length - 20} more (see \`heatledger status\`)`);
  }
  if (s.failures.length) {
    lines.push(`${s.failures.length} job(s) failed; the rest were processed:`);
    for (const f of s.failures.slice(0, 20)) lines.push(`  ${f.name}: ${f.error}`);
    if (s.failures.length > 20) lines.push(`  ... and ${s.failures.length - 20} more (see \`heatledger status\`)`);
  }
  return lines;
}

export async function runIngestCommand(inputs: string[], opts: IngestCommandOptions): Promise<void> {
  if (!(opts.minValidFraction >= 0 && opts.minValidFraction <= 1)) throw new InputError(`--min-valid-fraction must be between 0 and 1, got ${opts.minValidFraction}`);
  if (!(opts.pairingWindow > 0)) throw new InputError(`--pairing-window must be positive hours, got ${opts.pairingWindow}`);
  if (!(opts.albedoWindow > 0)) throw new InputError(`--albedo-window must be positive days, got ${opts.albedoWindow}`);
  const { runPipeline } = await import('../pipeline.js');
  const config = runtimeConfig({ dataDir: opts.dataDir });
  let bar: { update(v: number, p?: object): void; setTotal(t: number): void; stop(): void } | null = null;
  const showBar = opts.progress && !opts.json;
  if (showBar) {
    const { SingleBar, Presets } = await import('cli-progress');
    bar = new SingleBar(
      {
        format: 'scenes {bar} {value}/{total} done | failed {failed} | remaining {remaining} | {rate} scenes/s',
        noTTYOutput: !process.stderr.isTTY,
        notTTYSchedule: 5000,
        stream: process.stderr,
        hideCursor: true,
      },
      Presets.shades_classic,
    );
  }
  let started = false;
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
    coverage: opts.coverage,
    plausibleKelvin: parsePlausible(opts.plausible),
    derive: { minValidFraction: opts.minValidFraction, pairingWindowHours: opts.pairingWindow, albedoWindowDays: opts.albedoWindow },
    threads: opts.threads,
    dataDir: opts.dataDir,
    onNotice: (m) => process.stderr.write(`\nheatledger: ${m}\n`),
    onProgress: bar
      ? (p) => {
          const s = sceneProgress(p);
          const payload = { failed: s.failed, remaining: s.total - s.done - s.failed, rate: ((s.done + s.failed) / Math.max(p.elapsedSeconds, 1e-3)).toFixed(1) };
          if (!started) { (bar as unknown as { start(t: number, v: number, p: object): void }).start(s.total, s.done, payload); started = true; }
          bar!.update(s.done, payload);
        }
      : undefined,
  };
  let summary: PipelineSummary;
  try {
    summary = await runPipeline(options, config);
  } finally {
    if (bar && started) bar.stop();
  }
  if (opts.json) {
    process.stdout.write(JSON.stringify(summary, null, 2) + '\n');
  } else {
    process.stdout.write(summaryLines(summary).join('\n') + '\n');
  }
  throwIfRunFailed(summary);
}

/**
 * Exit 0 only when everything asked for was done. A run whose derive step
 * failed (after its retries) did not produce the district table: exit
 * non-zero with the reason. A run where some asked-for paths could not be
 * read, or some scene files failed (corrupt or unreadable GeoTIFFs), stored
 * every other scene and the table from them, but not everything asked for:
 * exit 2 (bad input) after the summary, or 1 when a scene failed for a
 * service. The failed paths stay in the store for `heatledger status`.
 */
export function throwIfRunFailed(summary: PipelineSummary): void {
  const root = summary.failures.find((f) => f.name === 'derive');
  if (root || summary.derive === null) {
    const reason = root?.error ?? 'the derive step did not complete';
    if (/^ServiceError: /.test(reason)) throw new ServiceError(`run ${summary.runId} failed: ${reason.replace(/^ServiceError: /, '')}`);
    throw new Error(`run ${summary.runId} failed: ${reason}`);
  }
  const unreadable = summary.unreadable.length ?? 0;
  const failedScenes = summary.failures.length;
  if (unreadable === 0 && failedScenes === 0) return;
  const what = [
    unreadable ? `${unreadable} path(s) could not be read` : '',
    failedScenes ? `${failedScenes} scene job(s) failed` : '',
  ].filter(Boolean).join(' and ');
  const message = `run ${summary.runId}: ${what} (listed above and in \`heatledger status\`); the other scenes are stored`;
  if (summary.failures.some((f) => /^ServiceError: /.test(f.error))) throw new ServiceError(message);
  throw new InputError(message);
}
