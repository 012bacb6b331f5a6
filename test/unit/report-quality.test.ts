/**
 * The report's data-quality figures over a handful of invented scenes: which
 * scenes count for which season-year, the crossover share, the mean clear
 * share per district, and the districts and years with too little data.
 */
import { describe, expect, it } from 'vitest';
import { seasonMonths } from '../../workers/core/trend/index.js';
import { constantsSourceWords, emissivitySourceWords, qualityFigures } from '../../api/report/quality.js';
import type { ReportData, SceneAnswerRow } from '../../api/report/answers.js';
import { UNITS } from '../../api/answers/index.js';

let nextId = 1;
function scene(at: string, pass: 'day' | 'night', rating: string, state: 'processed' | 'failed' | 'registered', fractions: Record<string, number>): SceneAnswerRow & { content_hash: string | null } {
  return {
    id: nextId++, file: `s${nextId}.tif`, acquired_at: at, pass, kind: 'lst', sensor: null, timing_rating: rating, state, reason: null, warnings: [],
    districts: Object.entries(fractions).map(([district, valid_fraction]) => ({ district, valid_fraction, missing_reason: null })), content_hash: null,
  };
}

function data(season: 'summer' | 'winter', scenes: ReturnType<typeof scene>[], extra: Partial<ReportData> = {}): ReportData {
  const feature = (id: string, datesDay: number, datesNight: number) => ({
    type: 'Feature' as const, id, geometry: { type: 'Polygon', coordinates: [] },
    properties: { id, name: id.toUpperCase(), role: 'district' as const, area_m2: 1, lst_day_k: 300, lst_night_k: 290, suhi_day_k: 1, suhi_night_k: 1, ati_per_k: null, dates_day: datesDay, dates_night: datesNight, value: 1 },
  });
  return {
    request: { year: 2024, season, baseline: { from: 2020, to: 2021 }, units: 'C', alpha: 0.05 },
    version: '0', madeAt: '2024-12-01T00:00:00Z',
    health: { ok: true, store: 'pglite', schema_version: 1, version: '0', last_run: null, years: [2021, 2022, 2024] },
    districts: { type: 'FeatureCollection', year: 2024, season, metric: 'suhi_night', years: [], units: UNITS, caution: '', next_cursor: null, features: [feature('a', 3, 3), feature('b', 2, 4)] },
    previous: null, baselineYears: [],
    rankingNight: { year: 2024, previous_year: null, metric: 'suhi_night', season, unit: 'K', order: 'desc', next_cursor: null, rows: [] },
    rankingDay: { year: 2024, previous_year: null, metric: 'suhi_day', season, unit: 'K', order: 'desc', next_cursor: null, rows: [] },
    trendsNight: { metric: 'suhi_night', season, alpha: 0.05, serial_correction: 'none', unit: 'K', districts_tested: 0, next_cursor: null, rows: [] },
    trendsDay: { metric: 'suhi_day', season, alpha: 0.05, serial_correction: 'none', unit: 'K', districts_tested: 0, next_cursor: null, rows: [] },
    series: [], hotspots: null, hotspotsMissing: null, scenes,
    run: { id: 1, mode: 'embedded', softwareVersion: '0', finishedAt: null, state: 'succeeded', parameters: { minValidFraction: 0.5 } },
    selection: seasonMonths(season, 'north'), minDates: 3,
    ...extra,
  };
}

describe('data quality', () => {
  it('counts the season\'s scenes per year and pass, and the crossover share of the used ones', () => {
    const q = qualityFigures(data('summer', [
      scene('2024-07-01T11:00:00Z', 'day', 'midday', 'processed', { a: 1, b: 0.4 }),
      scene('2024-07-01T23:00:00Z', 'night', 'predawn', 'processed', { a: 0.8, b: 0.6 }),
      scene('2024-08-01T06:00:00Z', 'day', 'crossover', 'processed', { a: 0.6, b: 0.2 }),
      scene('2024-08-02T06:00:00Z', 'day', 'midday', 'failed', {}),
      scene('2024-03-01T11:00:00Z', 'day', 'midday', 'processed', { a: 0, b: 0 }), // spring: not in the summer months
      scene('2023-07-01T11:00:00Z', 'night', 'crossover', 'processed', { a: 1, b: 1 }),
      scene('2025-07-01T11:00:00Z', 'day', 'midday', 'processed', { a: 1, b: 1 }), // after the report year
    ]));
    expect(q.byYear).toEqual([
      { year: 2023, day: 0, night: 1, notUsed: 0, crossoverDay: 0, crossoverNight: 1, thermal: 0, uncorrected: 0 },
      { year: 2024, day: 2, night: 1, notUsed: 1, crossoverDay: 1, crossoverNight: 0, thermal: 0, uncorrected: 0 },
    ]);
    expect(q.crossoverShare).toBeCloseTo(2 / 4, 12);
    expect(q.crossoverKept).toBe(true);
    // means over the report year's used passes only; a pass below 0.5 counts as below
    const a = q.coverage.find((c) => c.district === 'a')!;
    const b = q.coverage.find((c) => c.district === 'b')!;
    expect(a.validDay).toBeCloseTo(0.8, 12);
    expect(a.validNight).toBeCloseTo(0.8, 12);
    expect([a.passesBelow, a.passes]).toEqual([0, 3]);
    expect(b.validDay).toBeCloseTo(0.3, 12);
    expect([b.passesBelow, b.passes]).toEqual([2, 3]);
    // b has only 2 clear day dates (< 3 needed for a trend year); 2023 has no values at all
    expect(q.thinDistricts.map((c) => c.district)).toEqual(['b']);
    expect(q.yearsWithoutData).toEqual([2023]);
  });

  it('a December scene counts with the next winter (meteorological seasons; common practice, no source)', () => {
    const q = qualityFigures(data('winter', [
      scene('2023-12-15T11:00:00Z', 'day', 'midday', 'processed', { a: 1 }),
      scene('2024-02-15T11:00:00Z', 'day', 'midday', 'processed', { a: 1 }),
      scene('2024-12-15T11:00:00Z', 'day', 'midday', 'processed', { a: 1 }), // winter 2025
    ]));
    expect(q.byYear.map((y) => [y.year, y.day])).toEqual([[2024, 2]]);
  });

  it('a run setting that leaves crossover passes out is reported as such', () => {
    const d = data('summer', [scene('2024-07-01T06:00:00Z', 'day', 'midday', 'processed', { a: 1 })]);
    d.run!.parameters = { excludeCrossover: true };
    const q = qualityFigures(d);
    expect(q.crossoverKept).toBe(false);
    expect(q.crossoverSetting).toBe('excludeCrossover = true');
  });
});

describe('thermal passes in the data quality', () => {
  const thermal = (at: string, method: 'rte' | 'emissivity_only', constants: string, emissivity: string) => ({
    ...scene(at, 'night', 'predawn', 'processed', { a: 0.9 }), kind: 'thermal' as const,
    thermal: { lst_method: method, constants_source: constants, emissivity_source: emissivity, how: '' },
  });

  it('counts them by method and source, and lists those without atmospheric correction of the season', () => {
    const q = qualityFigures(data('summer', [
      thermal('2024-07-02T03:00:00Z', 'rte', 'metadata file a_MTL.txt', 'NDVI-threshold method on n.tif of day scene d.tif (2024-07-01T11:00:00Z, 0.7 d away)'),
      thermal('2024-07-20T03:00:00Z', 'emissivity_only', 'metadata file b_MTL.txt', 'constant 0.97 (default)'),
      thermal('2023-08-20T03:00:00Z', 'emissivity_only', 'built-in table (LANDSAT_8 band 10)', 'per district: district property emissivity 0.95; constant 0.97 (default)'),
      thermal('2024-09-20T03:00:00Z', 'emissivity_only', 'manifest', 'constant 0.97 (default)'), // September: not summer
      scene('2024-07-01T11:00:00Z', 'day', 'midday', 'processed', { a: 1 }),
    ]));
    expect(q.thermal).toEqual({
      passes: 3, withAtmosphere: 1, emissivityOnly: 2,
      constants: [
        { source: "the scene's own metadata file", passes: 2 },
        { source: 'the built-in table of published constants (LANDSAT_8 band 10)', passes: 1 },
      ],
      emissivity: [
        { source: 'a constant emissivity of 0.97', passes: 1 },
        { source: "each district's own emissivity value, else a constant", passes: 1 },
        { source: 'the NDVI-threshold method on the vegetation index (NDVI) of a nearby day pass', passes: 1 },
      ],
      uncorrected: [
        { year: 2023, date: '2023-08-20', pass: 'night', file: expect.any(String) },
        { year: 2024, date: '2024-07-20', pass: 'night', file: expect.any(String) },
      ],
      uncorrectedOutside: 1, // the September pass: in the store, outside the summer months
    });
    // thermal passes are night passes of their year
    expect(q.byYear.map((y) => [y.year, y.day, y.night, y.thermal, y.uncorrected])).toEqual([[2023, 0, 1, 1, 1], [2024, 1, 2, 2, 1]]);
  });

  it('has none when no thermal pass was used', () => {
    expect(qualityFigures(data('summer', [scene('2024-07-01T11:00:00Z', 'day', 'midday', 'processed', { a: 1 })])).thermal).toBeNull();
  });

  it('says each kind of source in plain words', () => {
    expect(constantsSourceWords('manifest')).toBe("the archive's manifest");
    expect(constantsSourceWords(null)).toBe('not recorded');
    expect(emissivitySourceWords('emissivity raster e.tif')).toBe('an emissivity raster given for the scene');
    expect(emissivitySourceWords('constant 0.96 (manifest)')).toBe('a constant emissivity of 0.96 given in the manifest');
    expect(emissivitySourceWords('district property emissivity 0.95')).toBe("each district's own emissivity value");
    expect(emissivitySourceWords('NDVI-threshold method on r.tif and n.tif of day scene d.tif (2024-07-01T11:00:00Z, 1 d away)'))
      .toBe('the NDVI-threshold method on red and near-infrared reflectance of a nearby day pass');
    expect(emissivitySourceWords('NDVI-threshold method on n.tif')).toBe('the NDVI-threshold method on the vegetation index (NDVI) given for the scene');
  });
});
