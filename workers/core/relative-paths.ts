/**
 * Paths in outputs handed on (API answers, the report, export sidecars):
 * relative to the data root, or file names alone, never the server's absolute
 * paths. (The CLI's `status` is the operator's own view and keeps them.)
 *
 * The data root is `HEATLEDGER_DATA_ROOT` when set (resolved against the
 * server's working folder), else the deepest folder that holds every scene in
 * the store (the common root of the ingested inputs). A path outside the root
 * is shown by its file name alone. Messages stored with a failure name their
 * files by absolute path; those paths are rewritten the same way.
 */
import path from 'node:path';
import { readRuralDescription, writeRuralDescription } from './districts/rural-description.js';

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

/**
 * A file path as a reader elsewhere may see it: an absolute path relative to
 * `root` (its name alone outside it, or with no root); a relative path, whose
 * starting folder the reader cannot know, by its name alone.
 */
export function fileForReader(p: string, root: string | null): string {
  if (path.posix.isAbsolute(p)) return relativeToRoot(p, root);
  return path.posix.basename(path.posix.normalize(p.split('\\').join('/')));
}

/**
 * A run's stored parameters as they may be handed on: the files named in the
 * rural reference's description by `fileForReader`, absolute paths in any other
 * text by `relativeInText`; district ids as stored. The stored row is not changed.
 */
export function handedOnParameters(params: Record<string, unknown>, root: string | null): Record<string, unknown> {
  const text = (v: unknown): unknown => {
    if (typeof v === 'string') return relativeInText(v, root);
    if (Array.isArray(v)) return v.map(text);
    if (v !== null && typeof v === 'object') return Object.fromEntries(Object.entries(v).map(([k, x]) => [k, text(x)]));
    return v;
  };
  const out: Record<string, unknown> = {};
  for (const [k, v] of Object.entries(params)) {
    if (k === 'districtIds') out[k] = v;
    else if (k === 'ruralReference' && v !== null && typeof v === 'object' && typeof (v as Record<string, unknown>).description === 'string') {
      const r = v as Record<string, unknown>;
      out[k] = { ...(text({ ...r, description: '' }) as Record<string, unknown>), description: ruralDescriptionForReader(r.description as string, root) };
    } else out[k] = text(v);
  }
  return out;
}

/** A stored rural-reference description with its files named by `fileForReader`. */
export function ruralDescriptionForReader(description: string, root: string | null): string {
  const d = readRuralDescription(description);
  if (d.kind === 'polygons') return writeRuralDescription({ ...d, path: fileForReader(d.path, root) });
  if (d.kind === 'ring') return writeRuralDescription({ ...d, waterPath: d.waterPath === null ? null : fileForReader(d.waterPath, root) });
  return relativeInText(d.text, root);
}
