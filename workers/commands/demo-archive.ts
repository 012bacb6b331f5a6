/**
 * The demo's archive folder: the demo writes its scenes into a folder that is
 * new or empty, records the names of the files it wrote in its settings file,
 * and, when its settings change, deletes only those files before writing the
 * new archive. A folder holding anything else is refused, never cleared: a
 * user's own files there are not the demo's to delete.
 */
import { existsSync, readdirSync, readFileSync } from 'node:fs';
import { mkdir, rm, writeFile } from 'node:fs/promises';
import { join, resolve } from 'node:path';
import { InputError } from '../core/errors.js';

/** What the settings file holds: the archive's settings and the files the demo wrote (names within the folder). */
interface DemoArchiveRecord {
  settings: unknown;
  files: string[];
}

/** The settings file parsed as JSON, or undefined when it is missing or not JSON. */
function readSettingsFile(settingsPath: string): unknown {
  if (!existsSync(settingsPath)) return undefined;
  try {
    return JSON.parse(readFileSync(settingsPath, 'utf8')) as unknown;
  } catch {
    return undefined; // not a file of ours
  }
}

/** The parsed settings file as a record of ours, or null. */
function asRecord(parsed: unknown): DemoArchiveRecord | null {
  const r = parsed as Partial<DemoArchiveRecord> | null | undefined;
  return r && typeof r === 'object' && 'settings' in r && Array.isArray(r.files) && r.files.every((f) => typeof f === 'string') ? (r as DemoArchiveRecord) : null;
}

/** A file name the record may name: one entry of the folder itself, nothing above or below it. */
const plainName = (f: string) => f !== '' && f !== '.' && f !== '..' && !/[\\/]/.test(f);

export type ArchiveState = 'ready' | 'generated';

/**
 * Make `dir` hold the demo archive of `settings`: 'ready' when it already does
 * (and `isComplete` agrees); else delete the files an earlier demo recorded,
 * refuse (InputError) when anything else is left in the folder, run `generate`
 * into it and record what it wrote: 'generated'.
 */
export async function prepareDemoArchive(opts: {
  dir: string;
  settingsFile: string;
  settings: unknown;
  isComplete(): boolean;
  generate(): Promise<void>;
}): Promise<ArchiveState> {
  const dir = resolve(opts.dir);
  const settingsPath = join(dir, opts.settingsFile);
  const parsed = readSettingsFile(settingsPath);
  const record = asRecord(parsed);
  const want = JSON.stringify(opts.settings);
  if (record && JSON.stringify(record.settings) === want && record.files.length > 0 && opts.isComplete()) return 'ready';
  // an archive of the same settings from a version that recorded no file list: used as it is, never deleted
  if (!record && parsed !== undefined && JSON.stringify(parsed) === want && opts.isComplete()) return 'ready';
  if (existsSync(dir)) {
    const ours = new Set(record ? [...record.files.filter(plainName), opts.settingsFile] : []);
    const left = readdirSync(dir).filter((f) => !ours.has(f));
    if (left.length === 0) {
      for (const f of ours) await rm(join(dir, f), { force: true });
    } else {
      throw new InputError(
        `the demo archive folder ${dir} holds files the demo did not write (${left.slice(0, 3).join(', ')}${left.length > 3 ? ', ...' : ''}); ` +
          'nothing was deleted: give --archive a new or empty folder',
      );
    }
  }
  await mkdir(dir, { recursive: true });
  // the folder is empty now, so everything in it after generating is the demo's own
  const recordFiles = async () => {
    const files = readdirSync(dir).filter((f) => f !== opts.settingsFile).sort();
    await writeFile(settingsPath, JSON.stringify({ settings: opts.settings, files }) + '\n');
  };
  try {
    await opts.generate();
  } finally {
    // also after a failure: the next run may then delete what this one wrote
    await recordFiles();
  }
  return 'generated';
}
