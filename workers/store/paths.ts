/** Where the `sql/` folder is: in the project root (found once, by workers/paths.ts). */
import fs from 'node:fs';
import path from 'node:path';
import { projectPath } from '../paths.js';

/**
 * Absolute path of the project's `sql/` folder. Throws Error (an installation
 * fault, not user input) when it has no migrations.
 */
export function sqlDir(): string {
  const dir = projectPath('sql');
  if (!fs.existsSync(path.join(dir, 'migrations'))) throw new Error(`heatledger installation is incomplete: no sql/migrations folder in ${path.dirname(dir)}`);
  return dir;
}
