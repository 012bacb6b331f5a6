/**
 * Masks, sidecars, a corrupt GDAL_METADATA block and LERC, checked against
 * GDAL itself: the fixtures and their expected values are made by
 *
 *     /usr/bin/python3 test/fixtures/make_mask_fixtures.py
 *
 * which writes test/fixtures/mask/ with GDAL and computes every expected
 * number with rasterio + NumPy (dataset_mask, read_masks, ds.scales/offsets,
 * geometry_mask; see the script's docstring). No Python runs at test time.
 * The CLI check spawns the compiled `dist/workers/cli.js` (build first).
 */
import { execFile } from 'node:child_process';
import { copyFileSync, existsSync, mkdtempSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, describe, expect, it } from 'vitest';
import { openRaster } from '../../workers/core/raster/index.js';
import { parseXml, XmlSyntaxError } from '../../workers/core/raster/xml.js';
import { parseSidecar } from '../../workers/core/raster/sidecar.js';
import { parseGdalMetadata } from '../../workers/core/raster/gdalmeta.js';
import { unsupportedCompression } from '../../workers/core/raster/decoders/index.js';
import { zonalTable } from '../../workers/commands/zonal-table.js';
import { snakeCaseKeys } from '../../workers/format.js';
import { scene as sceneJob, type SceneData } from '../../workers/jobs/scene.js';
import { hashFile } from '../../workers/core/hash.js';
import { createPipelineRepo, type PipelineRepo } from '../../workers/store/pipeline-repo.js';
import { openStore } from '../../workers/store/store.js';
import type { JobContext } from '../../workers/queue/types.js';
import { isInputError } from '../../workers/core/errors.js';
import { mulberry32 } from '../../workers/core/prng.js';

const HERE = dirname(fileURLToPath(import.meta.url));
const ROOT = resolve(HERE, '../..');
const FIX = resolve(HERE, '../fixtures/mask');
const DISTRICTS = resolve(HERE, '../fixtures/reference/districts.geojson');
const CLI = join(ROOT, 'dist/workers/cli.js');
const TOL_KELVIN = 1e-6;
/** The CLI prints K to 0.0001 (README, `zonal`): half of that on top of the tolerance. */
const TOL_KELVIN_PRINTED = TOL_KELVIN + 0.00005;

type Num = number | null;
interface Case {
  case: string;
  reference: string;
  raster: string;
  coverage: 'centre' | 'fraction';
  /** Plausible LST window used for the expected values; null = none. */
  plausibleKelvin: [number, number] | null;
  /** Valid cells per district under GDAL's mask band alone (read_masks(1)), nodata not tested. */
  gdalMaskOnlyValid: Record<string, number>;
  header: { scale: number; offset: number; nodata: number | 'nan' | null; acquisitionTime: string | null };
  /** rasterio mask_flag_enums of band 1 (GDAL GetMaskFlags), e.g. ['per_dataset']. */
  maskFlags: string[];
  /** Cells rasterio's dataset_mask() marks 0. */
  maskedCells: number;
  /** Cells rasterio's read_masks(1) (GDAL's mask band of band 1) marks valid. */
  gdalMaskValid: number;
  rows: Array<{ district: string; pixels: number; valid: number } & Record<string, Num | string>>;
}

const cases: Case[] = readdirSync(FIX)
  .filter((f) => /^expected_.*\.json$/.test(f))
  .sort()
  .map((f) => JSON.parse(readFileSync(join(FIX, f), 'utf8')) as Case);
const byName = (n: string) => cases.find((c) => c.case === n)!;
const fx = (name: string) => join(FIX, name);

function differences(actual: readonly Record<string, unknown>[], c: Case, tol = TOL_KELVIN): string[] {
  const out: string[] = [];
  for (const exp of c.rows) {
    const act = actual.find((r) => r.district === exp.district);
    if (!act) { out.push(`${c.case}: no row for ${exp.district}`); continue; }
    for (const [key, e] of Object.entries(exp)) {
      if (key === 'district') continue;
      const a = act[key];
      const where = `${c.case} ${exp.district}.${key}`;
      if (e === null) { if (a !== null) out.push(`${where}: got ${String(a)}, expected null`); continue; }
      if (typeof a !== 'number') { out.push(`${where}: got ${String(a)}, expected ${String(e)}`); continue; }
      if (key === 'pixels' || key === 'valid') { if (a !== e) out.push(`${where}: got ${a}, expected exactly ${String(e)}`); }
      else if (!(Math.abs(a - (e as number)) <= tol)) out.push(`${where}: got ${a}, expected ${String(e)}`);
    }
  }
  return out;
}

describe('fixtures', () => {
  it('hold every case make_mask_fixtures.py writes', () => {
    expect(cases.map((c) => c.case)).toEqual([
      'alpha', 'alpha_assoc', 'aux', 'aux_override', 'cog_mask', 'corrupt_meta', 'ext_mask', 'internal_mask', 'internal_mask_fraction',
      'lerc_deflate_f32', 'lerc_u16', 'lerc_zstd_f32', 'mask8', 'mask_nodata', 'mask_nodata_fraction', 'mask_nodata_unfiltered',
    ]);
  });
});

describe('district statistics with masks, sidecars and LERC (reference: rasterio dataset_mask + NumPy)', () => {
  for (const c of cases) {
    it(`${c.case}: ${c.raster} (${c.coverage})`, async () => {
      const result = await zonalTable({ rasterPath: fx(c.raster), districtsPath: DISTRICTS, coverage: c.coverage, plausibleKelvin: c.plausibleKelvin });
      // reference: c.reference (rasterio dataset_mask()/nodata/NaN, scales/offsets, geometry_mask, NumPy)
      // output field names (valid_fraction for validFraction)
      expect(differences(result.rows.map((r) => snakeCaseKeys(r) as Record<string, unknown>), c)).toEqual([]);
    });
  }
});

describe('header values as GDAL reads them (reference: rasterio ds.scales, ds.offsets, ds.nodata, ds.tags())', () => {
  for (const c of cases.filter((x) => x.coverage === 'centre')) {
    it(c.case, async () => {
      const r = await openRaster(fx(c.raster));
      try {
        const h = r.header;
        expect(h.scale).toBe(c.header.scale);
        expect(h.offset).toBe(c.header.offset);
        if (c.header.nodata === 'nan') expect(Number.isNaN(h.nodata)).toBe(true);
        else expect(h.nodata).toBe(c.header.nodata);
        if (c.header.acquisitionTime !== null) expect(h.acquiredAt).toBe(c.header.acquisitionTime);
      } finally {
        await r.close();
      }
    });
  }
  it('the sidecar overrides the TIFF for nodata and metadata, the TIFF wins for scale/offset (GDAL 3.6 via rasterio)', async () => {
    // aux_override_u16.tif: TIFF nodata 1, time 09:00, scale 0.00341802; sidecar nodata 0, time 21:12:03, scale doubled
    const c = byName('aux_override');
    expect(c.header).toEqual({ scale: 0.00341802, offset: 149, nodata: 0, acquisitionTime: '2024-07-15T21:12:03Z' });
    const r = await openRaster(fx(c.raster));
    try {
      expect([r.header.scale, r.header.offset, r.header.nodata, r.header.acquiredAt]).toEqual([0.00341802, 149, 0, '2024-07-15T21:12:03Z']);
    } finally {
      await r.close();
    }
  });
});

describe('the mask itself (reference: rasterio dataset_mask)', () => {
  /** GDAL's mask kind (rasterio mask_flag_enums of band 1) as header.mask names it. */
  // (per_dataset is the flag of both internal and .msk masks: which one is where the mask lives, named in the case)
  const kindOf = (c: Case) => (c.maskFlags.includes('alpha') ? 'alpha' : c.maskFlags.includes('per_dataset') ? (c.case === 'ext_mask' ? 'external' : 'internal') : null);
  for (const c of cases.filter((x) => x.coverage === 'centre')) {
    it(`${c.case}: mask kind as rasterio's mask_flag_enums (${c.maskFlags.join(', ')}); masked cells as dataset_mask() zeros`, async () => {
      const r = await openRaster(fx(c.raster));
      try {
        expect(r.header.mask).toBe(kindOf(c));
        const m = await r.validMask({ colOff: 0, rowOff: 0, width: r.header.width, height: r.header.height });
        if (kindOf(c) === null) {
          // no mask: dataset_mask() is the nodata test alone, which the zonal statistics check covers
          expect(m).toBeNull();
        } else {
          expect(m!.reduce((s, v) => s + (v === 0 ? 1 : 0), 0)).toBe(c.maskedCells);
        }
      } finally {
        await r.close();
      }
    });
  }
  it('a window that is not block-aligned gets the same flags as the whole image (COG, 32 x 32 tiles)', async () => {
    const r = await openRaster(fx('cog_mask_u16.tif'));
    try {
      const { width, height } = r.header;
      const all = (await r.validMask({ colOff: 0, rowOff: 0, width, height }))!;
      const w = { colOff: 13, rowOff: 7, width: 61, height: 45 };
      const part = (await r.validMask(w))!;
      let same = 0;
      for (let y = 0; y < w.height; y++) for (let x = 0; x < w.width; x++) if (part[y * w.width + x] === all[(y + w.rowOff) * width + x + w.colOff]) same++;
      // common practice, no source: a window is a view of the same mask
      expect(same).toBe(w.width * w.height);
    } finally {
      await r.close();
    }
  });
  it('mask and nodata together: both exclude, where GDAL\'s mask band alone would keep nodata cells the mask calls valid', async () => {
    const c = byName('mask_nodata_unfiltered');
    const result = await zonalTable({ rasterPath: fx(c.raster), districtsPath: DISTRICTS, coverage: 'centre', plausibleKelvin: null });
    const got = Object.fromEntries(result.rows.map((r) => [r.district, r.valid]));
    // reference: rasterio dataset_mask() and value != nodata (expected rows) ...
    expect(got).toEqual(Object.fromEntries(c.rows.map((r) => [r.district, r.valid])));
    // ... which keeps fewer cells in D01 than rasterio read_masks(1) alone, where the nodata band
    // (rows 30-39, cols 10-39 of make_mask_fixtures.py) lies outside the masked disc
    expect(got.D01).toBeLessThan(c.gdalMaskOnlyValid.D01);
    expect(result.rows.find((r) => r.district === 'D01')!.min).toBeGreaterThan(0); // no -9999 K kept
  });
});

describe('corrupt GDAL_METADATA and sidecars: read, with a warning naming the file', () => {
  const tmp = mkdtempSync(join(tmpdir(), 'mask-warn-'));
  afterAll(() => rmSync(tmp, { recursive: true, force: true }));

  it('a GDAL_METADATA block that is not well-formed is reported, the pixels still read', async () => {
    const path = fx('corrupt_meta_f32.tif');
    const r = await openRaster(path);
    try {
      expect(r.header.warnings).toHaveLength(1);
      expect(r.header.warnings[0]).toContain(path);
      expect(r.header.warnings[0]).toMatch(/GDAL_METADATA.*not well-formed/);
      // GDAL ignores the block as a whole: no items, scale 1 / offset 0 (rasterio ds.tags(), ds.scales)
      expect(r.header.metadata).toEqual({});
      expect(byName('corrupt_meta').header.acquisitionTime).toBeNull();
    } finally {
      await r.close();
    }
  });
  it('a sidecar that is not well-formed is reported and ignored', async () => {
    const path = join(tmp, 'aux_broken.tif');
    copyFileSync(fx('aux_u16.tif'), path);
    writeFileSync(`${path}.aux.xml`, '<PAMDataset><PAMRasterBand band="1"><Scale>0.5</Scale></PAMRasterBand>');
    const r = await openRaster(path);
    try {
      expect(r.header.scale).toBe(1);
      expect(r.header.warnings).toHaveLength(1);
      expect(r.header.warnings[0]).toContain(`${path}.aux.xml`);
    } finally {
      await r.close();
    }
  });
  it('a sidecar scale that is not a number is an InputError naming the sidecar', async () => {
    const path = join(tmp, 'aux_text.tif');
    copyFileSync(fx('aux_u16.tif'), path);
    writeFileSync(`${path}.aux.xml`, '<PAMDataset><PAMRasterBand band="1"><Scale>abc</Scale></PAMRasterBand></PAMDataset>');
    const err = await openRaster(path).catch((e: unknown) => e as Error);
    expect(err).toBeInstanceOf(Error);
    expect((err as Error).name).toBe('InputError');
    expect((err as Error).message).toContain(`${path}.aux.xml`);
  });
  it('a broken link after the first image directory is reported; the image is still read', async () => {
    // TIFF 6.0 section 2: the 4-byte offset of the next IFD follows the 12-byte entries of a classic IFD
    const path = join(tmp, 'broken_chain.tif');
    const bytes = Buffer.from(readFileSync(fx('internal_mask_u16.tif')));
    expect(bytes.toString('latin1', 0, 4)).toBe('II*\0');
    const ifd = bytes.readUInt32LE(4);
    const n = bytes.readUInt16LE(ifd);
    bytes.writeUInt32LE(bytes.length + 4096, ifd + 2 + 12 * n);
    writeFileSync(path, bytes);
    const r = await openRaster(path);
    try {
      expect(r.header.mask).toBeNull();
      expect(r.header.warnings).toHaveLength(1);
      expect(r.header.warnings[0]).toMatch(/could not be read.*mask/);
      expect(r.header.warnings[0]).toContain(path);
    } finally {
      await r.close();
    }
  });
  it('JPEG and WebP are refused with the reason and the way out', () => {
    // JPEG baseline is a lossy DCT codec (ITU-T T.81, 1992)
    expect(unsupportedCompression(7)).toMatch(/^compression JPEG \(7\) is not supported: .*lossy.*re-encode/);
    expect(unsupportedCompression(50001)).toMatch(/^compression WebP \(50001\) is not supported: .*browser.*re-encode/);
  });
  it('a scene job stores the warning with the scene (scenes.warnings, migration 004)', async () => {
    const store = await openStore({ memory: true });
    try {
      const repo = createPipelineRepo(store);
      const ctx: JobContext<PipelineRepo> = { jobId: 'j', name: 'scene', childrenValues: {}, failedChildren: [], repo, log: () => undefined, attempt: 1 };
      // no districts: the scene is registered and marked processed with no statistics
      const job = (d: Pick<SceneData, 'path' | 'contentHash' | 'runId' | 'manifest'>) => sceneJob({ ...d, targetIds: [], targetsKey: 'none', coverage: 'centre', plausibleKelvin: [170, 360] }, ctx);
      const path = fx('corrupt_meta_f32.tif');
      const run = await store.query<{ id: number }>(`INSERT INTO runs (software_version, mode) VALUES ('test', 'embedded') RETURNING id`);
      const res = await job({ path, contentHash: await hashFile(path), runId: run[0].id, manifest: { path, kind: 'lst', acquiredAt: '2024-07-15T21:12:03Z' } });
      expect(res.warnings).toHaveLength(1);
      const rows = await store.query<{ warnings: string[] }>('SELECT warnings FROM scenes WHERE id = $1', [res.sceneId]);
      expect(rows[0].warnings).toEqual(res.warnings);
      expect(rows[0].warnings[0]).toContain(path);

      // Same TIFF bytes read again once its broken sidecar is gone: the stored warning goes too.
      const copy = join(tmp, 'aux_ingest.tif');
      copyFileSync(fx('aux_u16.tif'), copy);
      writeFileSync(`${copy}.aux.xml`, '<PAMDataset><Metadata>');
      const manifest = { path: copy, kind: 'lst' as const, acquiredAt: '2024-07-15T21:12:03Z' };
      const first = await job({ path: copy, contentHash: await hashFile(copy), runId: run[0].id, manifest });
      const q = 'SELECT warnings FROM scenes WHERE id = $1';
      expect((await store.query<{ warnings: string[] }>(q, [first.sceneId]))[0].warnings).toHaveLength(1);
      rmSync(`${copy}.aux.xml`);
      const again = await job({ path: copy, contentHash: await hashFile(copy), runId: run[0].id, manifest });
      expect(again.sceneId).toBe(first.sceneId);
      expect((await store.query<{ warnings: string[] }>(q, [first.sceneId]))[0].warnings).toEqual([]);
    } finally {
      await store.close();
    }
  }, 600_000); // an embedded database starts slowly on a loaded machine: generous, not a timing check
  it('the zonal command prints the warning on stderr and still exits 0', async () => {
    expect(existsSync(CLI)).toBe(true);
    const r = await new Promise<{ code: number; stdout: string; stderr: string }>((res) => {
      execFile(process.execPath, [CLI, 'zonal', fx('corrupt_meta_f32.tif'), '--districts', DISTRICTS, '--format', 'json'],
        { cwd: ROOT, timeout: 120_000 }, (err, stdout, stderr) => res({ code: err ? Number((err as { code?: unknown }).code) : 0, stdout, stderr }));
    });
    expect(r.code).toBe(0);
    expect(r.stderr).toMatch(/^warning: .*corrupt_meta_f32\.tif.*GDAL_METADATA/m);
    // reference: rasterio + NumPy (expected_corrupt_meta.json)
    expect(differences((JSON.parse(r.stdout) as { rows: Record<string, unknown>[] }).rows, byName('corrupt_meta'), TOL_KELVIN_PRINTED)).toEqual([]);
  });
});

describe('malformed masks and LERC tiles: InputError or a reading, never another exception (the reader contract, DEVELOPERS.md)', () => {
  const tmp = mkdtempSync(join(tmpdir(), 'mask-fuzz-'));
  afterAll(() => rmSync(tmp, { recursive: true, force: true }));
  // seeded: the same mutations on every run
  const rand = mulberry32(20240715);
  const bases: Array<{ file: string; mutate: 'tif' | 'msk' }> = [
    { file: 'cog_mask_u16.tif', mutate: 'tif' }, { file: 'internal_mask_u16.tif', mutate: 'tif' },
    { file: 'mask8_u16.tif', mutate: 'tif' }, { file: 'ext_mask_u16.tif', mutate: 'msk' },
    { file: 'lerc_u16.tif', mutate: 'tif' }, { file: 'lerc_deflate_f32.tif', mutate: 'tif' }, { file: 'lerc_zstd_f32.tif', mutate: 'tif' },
  ];
  for (const base of bases) {
    it(`${base.file}: 80 mutated copies (${base.mutate === 'msk' ? 'the .msk file' : 'the TIFF'})`, async () => {
      const src = readFileSync(fx(base.mutate === 'msk' ? `${base.file}.msk` : base.file));
      const outcomes = { ok: 0, inputError: 0 };
      for (let k = 0; k < 80; k++) {
        const path = join(tmp, `${k}-${base.file}`);
        let bytes = Buffer.from(src);
        if (k % 4 === 0) bytes = bytes.subarray(0, Math.floor(rand() * bytes.length));
        else for (let j = 0; j < 1 + Math.floor(rand() * 6); j++) bytes[Math.floor(rand() * bytes.length)] ^= 1 << Math.floor(rand() * 8);
        if (base.mutate === 'msk') {
          copyFileSync(fx(base.file), path);
          writeFileSync(`${path}.msk`, bytes);
        } else {
          writeFileSync(path, bytes);
        }
        try {
          const r = await openRaster(path);
          try {
            const w = { colOff: 0, rowOff: 0, width: r.header.width, height: r.header.height };
            await r.validMask(w);
            await r.readWindow(w);
          } finally {
            await r.close();
          }
          outcomes.ok++;
        } catch (e) {
          if (!isInputError(e)) throw e;
          outcomes.inputError++;
        }
      }
      expect(outcomes.ok + outcomes.inputError).toBe(80);
      expect(outcomes.inputError).toBeGreaterThan(0);
    }, 120_000);
  }
});

describe('XML well-formedness (XML 1.0, W3C 2008, section 2.1 and 3)', () => {
  it('reads elements, attributes, text and entities', () => {
    const x = parseXml('<?xml version="1.0"?><!-- c --><a k="1 &amp; 2"><b>t&lt;u</b><c/></a>');
    expect(x.name).toBe('a');
    expect(x.attrs.k).toBe('1 & 2');
    expect(x.children.map((c) => [c.name, c.text])).toEqual([['b', 't<u'], ['c', '']]);
  });
  const bad = ['<a><b></a>', '<a>', '<a x=1/>', '<a/><b/>', 'text<a/>', '<a>&bogus;</a>', '<a x="1" x="2"/>', ''];
  for (const doc of bad) {
    it(`refuses ${JSON.stringify(doc)}`, () => {
      expect(() => parseXml(doc)).toThrow(XmlSyntaxError);
    });
  }
  it('GDAL_METADATA of another root element is ignored with a warning', () => {
    expect(parseGdalMetadata('<Other><Item name="A">1</Item></Other>', 'x.tif').warning).toMatch(/<Other>/);
  });
  it('a sidecar of another root element is ignored with a warning', () => {
    const r = parseSidecar('<Other/>', 'x.tif.aux.xml');
    expect(r.sidecar).toBeNull();
    expect(r.warnings[0]).toContain('x.tif.aux.xml');
  });
});
