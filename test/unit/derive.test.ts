import { describe, expect, it } from 'vitest';
import { nearestAlbedo, pairDayNight, utcDate } from '../../workers/core/derive/pairing.js';
import { deriveMetrics, type SceneInfo, type StatInfo } from '../../workers/core/derive/metrics.js';

const day = (id: number, t: string): SceneInfo => ({ id, acquiredAt: t, kind: 'lst', pass: 'day' });
const night = (id: number, t: string): SceneInfo => ({ id, acquiredAt: t, kind: 'lst', pass: 'night' });

describe('day/night pairing (nearest night within the window)', () => {
  // The pairing rule (same diurnal cycle, nearest to the pre-dawn minimum) follows
  // Kahle & Alley 1985 (PE&RS 51); the timestamps below are hand-made edge cases.
  it('takes the nearer of two night candidates', () => {
    const d = day(1, '2024-07-10T13:30:00Z');
    const pre = night(2, '2024-07-10T02:00:00Z'); // 11.5 h before
    const after = night(3, '2024-07-11T01:30:00Z'); // 12 h after
    expect(pairDayNight([d], [after, pre]).get(1)?.id).toBe(2);
  });
  it('breaks an exact tie in favour of the earlier (pre-dawn) night', () => {
    const d = day(1, '2024-07-10T13:30:00Z');
    const pre = night(2, '2024-07-10T01:30:00Z'); // 12 h before
    const after = night(3, '2024-07-11T01:30:00Z'); // 12 h after
    expect(pairDayNight([d], [after, pre]).get(1)?.id).toBe(2);
  });
  it('leaves a day unpaired when no night is within 18 h', () => {
    const d = day(1, '2024-07-10T13:30:00Z');
    expect(pairDayNight([d], [night(2, '2024-07-11T08:00:00Z')]).get(1)).toBeNull(); // 18.5 h
    expect(pairDayNight([d], [night(2, '2024-07-11T07:30:00Z')]).get(1)?.id).toBe(2); // exactly 18 h is inside
  });
  it('does not pair with the following day\'s night', () => {
    const d = day(1, '2024-07-10T13:30:00Z');
    expect(pairDayNight([d], [night(2, '2024-07-12T01:30:00Z')]).get(1)).toBeNull(); // 36 h
    expect(pairDayNight([d], [night(2, '2024-07-12T01:30:00Z')], 40).get(1)?.id).toBe(2);
  });
  it('finds the nearest albedo scene within 32 days', () => {
    const d = day(1, '2024-07-10T13:30:00Z');
    const a = [
      { id: 7, acquiredAt: '2024-06-01T12:00:00Z' }, // 39 days before
      { id: 8, acquiredAt: '2024-08-05T12:00:00Z' }, // 26 days after
    ];
    expect(nearestAlbedo(d, a)?.id).toBe(8);
    expect(nearestAlbedo(d, a, 20)).toBeNull();
  });
  it('dates rows by the UTC calendar date', () => {
    expect(utcDate('2024-07-10T23:59:59+00:00')).toBe('2024-07-10');
    expect(utcDate('2024-07-11T01:30:00+02:00')).toBe('2024-07-10');
  });
});

describe('ATI and SUHI on hand-computed values', () => {
  const scenes: SceneInfo[] = [
    day(1, '2024-07-10T13:30:00Z'),
    night(2, '2024-07-11T01:30:00Z'),
    { id: 3, acquiredAt: '2024-07-01T12:00:00Z', kind: 'albedo', pass: null },
  ];
  const st = (sceneId: number, districtId: string, mean: number | null, validFraction: number | null): StatInfo => ({ sceneId, districtId, mean, validFraction });
  const stats: StatInfo[] = [
    st(1, 'core', 320, 1), st(2, 'core', 290, 1), st(3, 'core', 0.2, 1),
    st(1, 'park', 305, 0.9), st(2, 'park', 288, 0.3), st(3, 'park', 0.18, 1),
    st(1, 'rural', 300, 0.8), st(2, 'rural', 286, 0.7),
  ];
  const rows = deriveMetrics({
    scenes, stats, ruralId: 'rural',
    districts: [{ id: 'core', albedoProperty: null }, { id: 'park', albedoProperty: 0.5 }],
  });
  it('ATI = (1 - albedo) / (T_day - T_night) (Price 1977)', () => {
    const core = rows.find((r) => r.districtId === 'core')!;
    // (1 - 0.2) / (320 - 290) = 0.0266667 K^-1 (derived from ATI = (1 - a) / (T_day - T_night), Price 1977)
    expect(core.atiPerKelvin).toBeCloseTo(0.8 / 30, 12);
    expect(core.albedoSource).toBe('scene');
    expect(core.albedoSceneId).toBe(3);
    expect(core.obsDate).toBe('2024-07-10');
    expect(core.status).toBe('ok');
  });
  it('SUHI = district mean minus rural mean of the same scene', () => {
    // SUHI intensity = urban minus rural-reference LST from the same scene, day and night apart
    // (Peng et al. 2012, "Surface Urban Heat Island Across 419 Global Big Cities", Environ. Sci.
    // Technol. 46:696-703, pages from memory); the numbers are derived by hand.
    const core = rows.find((r) => r.districtId === 'core')!;
    expect(core.suhiDayKelvin).toBeCloseTo(20, 12); // 320 - 300
    expect(core.suhiNightKelvin).toBeCloseTo(4, 12); // 290 - 286
  });
  it('a pass below the valid-fraction threshold gives no night value, no night SUHI and no ATI', () => {
    const park = rows.find((r) => r.districtId === 'park')!;
    expect(park.tDayKelvin).toBe(305);
    expect(park.suhiDayKelvin).toBeCloseTo(5, 12);
    expect(park.tNightKelvin).toBeNull();
    expect(park.suhiNightKelvin).toBeNull();
    expect(park.atiPerKelvin).toBeNull();
    expect(park.status).toMatch(/night: valid fraction 0\.30 below 0\.5/);
  });
  it('ATI is undefined (null, not infinite) when T_day - T_night is not positive', () => {
    const r = deriveMetrics({
      scenes: scenes.slice(0, 2), ruralId: 'rural',
      stats: [st(1, 'a', 290, 1), st(2, 'a', 290.2, 1), st(1, 'rural', 290, 1), st(2, 'rural', 290, 1)],
      districts: [{ id: 'a', albedoProperty: 0.15 }],
    })[0];
    expect(r.albedoSource).toBe('property');
    expect(r.atiPerKelvin).toBeNull();
    expect(r.status).toMatch(/ATI/);
  });
  it('a night no day took gets a night-only row; a day without albedo says why', () => {
    const r = deriveMetrics({
      scenes: [day(1, '2024-07-10T13:30:00Z'), night(2, '2024-07-10T01:30:00Z'), night(5, '2024-07-20T01:30:00Z')],
      ruralId: 'rural',
      stats: [st(1, 'a', 310, 1), st(2, 'a', 290, 1), st(5, 'a', 291, 1), st(1, 'rural', 305, 1), st(2, 'rural', 288, 1), st(5, 'rural', 289, 1)],
      districts: [{ id: 'a', albedoProperty: null }],
    });
    expect(r).toHaveLength(2);
    expect(r[0].atiPerKelvin).toBeNull();
    expect(r[0].status).toMatch(/no albedo/);
    expect(r[1]).toMatchObject({ obsDate: '2024-07-20', daySceneId: null, nightSceneId: 5, tNightKelvin: 291, suhiNightKelvin: 2 });
  });
});
