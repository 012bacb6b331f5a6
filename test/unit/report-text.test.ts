/**
 * How the report writes numbers, and the options of `heatledger report`.
 */
import { describe, expect, it } from 'vitest';
import { difference, figure, fixed, temperature } from '../../api/report/text.js';
import { baselineMean, cityMean } from '../../api/report/summary.js';
import { parseBaseline } from '../../workers/commands/report.js';
import { ruralWords, runSettingRows } from '../../api/report/sections.js';
import { UNITS, type DistrictsAnswer } from '../../api/answers/index.js';

describe('temperatures in the unit asked for', () => {
  it('kelvin to degrees Celsius: t/°C = T/K − 273.15 (BIPM, The International System of Units, 9th ed. 2019, §2.3.1)', () => {
    expect(temperature(273.15, 'C')).toBe('0.0 °C');
    expect(temperature(300, 'C')).toBe('26.9 °C'); // 26.85 is stored as 26.850000000000023, so it rounds up
    expect(temperature(300, 'K')).toBe('300.0 K');
    expect(temperature(null, 'C')).toBe('–');
  });

  it('a difference has the same number in K and °C (the degree Celsius equals the kelvin in size, same source)', () => {
    expect(difference(2.345, 'K')).toBe('+2.35 K'); // 2.345 is stored above 2.345 (2.34500000000000019984)
    expect(difference(2.345, 'C')).toBe('+2.35 °C');
    expect(difference(-0.004, 'C')).toBe('0.00 °C'); // no "−0.00" and no sign on a zero
    expect(difference(-1.5, 'K', 1)).toBe('−1.5 K'); // a true minus sign (U+2212), common practice, no source
  });

  it('fixed: no negative zero, a plus only when asked', () => {
    expect(fixed(-0.0001, 2)).toBe('0.00');
    expect(fixed(0.126, 2, true)).toBe('+0.13');
    expect(fixed(Number.NaN, 2)).toBe('–');
  });

  it('a figure keeps the value it states, rounded as the API rounds (0.0001 K), and escapes its text', () => {
    expect(figure('x', 1.23456, '<1.23>')).toBe('<data data-figure="x" value="1.2346">&#60;1.23&#62;</data>');
    // binary floating point noise of a mean (0.1 + 0.2 = 0.30000000000000004, IEEE 754 double) does not reach the value
    expect(figure('x', 0.1 + 0.2, '0.30')).toBe('<data data-figure="x" value="0.3">0.30</data>');
    expect(figure('x', null, 'n/a')).toBe('<data data-figure="x" value="">n/a</data>');
  });
});

describe('the city figure', () => {
  const feature = (id: string, role: 'district' | 'rural', area: number, night: number | null, day: number | null) => ({
    type: 'Feature' as const, id, geometry: { type: 'Polygon', coordinates: [] },
    properties: { id, name: id, role, area_m2: area, lst_day_k: null, lst_night_k: null, suhi_day_k: day, suhi_night_k: night, ati_per_k: null, dates_day: 3, dates_night: 3, value: night },
  });
  const answer = (year: number, features: ReturnType<typeof feature>[]): DistrictsAnswer => ({
    type: 'FeatureCollection', year, season: 'summer', metric: 'suhi_night', years: [], units: UNITS, caution: '', next_cursor: null, features,
  });

  it('is the area-weighted mean of the districts with a value; the rural reference and missing values are left out (weighted arithmetic mean, by definition)', () => {
    const a = answer(2024, [feature('a', 'district', 1e6, 3, 1), feature('b', 'district', 3e6, 1, null), feature('c', 'district', 5e6, null, 2), feature('r', 'rural', 9e7, 0, 0)]);
    expect(cityMean(a, 'suhi_night_k')).toBeCloseTo((3 * 1 + 1 * 3) / 4, 12); // 1.5
    expect(cityMean(a, 'suhi_day_k')).toBeCloseTo((1 * 1 + 2 * 5) / 6, 12);
    expect(cityMean(answer(2024, [feature('r', 'rural', 1, 2, 2)]), 'suhi_night_k')).toBeNull();
  });

  it('the baseline is the mean of the yearly city figures, each year once; years without values are left out', () => {
    const years = [answer(2019, [feature('a', 'district', 1, 1, 1)]), answer(2020, [feature('a', 'district', 1, 2, 2)]), answer(2021, [feature('a', 'district', 1, null, null)])];
    expect(baselineMean(years, 'suhi_night_k')).toEqual({ value: 1.5, years: [2019, 2020] });
  });
});

describe('--baseline', () => {
  it('takes a range or one year in decimal digits', () => {
    expect(parseBaseline('2019-2021')).toEqual({ from: 2019, to: 2021 });
    expect(parseBaseline('2020')).toEqual({ from: 2020, to: 2020 });
  });

  it('refuses a reversed, hexadecimal or open range by naming the option', () => {
    for (const bad of ['2021-2019', '0x7e3-2021', '2019-', '19-21', '2019 - 2021x', '1900-1901']) expect(() => parseBaseline(bad)).toThrow(/--baseline/);
  });
});

describe('the rural reference in plain words', () => {
  it('says the default ring in kilometres from the city edge (1 km = 1000 m, SI), and its water cut', () => {
    expect(ruralWords('ring 2000-10000 m outside the union of the districts, water from sea.geojson excluded'))
      .toBe("the land between 2 km and 10 km outside the city's outer edge (all districts taken together), with the water of sea.geojson cut out");
    expect(ruralWords('ring 500-2500 m outside the union of the districts')).toBe("the land between 500 m and 2.5 km outside the city's outer edge (all districts taken together)");
  });
  it('says a user\'s polygons by their file, and keeps any other description as the run recorded it', () => {
    expect(ruralWords('user polygon(s) from rural area.geojson')).toBe('the area drawn in the file rural area.geojson');
    expect(ruralWords('fields north of the airport')).toBe('fields north of the airport');
  });
});

describe('the run settings in plain words', () => {
  const stored = {
    qaMaskBits: 40, minValidFraction: 0.5, pairingWindowHours: 18, albedoWindowDays: 32, atiMinDifferenceKelvin: 0.5,
    plausibleRangeKelvin: [170, 360], coverageRule: 'centre', districtIds: ['D01', 'D02', 'D03'],
    ruralReference: { districtId: 'rural', description: 'ring 2000-10000 m outside the union of the districts, water from sea.geojson excluded' },
    cloudRule: 'strict',
  };
  it('lists each known setting in words, in a fixed order, with no program key; an unknown one keeps its key', () => {
    const rows = runSettingRows(stored, 'K');
    expect(rows.map((r) => r[0])).toEqual([
      'Districts', 'Rural reference', 'Pixels of a district', 'Readings kept as surface temperature', 'Pixels flagged by the data provider',
      'Clear view a pass needs', 'Day and night passes paired', 'Ground brightness (albedo) for ATI', 'ATI computed', 'cloudRule',
    ]);
    const how = Object.fromEntries(rows);
    expect(how.Districts).toBe('3, each compared with the rural reference');
    expect(how['Rural reference']).toBe("The land between 2 km and 10 km outside the city's outer edge (all districts taken together), with the water of sea.geojson cut out");
    // 40 = 2^3 + 2^5 (binary expansion; bit 0 the lowest, common practice, no source)
    expect(how['Pixels flagged by the data provider']).toBe('Left out when the quality flag has bits 3 and 5 set');
    expect(how['Clear view a pass needs']).toBe('At least 50 % of the district');
    expect(how['Readings kept as surface temperature']).toBe('From 170.0 K to 360.0 K; others are left out as faulty');
    expect(how.cloudRule).toBe('strict');
    for (const [what, text] of rows.slice(0, -1)) expect(`${what} ${text}`).not.toMatch(/[a-z][A-Z]/);
  });
  it('says the plausible range in °C when the report is in °C (t/°C = T/K − 273.15, BIPM SI Brochure 9th ed. §2.3.1)', () => {
    expect(Object.fromEntries(runSettingRows({ plausibleRangeKelvin: [273.15, 323.15], qaMaskBits: null }, 'C'))).toEqual({
      'Readings kept as surface temperature': 'From 0.0 °C to 50.0 °C; others are left out as faulty',
      'Pixels flagged by the data provider': 'No quality flags were used',
    });
  });
});
