/**
 * Module resolve hook of the pipeline bench (registered by
 * pipeline-register.ts): imports of the compiled workers/jobs/repo.js get the
 * timing stand-in pipeline-timing-repo.js instead; the stand-in reaches the
 * real module under a `?bench-real` query, which this hook passes through.
 */
const REAL_SUFFIX = '/dist/workers/jobs/repo.js';
const STAND_IN = new URL('./pipeline-timing-repo.js', import.meta.url).href;

interface ResolveResult { url: string; format?: string | null; shortCircuit?: boolean }
type NextResolve = (specifier: string, context: unknown) => Promise<ResolveResult>;

/** Node's `resolve` hook (node:module register API). */
export async function resolve(specifier: string, context: unknown, nextResolve: NextResolve): Promise<ResolveResult> {
  const r = await nextResolve(specifier, context);
  if (r.url.endsWith(REAL_SUFFIX)) return { ...r, url: STAND_IN, format: 'module', shortCircuit: true };
  return r;
}
