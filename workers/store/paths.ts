/**
 * Where the `sql/` folder is, found from this module's own location so that it
 * works from the TypeScript sources (workers/store/) and from the compiled
 * build (dist/workers/store/) alike.
 */
import fs from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';

let cached: string | undefined;

/**
 * Absolute path of the project's `sql/` folder: the nearest ancestor of this
 * module holding both package.json and sql/migrations. Throws Error (an
 * installation fault, not user input) when there is none.
 */
export function sqlDir(): string {
  if (cached) return cached;
  const start = path.dirname(fileURLToPath(import.meta.url));
  for (let dir = start; ; dir = path.dirname(dir)) {
    if (fs.existsSync(path.join(dir, 'package.json')) && fs.existsSync(path.join(dir, 'sql', 'migrations'))) {
      cached = path.join(dir, 'sql');
      return cached;
    }
    if (path.dirname(dir) === dir) break;
  }
  throw new Error(`heatledger installation is incomplete: no sql/migrations folder above ${start}`);
}
