/**
 * workers/core/defaults.ts: the documented defaults and the caution, and the
 * core modules that take their defaults from it.
 */
import { describe, expect, it } from 'vitest';
import * as defaults from '../../workers/core/defaults.js';
import { DEFAULT_DERIVE_OPTIONS } from '../../workers/core/derive/metrics.js';
import { nearestAlbedo, pairDayNight } from '../../workers/core/derive/pairing.js';
import { atiWithReason } from '../../workers/core/thermal/index.js';
import { InputError } from '../../workers/core/errors.js';

describe('caution wording', () => {
  // The four points every heat-health output carries: common practice, no source.
  const POINTS: [string, RegExp][] = [
    ['LST is surface skin temperature, not air temperature', /skin\) temperature, not air temperature/],
    ['yearly means depend on which days were clear', /yearly means .*depend on which days were clear/i],
    ['SUHI depends on the rural reference chosen', /SUHI (depends )?on the rural reference chosen/],
    ['results inform, and do not replace, local plans, codes and professionals', /inform, and do not replace, local heat-action plans, codes and licensed professionals/],
  ];
  for (const [form, text] of [['long', defaults.CAUTION_TEXT], ['short', defaults.CAUTION_SHORT_TEXT]] as const) {
    for (const [point, pattern] of POINTS) {
      it(`${form} form says: ${point}`, () => expect(text).toMatch(pattern));
    }
  }
  it('the short form is one sentence and shorter than the long form', () => {
    expect(defaults.CAUTION_SHORT_TEXT.length).toBeLessThan(defaults.CAUTION_TEXT.length);
    expect(defaults.CAUTION_SHORT_TEXT.replace(/\.$/, '')).not.toMatch(/\.\s/);
  });
});

describe('the core reads its defaults from defaults.ts', () => {
  it('derive options', () => {
    expect(DEFAULT_DERIVE_OPTIONS).toEqual({
      pairingWindowHours: defaults.PAIRING_WINDOW_HOURS,
      albedoWindowDays: defaults.ALBEDO_WINDOW_DAYS,
      minValidFraction: defaults.MIN_VALID_FRACTION,
      minDifferenceKelvin: defaults.ATI_MIN_DIFFERENCE_KELVIN,
    });
  });

  it('pairing windows: a night just inside / outside the default window', () => {
    // Window arithmetic on ISO timestamps: common practice, no source.
    const dayScene = { id: 1, acquiredAt: '2024-07-10T12:00:00Z' };
    const at = (hours: number) => new Date(Date.parse(dayScene.acquiredAt) + hours * 3_600_000).toISOString();
    expect(pairDayNight([dayScene], [{ id: 2, acquiredAt: at(defaults.PAIRING_WINDOW_HOURS) }]).get(1)?.id).toBe(2);
    expect(pairDayNight([dayScene], [{ id: 2, acquiredAt: at(defaults.PAIRING_WINDOW_HOURS + 0.01) }]).get(1)).toBeNull();
    expect(nearestAlbedo(dayScene, [{ id: 3, acquiredAt: at(24 * defaults.ALBEDO_WINDOW_DAYS) }])?.id).toBe(3);
    expect(nearestAlbedo(dayScene, [{ id: 3, acquiredAt: at(24 * defaults.ALBEDO_WINDOW_DAYS + 1) }])).toBeNull();
  });

  it('ATI minimum day-night difference', () => {
    // ATI = (1 - albedo) / (T_day - T_night) (Price 1977): undefined at or below the minimum difference.
    const night = 290;
    expect(atiWithReason({ albedo: 0.2, dayKelvin: night + defaults.ATI_MIN_DIFFERENCE_KELVIN, nightKelvin: night }).reason).toBe('difference-too-small');
    const r = atiWithReason({ albedo: 0.2, dayKelvin: night + 2 * defaults.ATI_MIN_DIFFERENCE_KELVIN, nightKelvin: night });
    expect(r.value).toBeCloseTo(0.8 / (2 * defaults.ATI_MIN_DIFFERENCE_KELVIN), 12);
  });

  it('a pairing or albedo window that is not a positive number is an InputError naming the function', () => {
    const d = { id: 1, acquiredAt: '2024-07-10T12:00:00Z' };
    expect(() => pairDayNight([d], [], 0)).toThrow(InputError);
    expect(() => pairDayNight([d], [], Number.NaN)).toThrow(/^pairDayNight: pairing window \(hours\) must be a finite number/);
    expect(() => nearestAlbedo(d, [], -1)).toThrow(/^nearestAlbedo: albedo window \(days\) must be greater than 0, got -1/);
  });
});
