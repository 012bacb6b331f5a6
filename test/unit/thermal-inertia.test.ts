import { describe, expect, it } from 'vitest';
import { InputError } from '../../workers/core/errors.js';
import {
  apparentThermalInertia,
  atiWithReason,
  insolationShapeFactors,
  thermalDiffusivity,
  thermalInertia,
} from '../../workers/core/thermal/inertia.js';
import { MATERIALS, SPECIFIC_HEAT_J_PER_KG_K, material } from '../../workers/core/thermal/materials.js';

// Sources of the expected values:
// - P = sqrt(k rho c), J m-2 K-1 s-1/2 (Sobrino et al. 1998, Adv. Space Res. 22(5):655); the P
//   values below are derived from it with the table rows of workers/core/thermal/materials.ts.
// - Material rows: Oke 1987, Boundary Layer Climates, 2nd ed., Table 2.1 and the urban-materials
//   table of the Appendix (from memory), and Incropera & DeWitt, Fundamentals of Heat and Mass
//   Transfer, Appendix A at 300 K (from memory).
// - ATI = C (1 - a) / (T_day - T_night) (Price 1977, JGR 82:2582-2590; citation from memory).

const p = (key: string) => thermalInertia(material(key));

describe('thermal inertia P = sqrt(k rho c)', () => {
  it('water, sand, asphalt, concrete, copper (derived from P = sqrt(k rho c), Sobrino et al. 1998)', () => {
    expect(thermalInertia({ conductivityWPerMK: 0.57, densityKgPerM3: 1000, specificHeatJPerKgK: 4180 })).toBeCloseTo(1543.6, 1);
    expect(p('water')).toBeCloseTo(1543.6, 1);
    expect(p('sand-dry')).toBeCloseTo(619.7, 1);
    expect(p('sand-saturated')).toBeCloseTo(2551.9, 1);
    expect(p('asphalt')).toBeCloseTo(1206.6, 1);
    expect(p('concrete-dense')).toBeCloseTo(1785.8, 1);
    expect(p('copper')).toBeCloseTo(37136.5, 1);
  });

  it('matches the admittance values printed in Oke 1987, Table 2.1 / Appendix, within 1%', () => {
    // Oke, Boundary Layer Climates, 2nd ed. (1987): mu in J m-2 s-1/2 K-1 (from memory; the clay
    // rows as reproduced by a secondary source, Pielke 1984, Table 11-3). A consistency check of
    // each row against its own printed admittance, not an independent proof.
    const oke: Array<[string, number]> = [
      ['water', 1545],
      ['sand-dry', 620],
      ['sand-saturated', 2550],
      ['clay-dry', 600],
      ['clay-saturated', 2210],
      ['asphalt', 1205],
      ['concrete-dense', 1785],
    ];
    for (const [key, mu] of oke) expect(Math.abs(p(key) / mu - 1)).toBeLessThan(0.01);
    // Still air: Oke prints ~5; sqrt(0.025 * 1.2 * 1010) = 5.5 (derived).
    expect(p('air')).toBeCloseTo(5.5, 1);
  });

  it('matches Incropera & DeWitt Appendix A rows (from memory) through the formula', () => {
    // Incropera & DeWitt Appendix A (from memory): granite (Barre) 2.79 W/m/K, 2630 kg/m3,
    // 775 J/kg/K -> 2385 (derived from P = sqrt(k rho c)).
    expect(p('granite')).toBeCloseTo(2384.7, 0);
    // Common brick 0.72 / 1920 / 835 -> 1074; hardwood 0.16 / 720 / 1255 -> 380 (derived).
    expect(p('brick')).toBeCloseTo(1074.4, 0);
    expect(p('wood-hard')).toBeCloseTo(380.2, 0);
  });

  it('orders materials as field experience says', () => {
    // Common practice, no source: metal >> wet soil > rock/concrete > water > asphalt > dry soil > wood > air.
    expect(p('copper')).toBeGreaterThan(p('sand-saturated'));
    expect(p('concrete-dense')).toBeGreaterThan(p('asphalt'));
    expect(p('water')).toBeGreaterThan(p('sand-dry'));
    expect(p('sand-dry')).toBeGreaterThan(p('wood-soft'));
    expect(p('wood-soft')).toBeGreaterThan(p('air'));
  });

  it('every row carries a source and a confirmation tag, and has a positive P', () => {
    for (const m of MATERIALS) {
      expect(m.source.length).toBeGreaterThan(10);
      expect(['from-memory', 'secondary-source']).toContain(m.confirmation);
      expect(thermalInertia(m)).toBeGreaterThan(0);
    }
  });

  it('diffusivity of water ~1.4e-7 m2/s', () => {
    // Oke 1987 Table 2.1 prints kappa(water, 4 C) = 0.14e-6 m2 s-1 (from memory).
    expect(thermalDiffusivity(material('water'))).toBeCloseTo(0.136e-6, 8);
  });

  it('specific heats used as constants', () => {
    // Water 4184 J/kg/K: 1 thermochemical calorie = 4.184 J exactly (common practice, no source),
    // ~c of liquid water at 20-25 C (from memory; engineering tables print 4186). Dry air cp 1003.5,
    // dry air at sea level and 0 C (CRC-based specific-heat tables, from memory; the same constant
    // is used in meteorological code, as reproduced by a secondary source). Copper 385 at 300 K
    // (Incropera & DeWitt, Table A.1, from memory).
    expect(SPECIFIC_HEAT_J_PER_KG_K.water).toBe(4184);
    expect(SPECIFIC_HEAT_J_PER_KG_K.dryAir).toBe(1003.5);
    expect(SPECIFIC_HEAT_J_PER_KG_K.copper).toBe(385);
  });

  it('rejects non-positive properties and unknown materials', () => {
    expect(() => thermalInertia({ conductivityWPerMK: 0, densityKgPerM3: 1000, specificHeatJPerKgK: 4180 })).toThrow(
      /conductivityWPerMK must be greater than 0/,
    );
    expect(() => thermalInertia({ conductivityWPerMK: 1, densityKgPerM3: Number.NaN, specificHeatJPerKgK: 4180 })).toThrow(InputError);
    expect(() => material('unobtainium')).toThrow(/unknown material "unobtainium"; known: water/);
  });
});

describe('apparent thermal inertia (Price 1977)', () => {
  it('a 0.2, 320 K / 290 K, C 1 -> 0.0266667 K-1 (derived from ATI = C (1 - a) / (T_day - T_night), Price 1977)', () => {
    expect(apparentThermalInertia({ albedo: 0.2, dayKelvin: 320, nightKelvin: 290 })).toBeCloseTo(0.0266667, 7);
    expect(atiWithReason({ albedo: 0.2, dayKelvin: 320, nightKelvin: 290 })).toEqual({ value: expect.closeTo(0.0266667, 7), reason: null });
  });

  it('multiplies by a solar correction', () => {
    // With C = A0(40 N, dec 0) = 0.243840 (derived from the daily-mean formula, see the shape-factor
    // tests below): 0.0266667 * 0.243840 = 0.0065024 (derived).
    const { a0 } = insolationShapeFactors(40, 0);
    expect(apparentThermalInertia({ albedo: 0.2, dayKelvin: 320, nightKelvin: 290, solarCorrection: a0 })).toBeCloseTo(0.0065024, 7);
  });

  it('gives null, not Infinity, with the reason', () => {
    // Derived from the definition: ATI is undefined when dT <= the minimum, a is outside [0, 1]
    // or an input is missing.
    expect(apparentThermalInertia({ albedo: 0.2, dayKelvin: 300, nightKelvin: 300 })).toBeNull();
    expect(atiWithReason({ albedo: 0.2, dayKelvin: 300, nightKelvin: 300 }).reason).toBe('difference-too-small');
    expect(atiWithReason({ albedo: 0.2, dayKelvin: 300.4, nightKelvin: 300 }).reason).toBe('difference-too-small');
    expect(atiWithReason({ albedo: 0.2, dayKelvin: 300.4, nightKelvin: 300, minDifferenceKelvin: 0.1 }).value).toBeCloseTo(2, 9);
    expect(atiWithReason({ albedo: 0.2, dayKelvin: 290, nightKelvin: 300 }).reason).toBe('difference-too-small');
    expect(atiWithReason({ albedo: 1.2, dayKelvin: 320, nightKelvin: 290 }).reason).toBe('albedo-out-of-range');
    expect(atiWithReason({ albedo: -0.1, dayKelvin: 320, nightKelvin: 290 }).reason).toBe('albedo-out-of-range');
    expect(atiWithReason({ albedo: 0.2, dayKelvin: Number.NaN, nightKelvin: 290 }).reason).toBe('non-finite-input');
    expect(atiWithReason({ albedo: 0.2, dayKelvin: 320, nightKelvin: Number.POSITIVE_INFINITY }).reason).toBe('non-finite-input');
    expect(atiWithReason({ albedo: 0.2, dayKelvin: 320, nightKelvin: -4 }).reason).toBe('non-physical-temperature');
    expect(atiWithReason({ albedo: 0.2, dayKelvin: 320, nightKelvin: 290, solarCorrection: 0 }).reason).toBe('solar-correction-not-positive');
    expect(atiWithReason({ albedo: 0.2, dayKelvin: 320, nightKelvin: 290 }).reason).toBeNull();
  });

  it('rejects a bad minimum difference as a configuration error', () => {
    expect(() => apparentThermalInertia({ albedo: 0.2, dayKelvin: 320, nightKelvin: 290, minDifferenceKelvin: -1 })).toThrow(InputError);
    expect(() => apparentThermalInertia({ albedo: 0.2, dayKelvin: 320, nightKelvin: 290, minDifferenceKelvin: Number.NaN })).toThrow(InputError);
  });
});

describe('daily-insolation shape factors', () => {
  it('40 N and 0 N at dec 0, 40 N at dec 23.44 (derived from A0 = (psi sin(phi) sin(dec) + cos(phi) cos(dec) sin(psi)) / pi and A1 of Xue & Cracknell 1995)', () => {
    // A0: daily mean of max(0, cos zenith), psi = arccos(-tan(phi) tan(dec)); A1: its first Fourier
    // harmonic, (2/pi) sin(phi) sin(dec) sin(psi) + (1/(2 pi)) cos(phi) cos(dec) (2 psi + sin(2 psi)),
    // the factor of Xue & Cracknell 1995, "Advanced thermal inertia modelling", IJRS 16:431-446
    // (citation from memory). Expected values derived from these formulas; checked independently
    // by numerical integration in the next test.
    const a = insolationShapeFactors(40, 0);
    expect(a.halfDayLengthDeg).toBeCloseTo(90, 9);
    expect(a.a0).toBeCloseTo(0.24384, 6);
    expect(a.a1).toBeCloseTo(0.383022, 6);
    const b = insolationShapeFactors(40, 23.44);
    expect(b.halfDayLengthDeg).toBeCloseTo(111.334, 3);
    expect(b.a0).toBeCloseTo(0.366539, 6);
    expect(b.a1).toBeCloseTo(0.510528, 6);
    const c = insolationShapeFactors(0, 0);
    expect(c.a0).toBeCloseTo(1 / Math.PI, 9);
    expect(c.a1).toBeCloseTo(0.5, 9);
  });

  it('A0 equals the numerical daily mean of max(0, cos zenith)', () => {
    // Derived: integrate max(0, sin(lat) sin(dec) + cos(lat) cos(dec) cos(h)) over h in [-pi, pi].
    for (const [lat, dec] of [[40, 23.44], [-35, 10], [70, 20], [70, -20]] as const) {
      const n = 20000;
      let sum = 0;
      let harmonic = 0;
      for (let i = 0; i < n; i++) {
        const h = -Math.PI + ((i + 0.5) * 2 * Math.PI) / n;
        const cz = Math.sin((lat * Math.PI) / 180) * Math.sin((dec * Math.PI) / 180) + Math.cos((lat * Math.PI) / 180) * Math.cos((dec * Math.PI) / 180) * Math.cos(h);
        const v = Math.max(0, cz);
        sum += v;
        harmonic += v * Math.cos(h);
      }
      const f = insolationShapeFactors(lat, dec);
      expect(f.a0).toBeCloseTo(sum / n, 6);
      expect(f.a1).toBeCloseTo((2 * harmonic) / n, 6); // first cosine Fourier coefficient
    }
  });

  it('clamps in polar night and midnight sun', () => {
    // Derived: polar night -> psi 0, A0 = A1 = 0; midnight sun -> psi 180 deg, A0 = sin(lat) sin(dec).
    const night = insolationShapeFactors(80, -20);
    expect(night.halfDayLengthDeg).toBe(0);
    expect(night.a0).toBeCloseTo(0, 12);
    const day = insolationShapeFactors(80, 20);
    expect(day.halfDayLengthDeg).toBeCloseTo(180, 9);
    expect(day.a0).toBeCloseTo(Math.sin((80 * Math.PI) / 180) * Math.sin((20 * Math.PI) / 180), 9);
    expect(() => insolationShapeFactors(100, 0)).toThrow(InputError);
  });
});
