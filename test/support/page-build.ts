/**
 * The built web page (dist/web/) for tests that serve it: built with Vite
 * from api/web/ when it is missing or older than a source file there, under
 * the same build lock as the compiled tree.
 */
import { execFileSync } from 'node:child_process';
import { existsSync, statSync } from 'node:fs';
import path from 'node:path';
import { newestMtimeMs, repoRoot, withBuildLock } from './pipeline-harness.js';

const WEB = path.join(repoRoot, 'api', 'web');
const INDEX = path.join(repoRoot, 'dist', 'web', 'index.html');

export async function ensurePageBuild(): Promise<void> {
  await withBuildLock('page-test-build', () => {
    if (!existsSync(INDEX) || newestMtimeMs(WEB) > statSync(INDEX).mtimeMs) {
      execFileSync('npx', ['vite', 'build', '--config', 'api/web/vite.config.ts'], { cwd: repoRoot, stdio: 'pipe', timeout: 840_000 });
    }
    if (!existsSync(INDEX)) throw new Error('dist/web/index.html is missing after `npx vite build --config api/web/vite.config.ts`');
  });
}
