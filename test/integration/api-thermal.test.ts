/**
 * District areas and thermal passes in the API, on a small embedded store: the
 * invented grid of test/support/api-store.ts plus two night passes delivered as
 * Level-1 thermal DN, stored through the functions ingest uses (one corrected for
 * the atmosphere, one with the emissivity correction alone). Invented data are
 * inputs only; every expected value below comes from those inputs or from the
 * stated precision.
 *
 * - area_m2 is given to 0.1 m² (the stated precision of areas, as in the GeoJSON
 *   export), without the float noise of a computed area.
 * - /api/scenes and /api/scenes/{id} say for a thermal pass how its LST was made;
 *   a pass without atmospheric correction carries the one sentence on the typical
 *   size of that error (NO_ATMOSPHERIC_CORRECTION_TEXT); other kinds carry nulls.
 * - /api/status lists the thermal passes as `heatledger status --format json` does
 *   (the built CLI reading the same store), paths relative to the data root.
 * - The series answer counts a year with the dates the CLI's --min-dates default asks.
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { FastifyInstance } from 'fastify';
import { buildApp } from '../../api/app.js';
import { MIN_DATES_PER_YEAR, NO_ATMOSPHERIC_CORRECTION_TEXT } from '../../workers/core/defaults.js';
import { roundingOf } from '../../workers/core/export/tidy.js';
import { openStore, type Store } from '../../workers/store/store.js';
import { addThermalPasses, LAST_YEAR, seedApiStore, type ApiStore, type SeededThermalPass } from '../support/api-store.js';
import { cleanEnv, cliOk, ensurePipelineBuild, killAllChildren } from '../support/pipeline-harness.js';

/** An area as a computed polygon area comes out of floating point (invented). */
const NOISY_AREA_M2 = 3599051.2448927974;
/** The same to 0.1 m², rounded by hand: the digit after the first decimal is 4, so 3599051.2. */
const AREA_TO_TENTH_M2 = 3599051.2;

let tmp: string;
let archive: string;
let dataDir: string;
let store: Store;
let app: FastifyInstance;
let seeded: ApiStore;
let thermal: SeededThermalPass[];

interface SceneJson {
  id: number; file: string; kind: string | null; pass: string | null; lst_method: string | null; atmospheric_correction: boolean | null;
  thermal_constants_source: string | null; emissivity_source: string | null; how_lst_was_made: string | null; atmospheric_correction_note: string | null;
}

const get = async <T>(url: string): Promise<T> => {
  const r = await app.inject({ method: 'GET', url });
  expect(r.statusCode, `${url}: ${r.body}`).toBe(200);
  return r.json() as T;
};

beforeAll(async () => {
  await ensurePipelineBuild();
  tmp = mkdtempSync(path.join(tmpdir(), 'heatledger-api-thermal-'));
  archive = path.join(tmp, 'archive');
  dataDir = path.join(tmp, 'store');
  store = await openStore({ dataDir });
  seeded = await seedApiStore(store, archive);
  thermal = await addThermalPasses(store, archive);
  await store.query('UPDATE districts SET area_m2 = $1 WHERE id = $2', [NOISY_AREA_M2, 'b2']);
  app = buildApp(store, { logLevel: 'silent', readsPerMinute: 1e6, dataRoot: archive });
}, 600_000);

afterAll(async () => {
  await app?.close();
  await store?.close();
  await killAllChildren();
  if (tmp) rmSync(tmp, { recursive: true, force: true });
});

describe('district areas', () => {
  it('are given to 0.1 m² in the map, its CSV and the district answer', async () => {
    const map = await get<{ features: { id: string; properties: { area_m2: number } }[] }>('/api/districts');
    expect(map.features.find((f) => f.id === 'b2')!.properties.area_m2).toBe(AREA_TO_TENTH_M2);
    // the seeded whole-metre areas stay as they were: 8.9e5 + 1000 i m² (test/support/api-store.ts)
    expect(map.features.find((f) => f.id === 'a1')!.properties.area_m2).toBe(890000);
    expect((await get<{ area_m2: number }>('/api/districts/b2')).area_m2).toBe(AREA_TO_TENTH_M2);
    const csv = await app.inject({ method: 'GET', url: '/api/districts?format=csv' });
    expect(csv.body.split('\n').find((l) => l.startsWith('b2,'))!.split(',')[3]).toBe(String(AREA_TO_TENTH_M2));
    // the GeoJSON export rounds the same column by the same stated precision
    expect(roundingOf('area_m2')).toBe('area');
  });
});

describe('thermal passes in the scene listing', () => {
  it('say how each pass\'s LST was made, with the constants and emissivity stored for it', async () => {
    const body = await get<{ rows: SceneJson[] }>('/api/scenes?kind=thermal');
    expect(body.rows.map((r) => r.id)).toEqual(thermal.map((t) => t.id));
    const [rte, plain] = body.rows;
    expect(rte).toMatchObject({
      kind: 'thermal', pass: 'night', file: `${LAST_YEAR}/thermal-09-10_B10.tif`, lst_method: 'rte', atmospheric_correction: true,
      thermal_constants_source: 'manifest', emissivity_source: 'constant 0.97 (default)', atmospheric_correction_note: null,
    });
    // the sentence names the atmosphere the pass was corrected with (the seeded values)
    expect(rte.how_lst_was_made).toContain('transmittance 0.88, upwelling 0.61 and downwelling 1.02 W m-2 sr-1 um-1');
    expect(rte.how_lst_was_made).not.toContain('no atmospheric correction');
    expect(plain).toMatchObject({
      kind: 'thermal', lst_method: 'emissivity_only', atmospheric_correction: false,
      // the metadata file lies under the data root: shown relative to it, never as the server's path
      thermal_constants_source: `metadata file ${LAST_YEAR}/thermal-09-26_MTL.txt`, emissivity_source: 'district property emissivity',
      atmospheric_correction_note: NO_ATMOSPHERIC_CORRECTION_TEXT,
    });
    expect(plain.how_lst_was_made).toContain(`constants: metadata file ${LAST_YEAR}/thermal-09-26_MTL.txt`);
    expect(plain.how_lst_was_made).toContain(NO_ATMOSPHERIC_CORRECTION_TEXT);
    expect(JSON.stringify(body)).not.toContain(tmp);
  });

  it('give the same row for one scene as in the list, and nulls for scenes of other kinds', async () => {
    const list = await get<{ rows: SceneJson[] }>(`/api/scenes?from=${LAST_YEAR}-01-01&to=${LAST_YEAR}-12-31&limit=100`);
    for (const t of thermal) expect(await get<SceneJson>(`/api/scenes/${t.id}`)).toEqual(list.rows.find((r) => r.id === t.id));
    const others = list.rows.filter((r) => r.kind !== 'thermal');
    expect(others.length).toBe(seeded.scenes.filter((s) => !s.failed && s.acquiredAt?.startsWith(String(LAST_YEAR))).length);
    for (const r of others) {
      expect([r.lst_method, r.atmospheric_correction, r.thermal_constants_source, r.emissivity_source, r.how_lst_was_made, r.atmospheric_correction_note])
        .toEqual([null, null, null, null, null, null]);
    }
  });

  it('are described in the OpenAPI document', async () => {
    const doc = await get<{ paths: Record<string, { get: { responses: Record<string, { content: Record<string, { schema: { properties: Record<string, unknown> } }> }> } }> }>('/api/openapi.json');
    const scene = doc.paths['/api/scenes/{id}'].get.responses['200'].content['application/json'].schema.properties;
    for (const k of ['lst_method', 'atmospheric_correction', 'thermal_constants_source', 'emissivity_source', 'how_lst_was_made', 'atmospheric_correction_note']) expect(scene, k).toHaveProperty(k);
    const status = doc.paths['/api/status'].get.responses['200'].content['application/json'].schema.properties;
    expect(status).toHaveProperty('thermal_scenes');
  });
});

describe('/api/status', () => {
  it('lists the thermal passes as `heatledger status --format json` does, paths relative to the data root', async () => {
    const api = await get<{ thermal_scenes: Record<string, unknown>[] }>('/api/status');
    // the built CLI reads the same store through its owner (this process)
    const cli = JSON.parse(await cliOk(['status', '--format', 'json', '--data-dir', dataDir], cleanEnv(), 180_000)) as { thermal_scenes: Record<string, unknown>[] };
    expect(cli.thermal_scenes.map((t) => t.path)).toEqual(thermal.map((t) => t.path));
    // the CLI shows the operator's full paths; the API the same text with the data root taken off
    const relative = (v: unknown) => (typeof v === 'string' ? v.split(`${archive}/`).join('') : v);
    expect(api.thermal_scenes).toEqual(cli.thermal_scenes.map((t) => Object.fromEntries(Object.entries(t).map(([k, v]) => [k, relative(v)]))));
    expect(api.thermal_scenes.map((t) => t.atmospheric_correction_note)).toEqual([null, NO_ATMOSPHERIC_CORRECTION_TEXT]);
  }, 300_000);
});

describe('the dates a year needs', () => {
  it('are the CLI\'s --min-dates default in the series and hot-spot answers', async () => {
    expect((await get<{ min_dates_per_year: number }>('/api/districts/b2/series')).min_dates_per_year).toBe(MIN_DATES_PER_YEAR);
    expect((await get<{ min_dates_per_year: number }>('/api/hotspots')).min_dates_per_year).toBe(MIN_DATES_PER_YEAR);
  });
});
