/**
 * Where the project's own files are, from TypeScript sources (workers/) and
 * from the compiled build (dist/workers/) alike: the nearest folder above this
 * module that holds heatledger's package.json.
 */
import { existsSync, readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

let root: string | undefined;

export function projectRoot(): string {
  if (root) return root;
  let dir = dirname(fileURLToPath(import.meta.url));
  for (;;) {
    const pkg = join(dir, 'package.json');
    if (existsSync(pkg)) {
      try {
        if (JSON.parse(readFileSync(pkg, 'utf8')).name === 'heatledger') return (root = dir);
      } catch {
        /* not ours; keep walking */
      }
    }
    const up = dirname(dir);
    if (up === dir) throw new Error('cannot find heatledger package.json above ' + fileURLToPath(import.meta.url));
    dir = up;
  }
}

/** Absolute path of a file in the project, e.g. projectPath('sql', 'migrations'). */
export function projectPath(...parts: string[]): string {
  return join(projectRoot(), ...parts);
}
