/**
 * Scene paths as the API shows them: relative to the data root, never the
 * server's absolute paths.
 *
 * The data root is `HEATLEDGER_DATA_ROOT` when set (resolved against the
 * server's working folder), else the deepest folder that holds every scene in
 * the store (the common root of the ingested inputs). A path outside the root
 * is shown by its file name alone. Messages stored with a failure name their
 * files by absolute path; those paths are rewritten the same way.
 */
import path from 'node:path';

/** The deepest folder holding all `paths` (absolute POSIX paths); null when there are none. */
export function commonDirectory(paths: readonly string[]): string | null {
  const dirs = paths.filter((p) => path.posix.isAbsolute(p)).map((p) => path.posix.dirname(path.posix.normalize(p)).split('/'));
  if (dirs.length === 0) return null;
  let common = dirs[0];
  for (const d of dirs.slice(1)) {
    let i = 0;
    while (i < common.length && i < d.length && common[i] === d[i]) i++;
    common = common.slice(0, i);
  }
  return common.join('/') || '/';
}

/** `p` relative to `root` (POSIX separators); its file name alone when it lies outside the root. */
export function relativeToRoot(p: string, root: string | null): string {
  if (!path.posix.isAbsolute(p)) return p;
  const normal = path.posix.normalize(p);
  if (root !== null) {
    const rel = path.posix.relative(root, normal);
    if (rel !== '' && !rel.startsWith('../') && rel !== '..' && !path.posix.isAbsolute(rel)) return rel;
  }
  return path.posix.basename(normal);
}

// An absolute path inside a message: starts after the start, a blank, a quote or a bracket.
const ABSOLUTE_IN_TEXT = /(^|[\s"'(\[])(\/[^\s"'()\[\]:,;]*)/g;

/** A stored message with every absolute path in it made relative to `root` (or cut to its file name). */
export function relativeInText(text: string, root: string | null): string {
  return text.replace(ABSOLUTE_IN_TEXT, (_m, before: string, p: string) => `${before}${relativeToRoot(p, root)}`);
}
