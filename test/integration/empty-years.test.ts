/**
 * Years with no values: every command that reads district values for chosen
 * years (table, trend, export, hotspots, report) stops with exit 2 and one line
 * naming the years asked and the years the store has, and writes nothing —
 * the project's exit-code contract (exit 0 only when everything asked was
 * done; bad input = 2), common practice, no source. The store is the small
 * seeded store of the CLI tests: values in July 2024 only.
 */
import { existsSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { afterAll, afterEach, beforeAll, describe, expect, it, vi } from 'vitest';
import { openStore } from '../../workers/store/store.js';
import { yearRuns, yearsWithValuesIn } from '../../workers/store/store-summary.js';
import { seedHeatStore } from '../support/heat-store.js';
import { runCliInProcess, type InProcessRun } from '../support/cli-in-process.js';

let tmp: string;
let dataDir: string;

beforeAll(async () => {
  tmp = mkdtempSync(path.join(tmpdir(), 'heatledger-years-'));
  dataDir = path.join(tmp, 'store');
  const store = await openStore({ dataDir });
  try {
    await seedHeatStore(store, path.join(tmp, 'archive'));
  } finally {
    await store.close();
  }
}, 300_000);
afterAll(() => { if (tmp) rmSync(tmp, { recursive: true, force: true }); });
afterEach(() => vi.restoreAllMocks());

function run(argv: string[]): Promise<InProcessRun> {
  return runCliInProcess([...argv, '--data-dir', dataDir]);
}

describe('the years a store has, as one line', () => {
  it('runs of consecutive years are joined with a hyphen', () => {
    expect(yearRuns([2024, 2015, 2016, 2017, 2019, 2020, 2022])).toBe('2015-2017, 2019-2020, 2022, 2024');
    expect(yearsWithValuesIn([2015, 2016, 2018], { from: 2016 })).toEqual([2016, 2018]);
    expect(() => yearsWithValuesIn([2015, 2016, 2018], { from: 2017, to: 2017 })).toThrow('no district values for 2017; the store has 2015-2016, 2018');
    expect(() => yearsWithValuesIn([2015], { to: 2014 })).toThrow('no district values for 2014 or earlier; the store has 2015');
    expect(() => yearsWithValuesIn([], {})).toThrow('the store holds no district values yet: run `heatledger ingest` first');
  });
});

describe('a year with no values', () => {
  it.each([
    ['table --year 2031', ['table', '--year', '2031', '--format', 'csv'], '2031'],
    ['trend --from 2030 --to 2031', ['trend', '--metric', 'suhi_night', '--from', '2030', '--to', '2031', '--format', 'csv'], '2030-2031'],
    ['trend --to 2020', ['trend', '--metric', 'lst_day', '--to', '2020'], '2020 or earlier'],
    ['export --from 2030 (csv)', ['export', '--format', 'csv', '--from', '2030', '--out', 'TMP/out.csv'], '2030 or later'],
    ['export --from 2030 (geojson)', ['export', '--format', 'geojson', '--from', '2030', '--out', 'TMP/out.geojson'], '2030 or later'],
    ['hotspots --year 2031', ['hotspots', '--metric', 'suhi_night', '--year', '2031'], '2031'],
    ['report --year 2031', ['report', '--year', '2031', '--out', 'TMP/report.html'], '2031'],
  ])('%s: exit 2, one line naming the years the store has, nothing written', async (_name, argv, asked) => {
    const r = await run(argv.map((a) => a.replace('TMP', tmp)));
    expect(r.code).toBe(2);
    expect(r.stdout).toBe('');
    expect(r.stderr).toBe(`heatledger: no district values for ${asked}; the store has 2024\n`);
    for (const f of ['out.csv', 'out.csv.json', 'out.geojson', 'out.geojson.json', 'report.html']) expect(existsSync(path.join(tmp, f)), f).toBe(false);
  });

  it('the year the store has is answered (control): table --year 2024 and export --from 2024 exit 0 with rows', async () => {
    const t = await run(['table', '--year', '2024', '--format', 'csv']);
    expect(t.code, t.stderr).toBe(0);
    expect(t.stdout.trim().split('\n').length).toBeGreaterThan(1);
    const e = await run(['export', '--format', 'csv', '--from', '2024', '--out', path.join(tmp, 'kept.csv')]);
    expect(e.code, e.stderr).toBe(0);
    expect(existsSync(path.join(tmp, 'kept.csv'))).toBe(true);
  });
});
