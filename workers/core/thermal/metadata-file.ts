/**
 * The plain-text scene metadata file delivered beside a Level-1 scene: nested
 * `GROUP = NAME` ... `END_GROUP = NAME` blocks of `KEY = value` lines, closed
 * by `END` (the MTL layout of the Landsat Level-1 product; field names such as
 * SPACECRAFT_ID, RADIANCE_MULT_BAND_10 and K1_CONSTANT_BAND_10 are those of the
 * published format). Pure: the caller reads the file and passes its text.
 */
import { InputError } from '../errors.js';
import type { TirsBand, TirsBandConstants } from './sensors.js';

/** One parsed metadata file: every field with the group path it was found under. */
export interface SceneMetadataFile {
  /** File name (for messages). */
  source: string;
  /** Fields by name; a name found in several groups keeps every occurrence, in file order. */
  fields: Map<string, { group: string; value: string }[]>;
}

const LINE = /^([A-Za-z0-9_]+)\s*=\s*(.*)$/;

/**
 * Parse the text of a metadata file.
 * @param text whole file, any line ending
 * @param source file name, named by every error
 * @throws InputError for a line that is not `KEY = value`, an END_GROUP that closes another group,
 *   or a group left open at the end
 * @example
 * parseSceneMetadata('GROUP = A\n  K1_CONSTANT_BAND_10 = 774.8853\nEND_GROUP = A\nEND\n', 'x_MTL.txt')
 *   .fields.get('K1_CONSTANT_BAND_10') // [{ group: 'A', value: '774.8853' }]
 */
export function parseSceneMetadata(text: string, source: string): SceneMetadataFile {
  const fields = new Map<string, { group: string; value: string }[]>();
  const groups: string[] = [];
  const lines = text.split(/\r\n|\r|\n/);
  let ended = false;
  for (let i = 0; i < lines.length; i++) {
    const line = lines[i].trim();
    if (line === '') continue;
    if (ended) throw new InputError(`line ${i + 1} follows END; a metadata file ends at END`, source);
    if (line === 'END') { ended = true; continue; }
    const m = LINE.exec(line);
    if (!m) throw new InputError(`line ${i + 1} is not "KEY = value": ${JSON.stringify(line.slice(0, 60))}`, source);
    const key = m[1];
    let value = m[2].trim();
    if (value.length >= 2 && value.startsWith('"') && value.endsWith('"')) value = value.slice(1, -1);
    if (key === 'GROUP') { groups.push(value); continue; }
    if (key === 'END_GROUP') {
      const open = groups.pop();
      if (open !== value) throw new InputError(`line ${i + 1} closes group ${value} but ${open ?? 'no group'} is open`, source);
      continue;
    }
    const list = fields.get(key) ?? [];
    list.push({ group: groups.join('/'), value });
    fields.set(key, list);
  }
  if (groups.length > 0) throw new InputError(`group ${groups[groups.length - 1]} is never closed (END_GROUP missing)`, source);
  if (fields.size === 0) throw new InputError('holds no KEY = value fields', source);
  return { source, fields };
}

/** The value of a field, preferring one found in a group whose name contains `preferGroup`; undefined when absent. */
export function metadataField(file: SceneMetadataFile, key: string, preferGroup?: string): string | undefined {
  const list = file.fields.get(key);
  if (!list || list.length === 0) return undefined;
  if (preferGroup) {
    const hit = list.find((f) => f.group.includes(preferGroup));
    if (hit) return hit.value;
  }
  return list[0].value;
}

/** Band number of a TIRS band name ('B10' -> 10). */
function bandNumber(band: TirsBand): number {
  return band === 'B10' ? 10 : 11;
}

/**
 * The radiometric rescaling and thermal constants of one band from a metadata
 * file: RADIANCE_MULT_BAND_n and RADIANCE_ADD_BAND_n (group ...RADIOMETRIC_RESCALING,
 * preferring LEVEL1_ over other product levels), K1_CONSTANT_BAND_n and K2_CONSTANT_BAND_n
 * (group ...THERMAL_CONSTANTS).
 * @returns the four constants, or null when the file holds none of them
 * @throws InputError naming the file when only some are present or one is not a positive number
 *   (an additive term may be any finite number)
 */
export function thermalConstantsFromMetadata(file: SceneMetadataFile, band: TirsBand): TirsBandConstants | null {
  const n = bandNumber(band);
  const keys = {
    ml: `RADIANCE_MULT_BAND_${n}`,
    al: `RADIANCE_ADD_BAND_${n}`,
    k1: `K1_CONSTANT_BAND_${n}`,
    k2: `K2_CONSTANT_BAND_${n}`,
  } as const;
  const raw = {
    ml: metadataField(file, keys.ml, 'LEVEL1_RADIOMETRIC') ?? metadataField(file, keys.ml, 'RADIOMETRIC_RESCALING'),
    al: metadataField(file, keys.al, 'LEVEL1_RADIOMETRIC') ?? metadataField(file, keys.al, 'RADIOMETRIC_RESCALING'),
    k1: metadataField(file, keys.k1, 'THERMAL_CONSTANTS'),
    k2: metadataField(file, keys.k2, 'THERMAL_CONSTANTS'),
  };
  const present = (Object.keys(raw) as (keyof typeof raw)[]).filter((k) => raw[k] !== undefined);
  if (present.length === 0) return null;
  if (present.length < 4) {
    const missing = (Object.keys(raw) as (keyof typeof raw)[]).filter((k) => raw[k] === undefined).map((k) => keys[k]);
    throw new InputError(`has some thermal constants of band ${n} but lacks ${missing.join(', ')}`, file.source);
  }
  const out = {} as TirsBandConstants;
  for (const k of ['ml', 'al', 'k1', 'k2'] as const) {
    const v = Number(raw[k]);
    const ok = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/.test(raw[k]!.trim()) && Number.isFinite(v) && (k === 'al' || v > 0);
    if (!ok) throw new InputError(`${keys[k]} = ${JSON.stringify(raw[k])} is not ${k === 'al' ? 'a finite number' : 'a positive number'}`, file.source);
    out[k] = v;
  }
  return out;
}

/**
 * Acquisition time from DATE_ACQUIRED (YYYY-MM-DD) and SCENE_CENTER_TIME
 * (HH:MM:SS.fffffffZ), as UTC 'YYYY-MM-DDTHH:MM:SSZ'; null when either is absent or malformed.
 */
export function acquisitionTimeFromMetadata(file: SceneMetadataFile): string | null {
  const date = metadataField(file, 'DATE_ACQUIRED');
  const time = metadataField(file, 'SCENE_CENTER_TIME');
  if (!date || !time) return null;
  const d = /^(\d{4}-\d{2}-\d{2})$/.exec(date.trim());
  const t = /^(\d{2}):(\d{2}):(\d{2})(?:\.\d+)?Z?$/.exec(time.trim());
  if (!d || !t) return null;
  const iso = `${d[1]}T${t[1]}:${t[2]}:${t[3]}Z`;
  return Number.isNaN(Date.parse(iso)) ? null : iso;
}

/** Level-1 band file name ending: `..._B10.TIF` (not a Level-2 `..._ST_B10.TIF`). */
const BAND_SUFFIX = /(?<!_ST)_B(10|11)$/i;

/**
 * Band of a thermal scene from its file name (`..._B11.TIF` -> 'B11'), or null.
 * @example thermalBandFromName('/a/X_B11.TIF') // 'B11'
 */
export function thermalBandFromName(path: string): TirsBand | null {
  const stem = path.replace(/^.*[\\/]/, '').replace(/\.[^.]*$/, '');
  const m = BAND_SUFFIX.exec(stem);
  return m ? (`B${m[1]}` as TirsBand) : null;
}

/**
 * Where a scene's metadata file may lie, by the scene's name, in order:
 * `<stem>_MTL.txt`, then with the band suffix taken off (`X_B10.TIF` -> `X_MTL.txt`), each
 * also with `_mtl` (a plain `<stem>.txt` may be anyone's notes, so it is not taken).
 * @example metadataFileCandidates('/a/X_B10.TIF') // ['/a/X_B10_MTL.txt', '/a/X_B10_mtl.txt', '/a/X_MTL.txt', '/a/X_mtl.txt']
 */
export function metadataFileCandidates(scenePath: string): string[] {
  const slash = Math.max(scenePath.lastIndexOf('/'), scenePath.lastIndexOf('\\'));
  const dir = scenePath.slice(0, slash + 1);
  const stem = scenePath.slice(slash + 1).replace(/\.[^.]*$/, '');
  const bare = stem.replace(BAND_SUFFIX, '');
  const names = [`${stem}_MTL.txt`, `${stem}_mtl.txt`];
  if (bare !== stem) names.push(`${bare}_MTL.txt`, `${bare}_mtl.txt`);
  return [...new Set(names)].map((n) => dir + n);
}
