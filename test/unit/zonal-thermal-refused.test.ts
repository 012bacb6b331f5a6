/**
 * `heatledger zonal` on a Level-1 thermal DN scene: refused with exit 2 and one
 * line naming the file and `ingest`, nothing on standard output. DN are not
 * temperatures: Landsat Level-1 thermal bands need the radiance rescaling and
 * K1/K2 constants of their metadata file to become brightness temperature
 * (USGS Landsat 8-9 Data Users Handbook, LSDS-1574, section 5, from memory).
 * The fixtures are the thermal fixtures of test/fixtures/thermal
 * (make_thermal_fixtures.py); the LST scene beside them is the control.
 */
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterEach, describe, expect, it, vi } from 'vitest';
import { runCliInProcess } from '../support/cli-in-process.js';

const DIR = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../fixtures/thermal');
const DISTRICTS = path.join(DIR, 'districts.geojson');

describe('zonal on a thermal DN scene', () => {
  afterEach(() => vi.restoreAllMocks());

  it.each(['table', 'json', 'csv'])('is refused with exit 2 and a line naming the file and ingest (--format %s)', async (format) => {
    const scene = path.join(DIR, 'thermal_B10.tif');
    const r = await runCliInProcess(['zonal', scene, '--districts', DISTRICTS, '--format', format]);
    expect(r.code).toBe(2);
    expect(r.stdout).toBe('');
    expect(r.stderr).toBe(`heatledger: ${scene}: is a Level-1 thermal DN scene, which zonal does not convert to LST; \`heatledger ingest\` converts thermal DN scenes (its --write-lst DIR writes their LST as GeoTIFFs that zonal reads)\n`);
  });

  it('an LST scene of the same grid is read (exit 0, values in K)', async () => {
    const r = await runCliInProcess(['zonal', path.join(DIR, 'day_lst.tif'), '--districts', DISTRICTS, '--format', 'json']);
    expect(r.code, r.stderr).toBe(0);
    const out = JSON.parse(r.stdout) as { unit: string | null; kind: string; rows: { valid: number }[] };
    expect(out.kind).toBe('lst');
    expect(out.unit).toBe('K');
    expect(out.rows.some((row) => row.valid > 0)).toBe(true);
  });
});
