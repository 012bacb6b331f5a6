import { describe, expect, it } from 'vitest';
import { InputError } from '../../workers/core/errors.js';
import { emissivityNdviThreshold, ndvi, vegetationFraction } from '../../workers/core/thermal/emissivity.js';
import {
  BOLTZMANN_J_PER_K,
  PLANCK_J_S,
  RHO_METRE_KELVIN,
  RHO_MICROMETRE_KELVIN,
  SPEED_OF_LIGHT_M_PER_S,
  lstFromBrightnessTemperature,
} from '../../workers/core/thermal/lst.js';

// Expected values: /work/shared/METHODS.md sections 2.1-2.2, items 8-11.

describe('physical constants', () => {
  it('uses the exact SI (CODATA 2018) values of h, c and k_B', () => {
    // SI brochure, 9th ed. (2019): h, c and k_B are defined exactly (common practice, no source needed beyond the SI).
    expect(PLANCK_J_S).toBe(6.62607015e-34);
    expect(SPEED_OF_LIGHT_M_PER_S).toBe(299792458);
    expect(BOLTZMANN_J_PER_K).toBe(1.380649e-23);
  });

  it('METHODS item 9: rho = h c / k_B = 1.4387769e-2 m K [D]', () => {
    expect(RHO_METRE_KELVIN).toBeCloseTo(1.4387769e-2, 9);
    // CODATA second radiation constant c2 = 1.438776877e-2 m K (from memory).
    expect(RHO_MICROMETRE_KELVIN).toBeCloseTo(14387.76877, 3);
  });
});

describe('lstFromBrightnessTemperature (Artis & Carnahan 1982; Weng et al. 2004)', () => {
  it('METHODS item 8 [D]', () => {
    expect(lstFromBrightnessTemperature(300, 0.97)).toBeCloseTo(302.0903, 4); // lambda 10.895 um, rho 14388 um K
    expect(lstFromBrightnessTemperature(300, 0.97, 10.895, 14380)).toBeCloseTo(302.0914, 4); // rho 1.438e-2 m K
    expect(lstFromBrightnessTemperature(300, 0.99)).toBeCloseTo(300.6865, 4);
    expect(lstFromBrightnessTemperature(300, 1)).toBe(300);
  });

  it('rounding rho to 14388 um K moves LST by only ~0.03 mK', () => {
    // Derived from the formula: d(LST) ~ LST * (correction 2.09 K / LST) * (0.23 / 14388) ~ 3.4e-5 K.
    const a = lstFromBrightnessTemperature(300, 0.97);
    const b = lstFromBrightnessTemperature(300, 0.97, 10.895, RHO_MICROMETRE_KELVIN);
    expect(Math.abs(a - b)).toBeGreaterThan(1e-5);
    expect(Math.abs(a - b)).toBeLessThan(1e-4);
  });

  it('rejects impossible inputs', () => {
    expect(() => lstFromBrightnessTemperature(300, 0)).toThrow(InputError);
    expect(() => lstFromBrightnessTemperature(300, 1.2)).toThrow(/emissivity must be between/);
    expect(() => lstFromBrightnessTemperature(-5, 0.97)).toThrow(/btKelvin must be greater than 0/);
    expect(() => lstFromBrightnessTemperature(300, 1e-6)).toThrow(/correction diverges/);
    expect(() => lstFromBrightnessTemperature(Number.NaN, 0.97)).toThrow(InputError);
  });
});

describe('NDVI and vegetation fraction', () => {
  it('computes NDVI and returns null where it is undefined', () => {
    // NDVI = (NIR - RED) / (NIR + RED) (Rouse et al. 1974): (0.45 - 0.05) / 0.5 = 0.8 (derived).
    expect(ndvi(0.45, 0.05)).toBeCloseTo(0.8, 12);
    expect(ndvi(0, 0)).toBeNull();
    expect(ndvi(0.3, Number.NaN)).toBeNull();
    expect(ndvi(0.3, -0.1)).toBeNull(); // would be 2.0, outside [-1, 1]
  });

  it('METHODS item 10: NDVI 0.35 -> Pv 0.25 [D]', () => {
    expect(vegetationFraction(0.35)).toBeCloseTo(0.25, 12);
  });

  it('clamps before squaring (NDVI below the soil threshold is bare soil, Pv 0)', () => {
    // Pv = clamp((NDVI - 0.2)/0.3, 0, 1)^2 (Carlson & Ripley 1997 square; derived).
    expect(vegetationFraction(0.0)).toBe(0);
    expect(vegetationFraction(-0.5)).toBe(0);
    expect(vegetationFraction(0.9)).toBe(1);
    expect(() => vegetationFraction(0.3, 0.5, 0.2)).toThrow(/ndviVeg \(0.2\) must be greater than ndviSoil \(0.5\)/);
  });
});

describe('emissivityNdviThreshold (Sobrino et al. 2004)', () => {
  it('METHODS item 10: mixed pixel, simplified 0.987 and cavity form 0.98725 [D]', () => {
    expect(emissivityNdviThreshold(0.35, 0.1)).toBeCloseTo(0.987, 12);
    expect(emissivityNdviThreshold(0.35, 0.1, { form: 'cavity' })).toBeCloseTo(0.98725, 5); // sheet rounds 0.98725125
  });

  it('METHODS item 11: soil line, full vegetation, soil threshold [D]', () => {
    expect(emissivityNdviThreshold(0.1, 0.2)).toBeCloseTo(0.972, 12); // 0.979 - 0.035 * 0.2
    expect(emissivityNdviThreshold(0.6, 0.05)).toBeCloseTo(0.99, 12);
    expect(emissivityNdviThreshold(0.2, 0.05)).toBeCloseTo(0.986, 12); // Pv 0 -> 0.986
  });

  it('is continuous at the vegetation threshold in the simplified form', () => {
    // 0.004 * 1 + 0.986 = 0.990 = eps_v (derived from the simplified form).
    expect(emissivityNdviThreshold(0.5, 0.05)).toBeCloseTo(0.99, 12);
    expect(emissivityNdviThreshold(0.5000001, 0.05)).toBeCloseTo(0.99, 12);
  });

  it('applies the water rule only when asked', () => {
    // Water emissivity ~0.99 (0.991-0.995 in the literature) (from memory).
    expect(emissivityNdviThreshold(-0.3, 0.02, { waterNdviBelow: 0 })).toBe(0.99);
    expect(emissivityNdviThreshold(-0.3, 0.02, { waterNdviBelow: 0, waterEmissivity: 0.993 })).toBe(0.993);
    // Without it, NDVI -0.3 goes to the soil line: 0.979 - 0.035 * 0.02 = 0.9783 (derived).
    expect(emissivityNdviThreshold(-0.3, 0.02)).toBeCloseTo(0.9783, 12);
  });

  it('takes the Landsat-8 band-10 values as options', () => {
    // Yu, Guo & Wu 2014: eps_s10 0.9668, eps_v10 0.9863 [C2]; cavity form, Pv 0.25, F 0.55
    // -> 0.9863*0.25 + 0.9668*0.75 + 0.0332*0.75*0.55*0.9863 = 0.98531 (derived).
    const eps = emissivityNdviThreshold(0.35, 0.1, { form: 'cavity', emissivitySoil: 0.9668, emissivityVeg: 0.9863 });
    expect(eps).toBeCloseTo(0.9863 * 0.25 + 0.9668 * 0.75 + 0.0332 * 0.75 * 0.55 * 0.9863, 12);
    // Skokovic et al. 2014 soil line eps10 = 0.973 - 0.047 red [C2]: red 0.2 -> 0.9636 (derived).
    expect(emissivityNdviThreshold(0.1, 0.2, { soilLine: { intercept: 0.973, slope: -0.047 } })).toBeCloseTo(0.9636, 12);
  });

  it('rejects bad inputs', () => {
    expect(() => emissivityNdviThreshold(1.5, 0.1)).toThrow(/ndvi must be between -1 and 1/);
    expect(() => emissivityNdviThreshold(0.1, 37)).toThrow(/redReflectance/);
    expect(() => emissivityNdviThreshold(0.3, 0.1, { form: 'other' as 'cavity' })).toThrow(InputError);
  });
});
