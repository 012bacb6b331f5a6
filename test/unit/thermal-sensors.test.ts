import { describe, expect, it } from 'vitest';
import { InputError } from '../../workers/core/errors.js';
import {
  TIRS_CONSTANTS,
  brightnessTemperatureKelvin,
  decodeLandsatC2StKelvin,
  decodeModisLstKelvin,
  landsatL1BrightnessKelvin,
  modisLstStatus,
  modisViewTimeHours,
  radianceFromDn,
  tirsConstants,
} from '../../workers/core/thermal/sensors.js';

// Sources of the expected values:
// - Landsat 8/9 TIRS Level-1 constants: the scene MTL metadata of Landsat 8 and of Landsat 9
//   (groups LEVEL1_RADIOMETRIC_RESCALING and LEVEL1_THERMAL_CONSTANTS). The formulas
//   L = ML * Qcal + AL and BT = K2 / ln(K1 / L + 1) are those of the USGS Landsat 8 (L8) Data
//   Users Handbook (LSDS-1574; document number from memory). Every radiance and brightness
//   temperature below is derived from those formulas with those constants; none is printed
//   in a source.
// - Landsat Collection 2 Level-2 ST_B10: USGS LSDS-1328, "Landsat 8-9 OLI/TIRS Collection 2
//   Level 2 Data Format Control Book", and the C2 L2 per-asset raster metadata (scale,
//   offset, nodata).
// - MODIS MOD11A1 / MYD11A1 V6.1: the LP DAAC product description and file attributes
//   (Wan, MODIS LST Product User's Guide, Collection 6 / 6.1; title from memory).

describe('TIRS constants table', () => {
  it('holds the MTL constants per spacecraft', () => {
    // Landsat 8 / Landsat 9 scene MTL, LEVEL1_RADIOMETRIC_RESCALING and LEVEL1_THERMAL_CONSTANTS
    expect(TIRS_CONSTANTS.LANDSAT_8.B10).toEqual({ ml: 3.342e-4, al: 0.1, k1: 774.8853, k2: 1321.0789 });
    expect(TIRS_CONSTANTS.LANDSAT_8.B11).toEqual({ ml: 3.342e-4, al: 0.1, k1: 480.8883, k2: 1201.1442 });
    expect(TIRS_CONSTANTS.LANDSAT_9.B10).toEqual({ ml: 3.8e-4, al: 0.1, k1: 799.0284, k2: 1329.2405 });
    expect(TIRS_CONSTANTS.LANDSAT_9.B11).toEqual({ ml: 3.49e-4, al: 0.1, k1: 475.6581, k2: 1198.3494 });
  });

  it('rejects an unknown spacecraft or band', () => {
    expect(() => tirsConstants('LANDSAT_7', 'B10')).toThrow(InputError);
    expect(() => tirsConstants('LANDSAT_8', 'B6')).toThrow(/unknown TIRS band "B6"/);
  });
});

describe('Planck inversion', () => {
  it('L = 10 W m-2 sr-1 um-1 -> BT per band and spacecraft (derived from BT = K2 / ln(K1 / L + 1), USGS L8 Data Users Handbook)', () => {
    const l8b10 = tirsConstants('LANDSAT_8', 'B10');
    const l8b11 = tirsConstants('LANDSAT_8', 'B11');
    const l9b10 = tirsConstants('LANDSAT_9', 'B10');
    expect(brightnessTemperatureKelvin(10, l8b10.k1, l8b10.k2)).toBeCloseTo(302.7947, 4); // derived, L8 B10 MTL K1/K2
    expect(brightnessTemperatureKelvin(10, l8b11.k1, l8b11.k2)).toBeCloseTo(308.4894, 4); // derived, L8 B11 MTL K1/K2
    expect(brightnessTemperatureKelvin(10, l9b10.k1, l9b10.k2)).toBeCloseTo(302.5643, 4); // derived, L9 B10 MTL K1/K2
  });

  it('DN 30000 through radiance to BT, per spacecraft (derived from L = ML * Qcal + AL and BT = K2 / ln(K1 / L + 1), USGS L8 Data Users Handbook)', () => {
    const l8 = tirsConstants('LANDSAT_8', 'B10');
    const l9 = tirsConstants('LANDSAT_9', 'B10');
    // Derived from L = ML * Qcal + AL with the MTL ML/AL of each spacecraft.
    expect(radianceFromDn(30000, l8.ml, l8.al)).toBeCloseTo(10.126, 9);
    expect(radianceFromDn(30000, l9.ml, l9.al)).toBeCloseTo(11.5, 9);
    // Derived from BT = K2 / ln(K1 / L + 1) with the MTL K1/K2 of each spacecraft.
    expect(landsatL1BrightnessKelvin(30000, l8)).toBeCloseTo(303.655, 3);
    expect(landsatL1BrightnessKelvin(30000, l9)).toBeCloseTo(312.37, 3);
  });

  it('mixing spacecraft constants biases BT (derived from the USGS L8 Data Users Handbook formulas and both MTLs)', () => {
    const l8 = tirsConstants('LANDSAT_8', 'B10');
    const l9 = tirsConstants('LANDSAT_9', 'B10');
    // L8 K1/K2 on L9 radiance: +0.13 / +0.23 / +0.33 K at L = 8 / 10 / 12 (derived from
    // BT = K2 / ln(K1 / L + 1) with the L8 and the L9 B10 MTL constants)
    const bias = (l: number) => brightnessTemperatureKelvin(l, l8.k1, l8.k2) - brightnessTemperatureKelvin(l, l9.k1, l9.k2);
    expect(bias(8)).toBeCloseTo(0.13, 2);
    expect(bias(10)).toBeCloseTo(0.23, 2);
    expect(bias(12)).toBeCloseTo(0.33, 2);
    // L8 ML on L9 DN 30000: 303.42 K instead of 312.37 K (derived from L = ML * Qcal + AL, then BT)
    expect(brightnessTemperatureKelvin(radianceFromDn(30000, l8.ml, l8.al), l9.k1, l9.k2)).toBeCloseTo(303.42, 2);
  });

  it('treats DN 0 and out-of-range DNs as fill', () => {
    // Qcal valid 1..65535 (Landsat 9 scene MTL, QUANTIZE_CAL_MIN / QUANTIZE_CAL_MAX); 0 = fill (from memory)
    const l8 = tirsConstants('LANDSAT_8', 'B10');
    expect(landsatL1BrightnessKelvin(0, l8)).toBeNull();
    expect(landsatL1BrightnessKelvin(65536, l8)).toBeNull();
    expect(landsatL1BrightnessKelvin(12.5, l8)).toBeNull();
    expect(landsatL1BrightnessKelvin(Number.NaN, l8)).toBeNull();
  });

  it('rejects radiances with no brightness temperature', () => {
    expect(() => brightnessTemperatureKelvin(0, 774.8853, 1321.0789)).toThrow(/radiance must be greater than 0/);
    expect(() => brightnessTemperatureKelvin(-1, 774.8853, 1321.0789)).toThrow(InputError);
    expect(() => brightnessTemperatureKelvin(10, Number.NaN, 1321.0789)).toThrow(/k1 must be a finite number/);
    expect(() => radianceFromDn(Number.POSITIVE_INFINITY, 3.342e-4, 0.1)).toThrow(InputError);
  });
});

describe('Landsat Collection 2 Level-2 ST_B10', () => {
  it('scale 0.00341802, offset 149.0 (USGS LSDS-1328; C2 L2 asset metadata); K values derived from ST = DN * scale + offset', () => {
    expect(decodeLandsatC2StKelvin(44000)).toBeCloseTo(299.39288, 5);
    expect(decodeLandsatC2StKelvin(50000)).toBeCloseTo(319.901, 5);
    expect(decodeLandsatC2StKelvin(1)).toBeCloseTo(149.00341802, 8);
    expect(decodeLandsatC2StKelvin(65535)).toBeCloseTo(372.99994, 5);
    expect(decodeLandsatC2StKelvin(0)).toBeNull(); // DN 0 = fill (C2 L2 asset metadata, nodata 0)
  });

  it('accepts a scale/offset from metadata and rejects a broken one', () => {
    // Older provisional ST used scale 0.1, no offset (from memory): DN 3000 -> 300 K.
    expect(decodeLandsatC2StKelvin(3000, { scale: 0.1, offset: 0 })).toBeCloseTo(300, 9);
    expect(() => decodeLandsatC2StKelvin(3000, { scale: Number.NaN, offset: 0 })).toThrow(InputError);
  });
});

describe('MODIS LST (MOD11A1 / MYD11A1 V6.1)', () => {
  it('scale 0.02, valid 7500..65535, fill 0 (LP DAAC MOD11A1 V6.1 file attributes); K values derived from LST = DN * 0.02', () => {
    expect(decodeModisLstKelvin(15000)).toBeCloseTo(300.0, 9);
    expect(decodeModisLstKelvin(7500)).toBeCloseTo(150.0, 9);
    expect(decodeModisLstKelvin(65535)).toBeCloseTo(1310.7, 9);
    expect(decodeModisLstKelvin(0)).toBeNull();
    expect(modisLstStatus(0)).toBe('fill');
    expect(decodeModisLstKelvin(7499)).toBeNull();
    expect(modisLstStatus(7499)).toBe('out-of-range');
    expect(modisLstStatus(15000)).toBe('valid');
  });

  it('view time DN 135 -> 13.5 h local solar time (derived from DN * 0.1, LP DAAC MOD11A1 V6.1 file attributes)', () => {
    expect(modisViewTimeHours(135)).toBeCloseTo(13.5, 9);
    expect(modisViewTimeHours(240)).toBeCloseTo(24.0, 9); // valid range 0..240 (LP DAAC MOD11A1 V6.1 file attributes)
    expect(modisViewTimeHours(255)).toBeNull(); // outside the valid range
  });
});
