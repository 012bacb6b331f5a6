/**
 * Shaping of the export tables (workers/core/export/tidy.ts) against the
 * documented contract (README.md, `export` and `table`): metric names, column
 * order with units in the names, rows kept by year and, per scene, by pass;
 * the rounding kind of each column name. Invented rows; the expected values
 * are the contract itself (common practice, no source).
 */
import { describe, expect, it } from 'vitest';
import { isInputError } from '../../workers/core/errors.js';
import { columnType, parseMetrics, roundingOf, tidyColumns, tidyRows } from '../../workers/core/export/tidy.js';

describe('--metric', () => {
  it('every metric by default; several given space- or comma-separated, in the canonical order', () => {
    expect(parseMetrics(undefined)).toEqual(['lst_day', 'lst_night', 'suhi_day', 'suhi_night', 'ati']);
    expect(parseMetrics(['ati,suhi_night', 'lst_day'])).toEqual(['lst_day', 'suhi_night', 'ati']);
  });
  it('an unknown name is bad input naming it and the choices', () => {
    let err: unknown;
    try { parseMetrics(['suhi_night', 'air_temp']); } catch (e) { err = e; }
    expect(isInputError(err)).toBe(true);
    expect((err as Error).message).toBe('--metric "air_temp" is not a metric; choose from lst_day, lst_night, suhi_day, suhi_night, ati');
  });
});

describe('tidy tables', () => {
  it('columns carry their unit and come in a fixed order per level', () => {
    expect(tidyColumns('date', ['suhi_night', 'ati'])).toEqual(['district', 'name', 'date', 'suhi_night_k', 'ati_per_k', 'day_scenes', 'night_scenes']);
    expect(tidyColumns('year', ['lst_day'])).toEqual(['district', 'name', 'year', 'dates', 'lst_day_k', 'day_scenes', 'night_scenes']);
    expect(tidyColumns('scene', ['suhi_day'])).toEqual(['district', 'name', 'scene_hash', 'acquired_at', 'pass', 'timing_rating', 'valid_fraction', 'suhi_day_k']);
    expect(['date', 'acquired_at', 'year', 'district', 'ati_per_k'].map(columnType)).toEqual(['date', 'timestamp', 'int', 'string', 'double']);
  });

  it('rows within --from/--to; per scene only the passes that carry a chosen metric', () => {
    const rows = [
      { district: 'A', name: 'A', scene_hash: 'h1', acquired_at: '2020-07-01T13:00:00.000Z', pass: 'day', suhi_day_k: 1.5, suhi_night_k: null },
      { district: 'A', name: 'A', scene_hash: 'h2', acquired_at: '2020-07-02T01:00:00.000Z', pass: 'night', suhi_day_k: null, suhi_night_k: 0.5 },
      { district: 'A', name: 'A', scene_hash: 'h3', acquired_at: '2022-07-02T01:00:00.000Z', pass: 'night', suhi_day_k: null, suhi_night_k: 0.7 },
    ];
    expect(tidyRows(rows, 'scene', ['suhi_night'], { from: null, to: 2021 }).map((r) => [r.scene_hash, r.suhi_night_k])).toEqual([['h2', 0.5]]);
    expect(tidyRows(rows, 'scene', ['suhi_day', 'suhi_night'], { from: 2020, to: 2020 })).toHaveLength(2);
    const dates = [{ district: 'A', date: '2019-12-31', suhi_night_k: 1 }, { district: 'A', date: '2020-01-01', suhi_night_k: 2 }];
    expect(tidyRows(dates, 'date', ['suhi_night'], { from: 2020, to: null }).map((r) => r.date)).toEqual(['2020-01-01']);
  });
});

describe('rounding kind by column name', () => {
  it('K, 1/K, slopes per decade, p and q, fractions and areas', () => {
    expect(Object.fromEntries([
      'lst_day_k', 'suhi_night_2024_k', 'ati_per_k', 'ati_2024_per_k', 'suhi_night_slope_k_per_decade',
      'suhi_night_slope_ci_upper_k_per_decade', 'ati_slope_ci_lower_per_k_per_decade', 'suhi_night_trend_p', 'ati_trend_q',
      'valid_fraction', 'area_m2', 'dates_2024', 'district',
    ].map((c) => [c, roundingOf(c)]))).toEqual({
      lst_day_k: 'kelvin', suhi_night_2024_k: 'kelvin', ati_per_k: 'perKelvin', ati_2024_per_k: 'perKelvin',
      suhi_night_slope_k_per_decade: 'kelvinSlope', suhi_night_slope_ci_upper_k_per_decade: 'kelvinSlope',
      ati_slope_ci_lower_per_k_per_decade: 'perKelvinSlope', suhi_night_trend_p: 'probability', ati_trend_q: 'probability',
      valid_fraction: 'fraction', area_m2: 'area', dates_2024: null, district: null,
    });
  });
});
