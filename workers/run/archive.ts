/**
 * The scene archive a run is given: files and folders on the command line, an
 * optional manifest, and each file's content hash.
 */
import { lstat, readFile, readdir, readlink, stat } from 'node:fs/promises';
import { basename, extname, join, resolve } from 'node:path';
import { InputError } from '../core/errors.js';
import { hashFiles } from './hash-threads.js';
import { checkAtmosphere, type SceneAtmosphere } from '../core/thermal/rte.js';
import { thermalBandFromName } from '../core/thermal/metadata-file.js';
import type { RasterHeader } from '../core/raster/index.js';
import { SCENE_KINDS, type SceneKind } from '../store/scenes.js';

export { SCENE_KINDS, type SceneKind };

/** What a manifest may say about one file (all optional but the path). */
export interface ManifestEntry {
  path: string;
  kind?: SceneKind;
  /** UTC ISO 8601 acquisition time. */
  acquiredAt?: string;
  sensor?: string;
  /** QA/cloud raster on the same grid that masks this scene (with the run's QA bits). */
  qa?: string;
  /** Thermal scenes: the agency's plain-text metadata file (`KEY = value`) of the scene. */
  metadata?: string;
  /** Thermal scenes: which band the DN are of (default: from the file name, else B10). */
  band?: 'B10' | 'B11';
  /** Thermal scenes: rescaling and thermal constants (columns radiance_mult, radiance_add, k1, k2; all four or none). */
  constants?: { ml: number; al: number; k1: number; k2: number };
  /** Thermal scenes: a constant emissivity in (0.8, 1] (column `emissivity` holding a number). */
  emissivity?: number;
  /** Thermal scenes: an emissivity raster on the scene's grid (column `emissivity` holding a path). */
  emissivityRaster?: string;
  /** NDVI raster on the scene's grid (a day scene lends it to thermal night passes; a thermal scene may have its own). */
  ndvi?: string;
  /** Red and near-infrared surface reflectance rasters (instead of NDVI), on the scene's grid. */
  red?: string;
  nir?: string;
  /**
   * Thermal scenes: band-effective atmosphere (columns transmittance, upwelling, downwelling; all three
   * or none): numbers for the whole scene, or paths of rasters on the scene's grid.
   */
  atmosphere?: SceneAtmosphere;
}

/** A number from a manifest cell (CSV text or JSON number), or undefined for an empty cell. */
function manifestNumber(r: Record<string, unknown>, key: string, where: string): number | undefined {
  const v = r[key];
  if (v === undefined || v === '' || v === null) return undefined;
  const n = typeof v === 'number' ? v : typeof v === 'string' && /^\s*[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?\s*$/.test(v) ? Number(v) : NaN;
  if (!Number.isFinite(n)) throw new InputError(`${key} ${JSON.stringify(v)} is not a number`, where);
  return n;
}

/** The thermal-scene columns of one manifest record (see ManifestEntry). */
function thermalColumns(r: Record<string, unknown>, base: string, where: string): Partial<ManifestEntry> {
  const out: Partial<ManifestEntry> = {};
  const path = (key: string) => (typeof r[key] === 'string' && r[key] !== '' ? resolve(base, r[key] as string) : undefined);
  out.metadata = path('metadata');
  out.ndvi = path('ndvi');
  out.red = path('red');
  out.nir = path('nir');
  if ((out.red === undefined) !== (out.nir === undefined)) throw new InputError('gives only one of red and nir; NDVI needs both', where);
  const band = r.band === undefined || r.band === null || r.band === '' ? undefined : String(r.band).trim().toUpperCase().replace(/^(BAND_?|B)?/, 'B');
  if (band !== undefined && band !== 'B' && band !== 'B10' && band !== 'B11') throw new InputError(`band ${JSON.stringify(r.band)} is not 10 or 11`, where);
  if (band === 'B10' || band === 'B11') out.band = band;
  const c = { ml: manifestNumber(r, 'radiance_mult', where), al: manifestNumber(r, 'radiance_add', where), k1: manifestNumber(r, 'k1', where), k2: manifestNumber(r, 'k2', where) };
  const given = Object.values(c).filter((v) => v !== undefined).length;
  if (given > 0 && given < 4) throw new InputError('gives only some of radiance_mult, radiance_add, k1, k2; give all four or none', where);
  if (given === 4) {
    if (!(c.ml! > 0 && c.k1! > 0 && c.k2! > 0)) throw new InputError('radiance_mult, k1 and k2 must be greater than 0', where);
    out.constants = c as { ml: number; al: number; k1: number; k2: number };
  }
  const e = r.emissivity;
  if (typeof e === 'number' || (typeof e === 'string' && /^\s*[+-]?(\d+\.?\d*|\.\d+)\s*$/.test(e))) {
    const v = Number(e);
    if (!(v > 0.8 && v <= 1)) throw new InputError(`emissivity ${v} is outside (0.8, 1]`, where);
    out.emissivity = v;
  } else if (typeof e === 'string' && e !== '') out.emissivityRaster = resolve(base, e);
  const atmosphereKeys = ['transmittance', 'upwelling', 'downwelling'] as const;
  const isPath = (v: unknown) => typeof v === 'string' && v.trim() !== '' && !/^\s*[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?\s*$/.test(v);
  const paths = atmosphereKeys.filter((k) => isPath(r[k]));
  if (paths.length > 0) {
    if (paths.length < 3) throw new InputError('gives some of transmittance, upwelling, downwelling as rasters and some not; give all three as numbers or all three as rasters', where);
    out.atmosphere = { transmittanceRaster: resolve(base, r.transmittance as string), upwellingRaster: resolve(base, r.upwelling as string), downwellingRaster: resolve(base, r.downwelling as string) };
    return Object.fromEntries(Object.entries(out).filter(([, v]) => v !== undefined));
  }
  const a = { transmittance: manifestNumber(r, 'transmittance', where), upwellingRadiance: manifestNumber(r, 'upwelling', where), downwellingRadiance: manifestNumber(r, 'downwelling', where) };
  const atm = Object.values(a).filter((v) => v !== undefined).length;
  if (atm > 0 && atm < 3) throw new InputError('gives only some of transmittance, upwelling, downwelling; give all three or none', where);
  if (atm === 3) out.atmosphere = checkAtmosphere(a as { transmittance: number; upwellingRadiance: number; downwellingRadiance: number }, where);
  return Object.fromEntries(Object.entries(out).filter(([, v]) => v !== undefined));
}

const RASTER_EXTENSIONS = new Set(['.tif', '.tiff', '.gtif']);

/** A path the run was asked for (or found in a folder it was asked for) that could not be read. */
export interface UnreadablePath {
  path: string;
  /** One sentence: what is wrong (e.g. "symbolic link loop", "cannot list the folder (EACCES)"). */
  reason: string;
}

/** What the walk found: GeoTIFFs to process and paths that could not be read. */
export interface SceneListing {
  /** Absolute, sorted, unique (a file reached twice, through a link, counts once). */
  files: string[];
  /** Sorted by path. */
  unreadable: UnreadablePath[];
}

/** The stat fields the walk uses. */
export interface WalkStats {
  dev: number | bigint;
  ino: number | bigint;
  isFile(): boolean;
  isDirectory(): boolean;
  isSymbolicLink(): boolean;
  isFIFO(): boolean;
  isSocket(): boolean;
  isCharacterDevice(): boolean;
  isBlockDevice(): boolean;
}

/** The file-system calls the walk makes; tests pass their own to produce failures root is immune to. */
export interface WalkFs {
  stat(path: string): Promise<WalkStats>;
  lstat(path: string): Promise<WalkStats>;
  readdir(path: string): Promise<string[]>;
  readlink(path: string): Promise<string>;
}

const NODE_FS: WalkFs = { stat, lstat, readdir: (p) => readdir(p), readlink };

function errorCode(e: unknown): string {
  const err = e as NodeJS.ErrnoException;
  return err?.code ?? err?.message ?? String(e);
}

function kindOf(s: WalkStats): string {
  if (s.isFIFO()) return 'a named pipe (FIFO)';
  if (s.isSocket()) return 'a socket';
  if (s.isCharacterDevice() || s.isBlockDevice()) return 'a device';
  return 'not a regular file';
}

/**
 * Every GeoTIFF under the given files and folders (recursively), and every
 * path on the way that could not be read, each with its reason. A bad path
 * never stops the walk: symbolic-link loops, folders that contain themselves
 * (through a link or a bind mount: same device and inode as a folder above),
 * dangling links, folders that cannot be listed and GeoTIFF names that are not
 * regular files (a FIFO would block a reader) are reported and skipped.
 * A link to a file or folder is followed once: links are taken after every
 * real entry, so a target inside the walk keeps its real path and is not
 * counted twice; a target outside the walk is walked under the link's path.
 * Hidden entries (".name") are skipped.
 * @throws InputError when a path given on the command line does not exist (a typo stops the run before it starts)
 */
export async function listSceneFiles(inputs: readonly string[], fs: WalkFs = NODE_FS): Promise<SceneListing> {
  const files = new Map<string, string>(); // dev:ino -> path
  const unreadable = new Map<string, string>(); // path -> reason
  const walkedFolders = new Set<string>(); // dev:ino
  const links: { path: string; ancestors: ReadonlySet<string> }[] = [];
  const idOf = (s: WalkStats) => `${s.dev}:${s.ino}`;
  const bad = (path: string, reason: string) => { if (!unreadable.has(path)) unreadable.set(path, reason); };

  const addFile = (path: string, s: WalkStats) => {
    if (!s.isFile()) return bad(path, `${kindOf(s)}, not a GeoTIFF file`);
    if (!files.has(idOf(s))) files.set(idOf(s), path);
  };

  const walkFolder = async (path: string, s: WalkStats, ancestors: ReadonlySet<string>): Promise<void> => {
    const id = idOf(s);
    if (ancestors.has(id)) return bad(path, 'folder loop: this folder is one of the folders that contain it (through a link or a mount); not followed');
    if (walkedFolders.has(id)) return; // already walked under another path
    walkedFolders.add(id);
    let entries: string[];
    try {
      entries = await fs.readdir(path);
    } catch (e) {
      return bad(path, `cannot list the folder (${errorCode(e)})`);
    }
    const inside = new Set([...ancestors, id]);
    for (const e of [...entries].sort()) {
      if (e.startsWith('.')) continue;
      const child = join(path, e);
      let cs: WalkStats;
      try {
        cs = await fs.lstat(child);
      } catch (err) {
        bad(child, `cannot read the entry (${errorCode(err)})`);
        continue;
      }
      if (cs.isSymbolicLink()) links.push({ path: child, ancestors: inside });
      else if (cs.isDirectory()) await walkFolder(child, cs, inside);
      else if (RASTER_EXTENSIONS.has(extname(e).toLowerCase())) addFile(child, cs);
    }
  };

  const followLink = async (path: string, ancestors: ReadonlySet<string>): Promise<void> => {
    let target: WalkStats;
    try {
      target = await fs.stat(path);
    } catch (e) {
      const code = errorCode(e);
      if (code === 'ELOOP') return bad(path, 'symbolic link loop (the link resolves to itself)');
      if (code === 'ENOENT' || code === 'ENOTDIR') {
        const to = await fs.readlink(path).catch(() => '?');
        return bad(path, `dangling symbolic link (its target ${to} does not exist)`);
      }
      return bad(path, `cannot follow the symbolic link (${code})`);
    }
    if (target.isDirectory()) await walkFolder(path, target, ancestors);
    else if (RASTER_EXTENSIONS.has(extname(path).toLowerCase())) addFile(path, target);
  };

  for (const input of inputs) {
    const p = resolve(input);
    let s: WalkStats;
    try {
      s = await fs.stat(p);
    } catch (e) {
      const code = errorCode(e);
      if (await fs.lstat(p).then((l) => l.isSymbolicLink(), () => false)) await followLink(p, new Set());
      else if (code === 'ENOENT' || code === 'ENOTDIR') throw new InputError('no such file or folder', input);
      else bad(p, `cannot read (${code})`);
      continue;
    }
    if (s.isDirectory()) await walkFolder(p, s, new Set());
    else addFile(p, s); // a file named on the command line is taken whatever its extension
  }
  // links last, so that real paths win; following one may queue more
  for (let i = 0; i < links.length; i++) await followLink(links[i].path, links[i].ancestors);
  return {
    files: [...files.values()].sort(),
    unreadable: [...unreadable].map(([path, reason]) => ({ path, reason })).sort((a, b) => (a.path < b.path ? -1 : a.path > b.path ? 1 : 0)),
  };
}

export interface HashedScene {
  path: string;
  contentHash: string;
}

/**
 * Hash every file; a file that cannot be read is reported, not thrown, and a
 * file whose bytes equal an earlier one's (in the order given) is the same
 * scene (listed as a duplicate). Files are hashed off this thread when there
 * are many (see hash-threads.ts).
 */
export async function hashSceneFiles(paths: readonly string[]): Promise<{
  scenes: HashedScene[];
  duplicates: { path: string; sameAs: string }[];
  unreadable: UnreadablePath[];
}> {
  const hashes = await hashFiles(paths);

  const scenes: HashedScene[] = [];
  const duplicates: { path: string; sameAs: string }[] = [];
  const unreadable: UnreadablePath[] = [];
  const byHash = new Map<string, string>();
  paths.forEach((path, i) => {
    const r = hashes[i];
    if (!r.ok) {
      unreadable.push({ path, reason: r.message.startsWith(`${path}: `) ? r.message.slice(path.length + 2) : r.message });
      return;
    }
    const first = byHash.get(r.hash);
    if (first !== undefined) {
      duplicates.push({ path, sameAs: first });
      return;
    }
    byHash.set(r.hash, path);
    scenes.push({ path, contentHash: r.hash });
  });
  return { scenes, duplicates, unreadable };
}

/**
 * The scenes of a run: LST inputs and albedo inputs walked, every file hashed.
 * Paths that could not be read are returned with their reasons, not thrown.
 * @throws InputError when a command-line path does not exist, or when nothing readable was found
 */
export async function listScenes(inputs: readonly string[], albedoInputs: readonly string[], options: {
  fs?: WalkFs;
  /** Called once the walk has found files and before they are hashed (the slow part), e.g. to start other work. */
  beforeHashing?: () => void;
} = {}): Promise<{
  files: (HashedScene & { kind?: SceneKind; manifest?: ManifestEntry })[];
  duplicates: { path: string; sameAs: string }[];
  unreadable: UnreadablePath[];
}> {
  const fs = options.fs ?? NODE_FS;
  const lst = await listSceneFiles(inputs, fs);
  const albedo = albedoInputs.length ? await listSceneFiles(albedoInputs, fs) : { files: [], unreadable: [] };
  const albedoSet = new Set(albedo.files);
  if (lst.files.length + albedo.files.length > 0) options.beforeHashing?.();
  const hashed = await hashSceneFiles([...new Set([...lst.files, ...albedo.files])]);
  const unreadable = [...new Map([...lst.unreadable, ...albedo.unreadable, ...hashed.unreadable].map((u) => [u.path, u])).values()]
    .sort((a, b) => (a.path < b.path ? -1 : a.path > b.path ? 1 : 0));
  if (hashed.scenes.length === 0) {
    const where = [...inputs, ...albedoInputs].join(', ');
    if (unreadable.length === 0) throw new InputError(`no GeoTIFF (.tif/.tiff) found in ${where}`);
    const shown = unreadable.slice(0, 5).map((u) => `${u.path}: ${u.reason}`).join('; ');
    throw new InputError(`no readable GeoTIFF in ${where}; ${unreadable.length} path(s) could not be read: ${shown}${unreadable.length > 5 ? '; ...' : ''}`);
  }
  return {
    files: hashed.scenes.map((f) => (albedoSet.has(f.path) ? { ...f, kind: 'albedo' as const } : { ...f })),
    duplicates: hashed.duplicates,
    unreadable,
  };
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
 * `acquired_at`, `sensor`, `qa`; for thermal scenes `metadata`, `band`,
 * `radiance_mult`, `radiance_add`, `k1`, `k2`, `emissivity` (a number or a raster),
 * `transmittance`, `upwelling`, `downwelling` (W m-2 sr-1 um-1); `ndvi` or `red` and
 * `nir` on any scene) or JSON (an array of objects with the same keys).
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
    Object.assign(entry, thermalColumns(r, base, where));
    if (out.has(abs)) throw new InputError(`the manifest lists ${p} twice`, where);
    out.set(abs, entry);
  });
  return out;
}

/**
 * Kind of a scene: the manifest, then the caller's default, then a KIND metadata item,
 * then a manifest `metadata` file (thermal), then the file name (a Level-1 band name
 * `..._B10.TIF` / `..._B11.TIF` is thermal); else 'lst'.
 */
export function sceneKind(header: RasterHeader, manifest: ManifestEntry | undefined, defaultKind: SceneKind | undefined): SceneKind {
  if (manifest?.kind) return manifest.kind;
  if (defaultKind) return defaultKind;
  const meta = (header.metadata.KIND ?? header.metadata.kind ?? '').toLowerCase();
  if ((SCENE_KINDS as readonly string[]).includes(meta)) return meta as SceneKind;
  if (manifest?.metadata || thermalBandFromName(header.path) !== null) return 'thermal';
  const name = basename(header.path).toLowerCase();
  if (/albedo/.test(name)) return 'albedo';
  if (/(^|[_.-])qa([_.-]|$)/.test(name)) return 'qa';
  return 'lst';
}
