/**
 * The built web page (dist/web/) for tests that serve it: built with Vite
 * from api/web/ when it is missing or older than a source file there. A lock
 * folder keeps test files that start together from building over each other.
 */
import { execFileSync } from 'node:child_process';
import { existsSync, mkdirSync, readdirSync, rmdirSync, statSync } from 'node:fs';
import path from 'node:path';
import { repoRoot } from './pipeline-harness.js';

const WEB = path.join(repoRoot, 'api', 'web');
const INDEX = path.join(repoRoot, 'dist', 'web', 'index.html');

function newestMs(dir: string): number {
  let newest = 0;
  for (const e of readdirSync(dir, { withFileTypes: true })) {
    const p = path.join(dir, e.name);
    newest = Math.max(newest, e.isDirectory() ? newestMs(p) : statSync(p).mtimeMs);
  }
  return newest;
}

export async function ensurePageBuild(): Promise<void> {
  const lock = path.join(repoRoot, 'dist', '.page-test-build.lock');
  mkdirSync(path.dirname(lock), { recursive: true });
  const deadline = Date.now() + 900_000;
  for (;;) {
    try {
      mkdirSync(lock);
      break;
    } catch {
      try { if (Date.now() - statSync(lock).mtimeMs > 900_000) rmdirSync(lock); } catch { /* gone already */ }
      if (Date.now() > deadline) throw new Error(`waited 15 minutes for ${lock}`);
      await new Promise((r) => setTimeout(r, 250));
    }
  }
  try {
    if (!existsSync(INDEX) || newestMs(WEB) > statSync(INDEX).mtimeMs) {
      execFileSync('npx', ['vite', 'build', '--config', 'api/web/vite.config.ts'], { cwd: repoRoot, stdio: 'pipe', timeout: 840_000 });
    }
    if (!existsSync(INDEX)) throw new Error('dist/web/index.html is missing after `npx vite build --config api/web/vite.config.ts`');
  } finally {
    rmdirSync(lock);
  }
}
