/**
 * Files named in a write request must lie under the data root
 * (HEATLEDGER_DATA_ROOT): relative names are taken from the root, absolute
 * ones must point inside it, and the real path (symbolic links resolved) must
 * stay inside the real root. `..` that climbs out, absolute paths elsewhere and
 * links out of the root are refused with an InputError that names the file
 * as the client gave it, never the server's own paths.
 */
import { realpath, stat } from 'node:fs/promises';
import path from 'node:path';
import { InputError } from '../workers/core/errors.js';
import { quoteGiven } from '../workers/core/year.js';

/** Whether `p` is `root` or inside it (both absolute and normalised). */
function inside(root: string, p: string): boolean {
  const rel = path.relative(root, p);
  return rel === '' || (!rel.startsWith('..') && !path.isAbsolute(rel));
}

/** The real absolute path of each file, in order; the first file that breaks a rule is refused. */
export async function filesUnderRoot(root: string, files: readonly string[], field = 'files'): Promise<string[]> {
  let realRoot: string;
  try {
    realRoot = await realpath(path.resolve(root));
  } catch {
    throw new InputError('the data root of this server cannot be read; ask its operator to check HEATLEDGER_DATA_ROOT');
  }
  const out: string[] = [];
  for (const [i, f] of files.entries()) {
    const name = `body field ${field === 'files' ? `files[${i}]` : field} ${quoteGiven(f, 80)}`;
    if (f.includes('\0')) throw new InputError(`${name} holds a NUL character`);
    const lexical = path.resolve(realRoot, f);
    if (!inside(realRoot, lexical)) throw new InputError(`${name} lies outside the data root; give a path under it (relative to it, or absolute inside it)`);
    let real: string;
    try {
      real = await realpath(lexical);
    } catch {
      throw new InputError(`${name} does not exist under the data root`);
    }
    if (!inside(realRoot, real)) throw new InputError(`${name} leads out of the data root through a symbolic link`);
    const s = await stat(real);
    if (!s.isFile() && !s.isDirectory()) throw new InputError(`${name} is neither a file nor a folder`);
    out.push(real);
  }
  return out;
}
