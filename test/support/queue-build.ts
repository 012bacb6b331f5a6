/**
 * The queue tests need compiled JavaScript (worker threads and worker
 * processes cannot load TypeScript): build dist/ when it is missing or older
 * than the sources.
 */
import { execFileSync } from 'node:child_process';
import { existsSync, statSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

export const repoRoot = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');

const SOURCES = [
  'workers/queue/bull.ts', 'workers/queue/execute.ts', 'workers/queue/in-process.ts', 'workers/queue/repo-proxy.ts',
  'workers/queue/settings.ts', 'workers/queue/retry.ts', 'workers/queue/thread-entry.ts', 'workers/queue/tree.ts', 'workers/queue/types.ts',
  'workers/core/errors.ts', 'test/support/queue-processors.ts',
];

function stale(): boolean {
  return SOURCES.some((s) => {
    const out = path.join(repoRoot, 'dist', s.replace(/\.ts$/, '.js'));
    return !existsSync(out) || statSync(out).mtimeMs < statSync(path.join(repoRoot, s)).mtimeMs;
  });
}

/** Compile with tsc if needed; returns the file URL of the compiled test processors. */
export function ensureQueueBuild(): string {
  if (stale()) {
    try {
      execFileSync('npx', ['tsc', '-p', 'tsconfig.json'], { cwd: repoRoot, stdio: 'pipe', timeout: 900_000 });
    } catch {
      // Type errors elsewhere in the tree still emit; the check below decides.
    }
    if (stale()) throw new Error('dist/ is missing or stale for the queue modules after `npx tsc -p tsconfig.json`');
  }
  return pathToFileURL(path.join(repoRoot, 'dist/test/support/queue-processors.js')).href;
}
