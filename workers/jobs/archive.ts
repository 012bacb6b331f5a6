/**
 * The scene archive a run is given: files and folders on the command line, an
 * optional manifest, and each file's content hash.
 */
import { createHash } from 'node:crypto';
import { createReadStream } from 'node:fs';
import { readFile, readdir, stat } from 'node:fs/promises';
import { extname, join, resolve } from 'node:path';
import { InputError } from '../core/errors.js';

export type SceneKind = 'lst' | 'albedo' | 'qa';
export const SCENE_KINDS: readonly SceneKind[] = ['lst', 'albedo', 'qa'];

/** What a manifest may say about one file (all optional but the path). */
export interface ManifestEntry {
  path: string;
  kind?: SceneKind;
  /** UTC ISO 8601 acquisition time. */
  acquiredAt?: string;
  sensor?: string;
  /** QA/cloud raster on the same grid that masks this scene (with the run's QA bits). */
  qa?: string;
}

const RASTER_EXTENSIONS = new Set(['.tif', '.tiff', '.gtif']);

/** Every GeoTIFF under the given files and folders (recursively), absolute, sorted, unique. */
export async function listSceneFiles(inputs: readonly string[]): Promise<string[]> {
  const out = new Set<string>();
  const walk = async (p: string): Promise<void> => {
    let s;
    try {
      s = await stat(p);
    } catch {
      throw new InputError('no such file or folder', p);
    }
    if (s.isDirectory()) {
      for (const e of (await readdir(p)).sort()) {
        if (e.startsWith('.')) continue;
        const child = join(p, e);
        const cs = await stat(child);
        if (cs.isDirectory() || RASTER_EXTENSIONS.has(extname(e).toLowerCase())) await walk(child);
      }
    } else {
      out.add(resolve(p));
    }
  };
  for (const i of inputs) await walk(i);
  return [...out].sort();
}

/** SHA-256 of a file's bytes, streamed (hex). */
export function hashFile(path: string): Promise<string> {
  return new Promise((resolvePromise, reject) => {
    const h = createHash('sha256');
    createReadStream(path, { highWaterMark: 1 << 20 })
      .on('data', (c) => h.update(c))
      .on('error', (e) => reject(new InputError(`cannot read (${(e as NodeJS.ErrnoException).code ?? e.message})`, path)))
      .on('end', () => resolvePromise(h.digest('hex')));
  });
}

/** SHA-256 (hex) of a JSON-serialisable value with sorted keys: job ids and parameter fingerprints. */
export function fingerprint(...parts: unknown[]): string {
  const canon = (v: unknown): unknown =>
    v && typeof v === 'object' && !Array.isArray(v)
      ? Object.fromEntries(Object.keys(v as object).sort().map((k) => [k, canon((v as Record<string, unknown>)[k])]))
      : Array.isArray(v) ? v.map(canon) : v;
  return createHash('sha256').update(JSON.stringify(parts.map(canon))).digest('hex');
}

/** Normalise a time string to UTC ISO 8601 'YYYY-MM-DDTHH:MM:SSZ'; one without offset is read as UTC. */
export function normaliseUtc(text: string, source: string): string {
  const t = text.trim();
  const m = /^(\d{4})-(\d{2})-(\d{2})[T ](\d{2}):(\d{2})(?::(\d{2})(\.\d+)?)?(Z|[+-]\d{2}:?\d{2})?$/i.exec(t);
  if (!m) throw new InputError(`acquisition time "${text}" is not ISO 8601 (e.g. 2024-07-14T13:30:00Z)`, source);
  const iso = `${m[1]}-${m[2]}-${m[3]}T${m[4]}:${m[5]}:${m[6] ?? '00'}${m[7] ?? ''}${m[8] ? m[8].replace(/^([+-]\d{2})(\d{2})$/, '$1:$2') : 'Z'}`;
  const ms = Date.parse(iso);
  if (Number.isNaN(ms)) throw new InputError(`acquisition time "${text}" is not a valid date`, source);
  return new Date(ms).toISOString().replace('.000Z', 'Z');
}

function parseCsvLine(line: string): string[] {
  const out: string[] = [];
  let cur = '';
  let q = false;
  for (let i = 0; i < line.length; i++) {
    const ch = line[i];
    if (q) {
      if (ch === '"' && line[i + 1] === '"') { cur += '"'; i++; }
      else if (ch === '"') q = false;
      else cur += ch;
    } else if (ch === '"') q = true;
    else if (ch === ',') { out.push(cur); cur = ''; }
    else cur += ch;
  }
  out.push(cur);
  return out.map((s) => s.trim());
}

/**
 * Read a manifest: CSV with a header (columns `path`, and any of `kind`,
 * `acquired_at`, `sensor`, `qa`) or JSON (an array of objects with the same keys).
 * A manifest's kind and time take precedence over the file's own metadata.
 * Relative paths are relative to the manifest's folder.
 */
export async function readManifest(path: string): Promise<Map<string, ManifestEntry>> {
  let text: string;
  try {
    text = await readFile(path, 'utf8');
  } catch (e) {
    throw new InputError(`cannot read the manifest (${(e as NodeJS.ErrnoException).code ?? (e as Error).message})`, path);
  }
  let records: Record<string, unknown>[];
  if (/\.json$/i.test(path) || /^\s*[[{]/.test(text)) {
    let doc: unknown;
    try { doc = JSON.parse(text); } catch { throw new InputError('manifest is not valid JSON', path); }
    if (!Array.isArray(doc) || !doc.every((r) => r && typeof r === 'object')) throw new InputError('a JSON manifest must be an array of objects with "path"', path);
    records = doc as Record<string, unknown>[];
  } else {
    const lines = text.split(/\r?\n/).filter((l) => l.trim() !== '' && !l.startsWith('#'));
    if (lines.length === 0) throw new InputError('manifest is empty', path);
    const head = parseCsvLine(lines[0]).map((h) => h.toLowerCase());
    if (!head.includes('path')) throw new InputError('a CSV manifest needs a header line with a "path" column', path);
    records = lines.slice(1).map((l) => Object.fromEntries(parseCsvLine(l).map((v, i) => [head[i] ?? `col${i}`, v])));
  }
  const base = resolve(path, '..');
  const out = new Map<string, ManifestEntry>();
  records.forEach((r, i) => {
    const where = `${path} (entry ${i + 1})`;
    const p = r.path;
    if (typeof p !== 'string' || p === '') throw new InputError('entry has no "path"', where);
    const abs = resolve(base, p);
    const entry: ManifestEntry = { path: abs };
    const kind = r.kind === '' ? undefined : r.kind;
    if (kind !== undefined) {
      if (!SCENE_KINDS.includes(kind as SceneKind)) throw new InputError(`kind "${String(kind)}" is not one of ${SCENE_KINDS.join(', ')}`, where);
      entry.kind = kind as SceneKind;
    }
    const t = r.acquired_at ?? r.acquiredAt;
    if (t !== undefined && t !== '') entry.acquiredAt = normaliseUtc(String(t), where);
    if (typeof r.sensor === 'string' && r.sensor !== '') entry.sensor = r.sensor;
    if (typeof r.qa === 'string' && r.qa !== '') entry.qa = resolve(base, r.qa);
    if (out.has(abs)) throw new InputError(`the manifest lists ${p} twice`, where);
    out.set(abs, entry);
  });
  return out;
}
