/**
 * The demo's archive folder: the demo deletes only files it recorded as its own,
 * and refuses a folder holding anything else (nothing a user stored may be lost:
 * the project's data-safety contract, common practice, no source). The files are
 * real files on disk; each check reads the folder back.
 */
import { mkdtemp, readFile, readdir, rm, writeFile } from 'node:fs/promises';
import { existsSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { prepareDemoArchive } from '../../workers/commands/demo-archive.js';
import { InputError } from '../../workers/core/errors.js';

const SETTINGS_FILE = 'corvenmouth_archive.json';
let tmp: string;

beforeAll(async () => { tmp = await mkdtemp(path.join(os.tmpdir(), 'hl-demo-archive-')); });
afterAll(async () => { if (tmp) await rm(tmp, { recursive: true, force: true }); });

/** Prepare `dir` for `settings`; the generator writes the given files. Returns the state and how often the generator ran. */
async function prepare(dir: string, settings: unknown, writes: string[]) {
  let generated = 0;
  const state = await prepareDemoArchive({
    dir,
    settingsFile: SETTINGS_FILE,
    settings,
    isComplete: () => existsSync(path.join(dir, 'corvenmouth_districts.geojson')),
    generate: async () => {
      generated++;
      for (const f of writes) await writeFile(path.join(dir, f), `${JSON.stringify(settings)} ${f}`);
    },
  });
  return { state, generated };
}

const list = async (dir: string) => (await readdir(dir)).sort();

describe('demo archive folder', () => {
  it('generates into a new folder, records its files, and reuses them while the settings stay', async () => {
    const dir = path.join(tmp, 'new');
    expect(await prepare(dir, { years: 2 }, ['corvenmouth_districts.geojson', 'corvenmouth_2015_day.tif'])).toEqual({ state: 'generated', generated: 1 });
    expect(JSON.parse(await readFile(path.join(dir, SETTINGS_FILE), 'utf8'))).toEqual({
      settings: { years: 2 }, files: ['corvenmouth_2015_day.tif', 'corvenmouth_districts.geojson'],
    });
    expect(await prepare(dir, { years: 2 }, ['corvenmouth_districts.geojson'])).toEqual({ state: 'ready', generated: 0 });
  });

  it('new settings: deletes only the files it recorded and writes the new archive', async () => {
    const dir = path.join(tmp, 'change');
    await prepare(dir, { years: 2 }, ['corvenmouth_districts.geojson', 'corvenmouth_2015_day.tif', 'corvenmouth_2016_day.tif']);
    expect(await prepare(dir, { years: 3 }, ['corvenmouth_districts.geojson', 'corvenmouth_2017_day.tif'])).toEqual({ state: 'generated', generated: 1 });
    expect(await list(dir)).toEqual(['corvenmouth_2017_day.tif', SETTINGS_FILE, 'corvenmouth_districts.geojson'].sort());
    expect(await readFile(path.join(dir, 'corvenmouth_districts.geojson'), 'utf8')).toBe('{"years":3} corvenmouth_districts.geojson');
  });

  it('new settings with a user\'s own scene in the folder: refused (exit 2 error naming the folder), every file kept', async () => {
    const dir = path.join(tmp, 'user-added');
    await prepare(dir, { years: 2 }, ['corvenmouth_districts.geojson', 'corvenmouth_2015_day.tif']);
    await writeFile(path.join(dir, 'corvenmouth_2020_mine.tif'), 'a scene of the user');
    const before = await list(dir);
    const err = await prepare(dir, { years: 3 }, ['corvenmouth_districts.geojson']).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(InputError);
    expect((err as Error).message).toBe(`the demo archive folder ${dir} holds files the demo did not write (corvenmouth_2020_mine.tif); nothing was deleted: give --archive a new or empty folder`);
    expect(await list(dir)).toEqual(before);
    expect(await readFile(path.join(dir, 'corvenmouth_2020_mine.tif'), 'utf8')).toBe('a scene of the user');
  });

  it('a folder of the user\'s scenes the demo never wrote: refused, nothing deleted', async () => {
    const dir = path.join(tmp, 'user-folder');
    await prepare(dir, { years: 1 }, []).catch(() => undefined); // makes the folder (no files)
    await rm(path.join(dir, SETTINGS_FILE));
    await writeFile(path.join(dir, 'corvenmouth_2019_lst.tif'), 'user data');
    await expect(prepare(dir, { years: 2 }, ['corvenmouth_districts.geojson'])).rejects.toThrow(/holds files the demo did not write \(corvenmouth_2019_lst\.tif\); nothing was deleted/);
    expect(await list(dir)).toEqual(['corvenmouth_2019_lst.tif']);
  });

  it('a record naming a path outside the folder deletes nothing there', async () => {
    const dir = path.join(tmp, 'escape');
    const outside = path.join(tmp, 'outside.tif');
    await writeFile(outside, 'keep');
    await prepare(dir, { years: 2 }, ['corvenmouth_districts.geojson']);
    await writeFile(path.join(dir, SETTINGS_FILE), JSON.stringify({ settings: { years: 2 }, files: ['corvenmouth_districts.geojson', '../outside.tif'] }));
    await prepare(dir, { years: 3 }, ['corvenmouth_districts.geojson']);
    expect(await readFile(outside, 'utf8')).toBe('keep');
  });

  it('the settings file of a version without a file list: the same settings are used as they are; other settings are refused with every file kept', async () => {
    const dir = path.join(tmp, 'legacy');
    await prepare(dir, { years: 2 }, ['corvenmouth_districts.geojson', 'corvenmouth_2015_day.tif']);
    await writeFile(path.join(dir, SETTINGS_FILE), JSON.stringify({ years: 2 }) + '\n');
    expect(await prepare(dir, { years: 2 }, [])).toEqual({ state: 'ready', generated: 0 });
    const before = await list(dir);
    await expect(prepare(dir, { years: 3 }, [])).rejects.toThrow(InputError);
    expect(await list(dir)).toEqual(before);
  });
});
