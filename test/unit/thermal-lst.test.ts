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

// Sources of the expected values:
// - LST = BT / (1 + (lambda BT / rho) ln(eps)) (Artis & Carnahan 1982, "Survey of emissivity
//   variability in thermography of urban areas", RSE 12:313-329, citation from memory; Weng, Lu &
//   Schubring 2004, RSE 89:467-483, pages from memory), lambda 10.895 um = TIRS band-10 centre
//   (USGS Landsat 8/9 band designations), rho = h c / k_B.
// - NDVI-threshold emissivity: Sobrino, Jimenez-Munoz & Paolini 2004, "Land surface temperature
//   retrieval from LANDSAT TM 5", RSE 90:434-440 (thresholds, soil line and mixture forms as
//   reproduced by a secondary source); Pv squared after Carlson & Ripley 1997, RSE 62:241-252
//   (citation from memory).
// The numbers below are derived from these formulas unless a line says otherwise.

describe('physical constants', () => {
  it('uses the exact SI (CODATA 2018) values of h, c and k_B', () => {
    // SI brochure, 9th ed. (2019): h, c and k_B are defined exactly (common practice, no source needed beyond the SI).
    expect(PLANCK_J_S).toBe(6.62607015e-34);
    expect(SPEED_OF_LIGHT_M_PER_S).toBe(299792458);
    expect(BOLTZMANN_J_PER_K).toBe(1.380649e-23);
  });

  it('rho = h c / k_B = 1.4387769e-2 m K (derived from the exact SI values of h, c and k_B)', () => {
    expect(RHO_METRE_KELVIN).toBeCloseTo(1.4387769e-2, 9);
    // CODATA second radiation constant c2 = 1.438776877e-2 m K (from memory).
    expect(RHO_MICROMETRE_KELVIN).toBeCloseTo(14387.76877, 3);
  });
});

describe('lstFromBrightnessTemperature (Artis & Carnahan 1982; Weng et al. 2004)', () => {
  it('BT 300 K at eps 0.97 / 0.99 / 1 (derived from LST = BT / (1 + (lambda BT / rho) ln(eps)), Artis & Carnahan 1982)', () => {
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

  it('NDVI 0.35 -> Pv 0.25 (derived from Pv = ((NDVI - 0.2) / (0.5 - 0.2))^2, Carlson & Ripley 1997; Sobrino et al. 2004 thresholds)', () => {
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
  it('mixed pixel, simplified 0.987 and cavity form 0.98725 (derived from the Sobrino et al. 2004 forms)', () => {
    // Simplified TM6 form eps = 0.004 Pv + 0.986 at Pv 0.25 (Sobrino et al. 2004, as reproduced by a
    // secondary source): 0.987 (derived).
    expect(emissivityNdviThreshold(0.35, 0.1)).toBeCloseTo(0.987, 12);
    // Cavity form eps_v Pv + eps_s (1 - Pv) + (1 - eps_s)(1 - Pv) F eps_v with eps_v 0.99, eps_s 0.97,
    // F 0.55 (Sobrino et al. 2004, as reproduced by a secondary source): 0.98725125 (derived), to 5 decimals.
    expect(emissivityNdviThreshold(0.35, 0.1, { form: 'cavity' })).toBeCloseTo(0.98725, 5);
  });

  it('soil line, full vegetation, soil threshold (derived from the Sobrino et al. 2004 TM6 rules)', () => {
    // TM6 soil line eps = 0.979 - 0.035 red (Sobrino et al. 2004, as reproduced by a secondary
    // source): red 0.2 -> 0.972 (derived).
    expect(emissivityNdviThreshold(0.1, 0.2)).toBeCloseTo(0.972, 12);
    // NDVI above 0.5: eps_v = 0.99 (Sobrino et al. 2004, as reproduced by a secondary source).
    expect(emissivityNdviThreshold(0.6, 0.05)).toBeCloseTo(0.99, 12);
    expect(emissivityNdviThreshold(0.2, 0.05)).toBeCloseTo(0.986, 12); // Pv 0 -> 0.986 (derived from the simplified form)
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
    // Yu, Guo & Wu 2014, Remote Sens. 6:9829-9852: eps_s10 0.9668, eps_v10 0.9863 (as reproduced by
    // a secondary source); cavity form, Pv 0.25, F 0.55
    // -> 0.9863*0.25 + 0.9668*0.75 + 0.0332*0.75*0.55*0.9863 = 0.98531 (derived).
    const eps = emissivityNdviThreshold(0.35, 0.1, { form: 'cavity', emissivitySoil: 0.9668, emissivityVeg: 0.9863 });
    expect(eps).toBeCloseTo(0.9863 * 0.25 + 0.9668 * 0.75 + 0.0332 * 0.75 * 0.55 * 0.9863, 12);
    // Band-10 soil line eps10 = 0.973 - 0.047 red (values as reproduced by a secondary source; its
    // attribution to Skokovic et al. 2014 from memory): red 0.2 -> 0.9636 (derived).
    expect(emissivityNdviThreshold(0.1, 0.2, { soilLine: { intercept: 0.973, slope: -0.047 } })).toBeCloseTo(0.9636, 12);
  });

  it('rejects bad inputs', () => {
    expect(() => emissivityNdviThreshold(1.5, 0.1)).toThrow(/ndvi must be between -1 and 1/);
    expect(() => emissivityNdviThreshold(0.1, 37)).toThrow(/redReflectance/);
    expect(() => emissivityNdviThreshold(0.3, 0.1, { form: 'other' as 'cavity' })).toThrow(InputError);
  });
});
