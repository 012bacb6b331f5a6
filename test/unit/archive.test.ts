import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { normaliseUtc, readManifest, listSceneFiles } from '../../workers/run/archive.js';
import { fingerprint } from '../../workers/core/hash.js';
import { sceneTiming } from '../../workers/core/solar/index.js';

let dir: string;
beforeAll(async () => { dir = await mkdtemp(join(tmpdir(), 'heatledger-archive-')); });
afterAll(async () => { await rm(dir, { recursive: true, force: true }); });

describe('acquisition times are UTC', () => {
  // ISO 8601 / RFC 3339 offsets (common practice, no source): "+02:00" is two hours ahead of UTC.
  it('converts offsets to UTC and reads a time without offset as UTC', () => {
    expect(normaliseUtc('2024-07-14T13:30:00Z', 'm')).toBe('2024-07-14T13:30:00Z');
    expect(normaliseUtc('2024-07-14T15:30:00+02:00', 'm')).toBe('2024-07-14T13:30:00Z');
    expect(normaliseUtc('2024-07-14 13:30', 'm')).toBe('2024-07-14T13:30:00Z');
    expect(normaliseUtc('2024-07-14T08:30:00-0500', 'm')).toBe('2024-07-14T13:30:00Z');
  });
  it('refuses what is not a time, naming the source', () => {
    expect(() => normaliseUtc('14/07/2024', 'scenes.csv (entry 3)')).toThrow(/scenes\.csv \(entry 3\).*not ISO 8601/);
    expect(() => normaliseUtc('2024-13-45T99:00:00Z', 'x')).toThrow(/not a valid date/);
  });
});

describe('manifest', () => {
  it('reads CSV with quoted fields and paths relative to the manifest', async () => {
    const csv = join(dir, 'scenes.csv');
    await writeFile(csv, 'path,kind,acquired_at,sensor\n"day one.tif",lst,2024-07-14T13:30:00Z,"sensor A, band 10"\nsub/alb.tif,albedo,,\n');
    const m = await readManifest(csv);
    expect(m.get(join(dir, 'day one.tif'))).toEqual({ path: join(dir, 'day one.tif'), kind: 'lst', acquiredAt: '2024-07-14T13:30:00Z', sensor: 'sensor A, band 10' });
    expect(m.get(join(dir, 'sub', 'alb.tif'))).toEqual({ path: join(dir, 'sub', 'alb.tif'), kind: 'albedo' });
  });
  it('resolves a QA raster column relative to the manifest', async () => {
    const csv = join(dir, 'qa.csv');
    await writeFile(csv, 'path,qa\nscene.tif,masks/scene_qa.tif\n');
    expect((await readManifest(csv)).get(join(dir, 'scene.tif'))?.qa).toBe(join(dir, 'masks', 'scene_qa.tif'));
  });
  it('reads JSON arrays with the same keys', async () => {
    const j = join(dir, 'scenes.json');
    await writeFile(j, JSON.stringify([{ path: 'n.tif', kind: 'lst', acquired_at: '2024-07-15T03:30:00+02:00' }]));
    expect((await readManifest(j)).get(join(dir, 'n.tif'))?.acquiredAt).toBe('2024-07-15T01:30:00Z');
  });
  it('rejects a bad kind, a missing path column and duplicates with the file named', async () => {
    const bad = join(dir, 'bad.csv');
    await writeFile(bad, 'path,kind\na.tif,radiance\n');
    await expect(readManifest(bad)).rejects.toThrow(/bad\.csv \(entry 1\): kind "radiance" is not one of lst, albedo, qa, thermal/);
    await writeFile(bad, 'file,kind\na.tif,lst\n');
    await expect(readManifest(bad)).rejects.toThrow(/bad\.csv: a CSV manifest needs a header line with a "path" column/);
    await writeFile(bad, 'path\na.tif\n./a.tif\n');
    await expect(readManifest(bad)).rejects.toThrow(/twice/);
    await expect(readManifest(join(dir, 'missing.csv'))).rejects.toThrow(/missing\.csv: cannot read the manifest \(ENOENT\)/);
  });
});

describe('scene files', () => {
  it('lists GeoTIFFs under folders, sorted and unique, skipping hidden and other files', async () => {
    const sub = join(dir, 'arch');
    await rm(sub, { recursive: true, force: true });
    const { mkdir } = await import('node:fs/promises');
    await mkdir(join(sub, 'b'), { recursive: true });
    await mkdir(join(sub, '.hidden'), { recursive: true });
    for (const f of ['b/2.TIF', 'a.tif', 'notes.txt', '.hidden/x.tif', 'c.tiff']) await writeFile(join(sub, f), 'x');
    expect(await listSceneFiles([sub, join(sub, 'a.tif')])).toEqual({ files: [join(sub, 'a.tif'), join(sub, 'b', '2.TIF'), join(sub, 'c.tiff')], unreadable: [] });
    await expect(listSceneFiles([join(sub, 'nope')])).rejects.toThrow(/nope: no such file or folder/);
  });
  it('fingerprints ignore key order', () => {
    expect(fingerprint({ a: 1, b: [1, { c: 2, d: 3 }] })).toBe(fingerprint({ b: [1, { d: 3, c: 2 }], a: 1 }));
    expect(fingerprint({ a: 1 })).not.toBe(fingerprint({ a: 2 }));
  });
});

describe('pass and timing at the scene centre', () => {
  // Sun elevation from NREL SPA (Reda & Andreas 2004); windows as documented in workers/core/solar/timing.ts.
  it('classifies a 13:30 local-solar-time summer pass as a midday day pass, a 01:30 one as a pre-dawn night pass', () => {
    // lon -35.6: local solar time is about UTC - 2.37 h (+ equation of time, a few minutes in July)
    const day = sceneTiming('2024-07-14T15:52:00Z', -35.6, 44.2);
    expect(day.pass).toBe('day');
    expect(day.timingRating).toBe('midday');
    expect(day.solarTimeHours).toBeGreaterThan(13.3);
    expect(day.solarTimeHours).toBeLessThan(13.7);
    const night = sceneTiming('2024-07-15T03:52:00Z', -35.6, 44.2);
    expect(night.pass).toBe('night');
    expect(night.timingRating).toBe('predawn');
    expect(night.sunElevationDeg!).toBeLessThan(0);
  });
  it('has nulls without a time', () => {
    expect(sceneTiming(null, 0, 0)).toEqual({ acquiredAt: null, pass: null, sunElevationDeg: null, solarTimeHours: null, timingRating: null });
  });
});

describe('manifest columns of thermal scenes', () => {
  let dir: string;
  beforeAll(async () => { dir = await mkdtemp(join(tmpdir(), 'hl-manifest-thermal-')); });
  afterAll(async () => { await rm(dir, { recursive: true, force: true }); });

  it('reads metadata, band, constants, emissivity (number or raster), NDVI and atmosphere; paths relative to the manifest', async () => {
    const m = join(dir, 'm.csv');
    await writeFile(m, [
      'path,kind,metadata,band,radiance_mult,radiance_add,k1,k2,emissivity,ndvi,transmittance,upwelling,downwelling',
      'n_B10.tif,thermal,n_MTL.txt,10,3.342e-4,0.1,774.8853,1321.0789,0.97,,0.87,0.95,1.6',
      'm_B11.tif,thermal,,B11,,,,,eps.tif,,,,',
      'd.tif,lst,,,,,,,,nd.tif,,,',
    ].join('\n') + '\n');
    const got = await readManifest(m);
    expect(got.get(join(dir, 'n_B10.tif'))).toEqual({
      path: join(dir, 'n_B10.tif'), kind: 'thermal', metadata: join(dir, 'n_MTL.txt'), band: 'B10',
      constants: { ml: 3.342e-4, al: 0.1, k1: 774.8853, k2: 1321.0789 }, emissivity: 0.97,
      atmosphere: { transmittance: 0.87, upwellingRadiance: 0.95, downwellingRadiance: 1.6 },
    });
    expect(got.get(join(dir, 'm_B11.tif'))).toMatchObject({ band: 'B11', emissivityRaster: join(dir, 'eps.tif') });
    expect(got.get(join(dir, 'd.tif'))).toMatchObject({ ndvi: join(dir, 'nd.tif') });
    const j = join(dir, 'm.json');
    await writeFile(j, JSON.stringify([{ path: 'x.tif', band: 11, emissivity: 0.95 }]));
    expect((await readManifest(j)).get(join(dir, 'x.tif'))).toMatchObject({ band: 'B11', emissivity: 0.95 });
  });

  it('refuses partial constants or atmosphere, an emissivity outside (0.8, 1] and a bad transmittance, naming the entry', async () => {
    const m = join(dir, 'bad.csv');
    await writeFile(m, 'path,k1,k2\na.tif,774.8853,1321.0789\n');
    await expect(readManifest(m)).rejects.toThrow(/bad\.csv \(entry 1\): gives only some of radiance_mult, radiance_add, k1, k2/);
    await writeFile(m, 'path,transmittance\na.tif,0.9\n');
    await expect(readManifest(m)).rejects.toThrow(/bad\.csv \(entry 1\): gives only some of transmittance, upwelling, downwelling/);
    await writeFile(m, 'path,emissivity\na.tif,0.8\n');
    await expect(readManifest(m)).rejects.toThrow(/bad\.csv \(entry 1\): emissivity 0\.8 is outside \(0\.8, 1\]/);
    await writeFile(m, 'path,transmittance,upwelling,downwelling\na.tif,1.3,0.5,0.9\n');
    await expect(readManifest(m)).rejects.toThrow(/bad\.csv \(entry 1\): atmospheric transmittance 1\.3 is not in \(0, 1\]/);
  });
});
