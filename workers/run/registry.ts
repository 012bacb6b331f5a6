/**
 * The processors registry: what runners (in-process threads, queue worker
 * processes) import to find the processors and make their repository.
 */
import { existsSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import type { Processor } from '../queue/types.js';
import { projectPath } from '../paths.js';
import { scene } from '../jobs/scene.js';
import { derive } from '../jobs/derive.js';

export const processors: Record<string, Processor> = {
  scene: scene as Processor,
  derive: derive as Processor,
};

/**
 * Jobs run on worker threads in embedded mode: scene (header reading, sun-position
 * maths, decoding and statistics); the main thread keeps only the embedded
 * database and the message passing.
 */
export const THREADED_JOBS = ['scene'];

/** A repository for a worker process, opened by the store side from the environment (loaded only when asked: threads never need it). */
export async function createRepo(env: Record<string, string | undefined>) {
  const { openWorkerRepo } = await import('../store/pipeline-repo.js');
  return openWorkerRepo(env);
}

/** URL of the compiled registry module (runners import compiled JavaScript, also when tests run the sources). */
export function registryModuleUrl(): URL {
  const here = fileURLToPath(import.meta.url);
  if (here.endsWith('.js')) return new URL(import.meta.url);
  const compiled = projectPath('dist', 'workers', 'run', 'registry.js');
  if (!existsSync(compiled)) throw new Error(`compiled processors not found at ${compiled}; run \`npm run build\``);
  return new URL(`file://${compiled}`);
}
