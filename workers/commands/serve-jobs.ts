/**
 * Ingest jobs of `serve` (POST /api/ingest): each job runs `heatledger ingest`
 * as a child process, the same command an operator would type, so a job over
 * HTTP stores exactly what the CLI stores, in either mode. In embedded mode the
 * child takes the store over from the server for the run and the server reads
 * through it meanwhile ("one owner per embedded store"). Jobs run one at a time,
 * in the order they were asked for; they live in the server's memory (a restart
 * forgets them; the runs they made stay in the store). While a job runs, its
 * progress is the count of its scenes stored so far (read from the server's store);
 * when it ends, the run's own summary.
 */
import { spawn } from 'node:child_process';
import { randomUUID } from 'node:crypto';
import { statSync } from 'node:fs';
import path from 'node:path';
import type { IngestJobs, JobAnswer } from '../../api/ingest-routes.js';
import { relativeInText } from '../core/relative-paths.js';
import type { Store } from '../store/index.js';
import { sceneProgress } from '../store/scene-listing.js';

/** Jobs kept for GET /api/jobs/{id}; the oldest finished ones go beyond this. */
const MAX_JOBS = 1000;

interface IngestJson {
  run_id: number;
  scenes: number;
  unreadable: { path: string; reason: string }[];
  failures: { error: string }[];
  outcome: { status: string; scenes_left: number; refused: number; error: string | null };
}

export interface ServeJobsOptions {
  /** The data root (files and the district file lie under it). */
  dataRoot: string;
  dataDir?: string;
  /** The server's store: a running job's progress is read from it (scenes of its files stored so far). */
  store?: Store;
  /** The CLI script to run (default: the one running now). */
  cliPath?: string;
}

export function serveIngestJobs(o: ServeJobsOptions): IngestJobs {
  const jobs = new Map<string, JobAnswer>();
  /** The files and folders each job was given (real absolute paths). */
  const inputs = new Map<string, { files: string[]; folders: string[] }>();
  let chain: Promise<void> = Promise.resolve();
  const root = path.resolve(o.dataRoot);
  const rel = (text: string) => relativeInText(text, root);

  const run = (job: JobAnswer, files: string[], districtsPath: string) => new Promise<void>((resolve) => {
    job.state = 'running';
    const args = [o.cliPath ?? process.argv[1], 'ingest', '--json', '--no-progress', '--districts', districtsPath];
    if (o.dataDir) args.push('--data-dir', o.dataDir);
    args.push('--', ...files);
    const child = spawn(process.execPath, args, { stdio: ['ignore', 'pipe', 'pipe'], env: process.env });
    let out = '';
    let err = '';
    child.stdout.on('data', (d) => { out += d; });
    child.stderr.on('data', (d) => { err = (err + d).slice(-20_000); });
    child.on('error', (e) => { job.state = 'failed'; job.errors.push(rel(e.message)); resolve(); });
    child.on('close', (code) => {
      let summary: IngestJson | null = null;
      try { summary = JSON.parse(out) as IngestJson; } catch { summary = null; }
      if (summary) {
        const s = summary.outcome.status;
        job.state = s === 'succeeded' ? 'succeeded' : s === 'incomplete' ? 'incomplete' : 'failed';
        job.run_id = summary.run_id;
        job.scenes_asked = summary.scenes;
        job.scenes_failed = summary.outcome.refused;
        job.scenes_done = Math.max(0, summary.scenes - summary.outcome.scenes_left - summary.outcome.refused);
        job.errors.push(...summary.unreadable.map((u) => rel(`${u.path}: ${u.reason}`)), ...summary.failures.map((f) => rel(f.error)));
        if (summary.outcome.error && job.state !== 'succeeded') job.errors.push(rel(summary.outcome.error));
      } else {
        job.state = 'failed';
        const last = err.trim().split('\n').filter(Boolean).pop() ?? `ingest ended with exit code ${code}`;
        job.errors.push(rel(last.replace(/^heatledger: /, '')));
      }
      resolve();
    });
  });

  return {
    async start(files, districtsPath) {
      const id = randomUUID();
      const job: JobAnswer = { id, state: 'queued', scenes_asked: files.length, scenes_done: 0, scenes_failed: 0, run_id: null, errors: [] };
      jobs.set(id, job);
      const isFolder = (f: string) => { try { return statSync(f).isDirectory(); } catch { return false; } };
      inputs.set(id, { files: files.filter((f) => !isFolder(f)), folders: files.filter(isFolder) });
      if (jobs.size > MAX_JOBS) {
        for (const [k, j] of jobs) { if (j.state !== 'queued' && j.state !== 'running') { jobs.delete(k); inputs.delete(k); break; } }
      }
      chain = chain.then(() => run(job, files, districtsPath));
      return id;
    },
    async get(id) {
      const j = jobs.get(id);
      if (!j) return null;
      const answer = { ...j, errors: [...j.errors] };
      const given = inputs.get(id);
      if (j.state === 'running' && o.store && given) {
        // while the run runs: its scenes stored so far (a file of an earlier run counts once it is stored again)
        const p = await sceneProgress(o.store, given.files, given.folders).catch(() => null);
        if (p) { answer.scenes_done = p.processed; answer.scenes_failed = p.failed; }
      }
      return answer;
    },
  };
}
