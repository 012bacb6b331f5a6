/**
 * Thermal band constants and DN decoders for Landsat 8/9 TIRS (Level-1 and
 * Collection 2 Level-2 surface temperature) and MODIS LST (MOD11A1/MYD11A1).
 */
import { InputError } from '../errors.js';
import type { Kelvin } from '../units.js';
import { requireFinite, requirePositive } from '../checks.js';

/** Spacecraft identifiers as written in the MTL field SPACECRAFT_ID. */
export type LandsatSpacecraft = 'LANDSAT_8' | 'LANDSAT_9';
export type TirsBand = 'B10' | 'B11';

/**
 * Radiometric rescaling and thermal constants of one TIRS band, as in the scene MTL
 * (groups LEVEL1_RADIOMETRIC_RESCALING and LEVEL1_THERMAL_CONSTANTS).
 */
export interface TirsBandConstants {
  /** RADIANCE_MULT_BAND_x: W m-2 sr-1 um-1 per DN. */
  ml: number;
  /** RADIANCE_ADD_BAND_x: W m-2 sr-1 um-1. */
  al: number;
  /** K1_CONSTANT_BAND_x: W m-2 sr-1 um-1. */
  k1: number;
  /** K2_CONSTANT_BAND_x: Kelvin. */
  k2: Kelvin;
}

/**
 * Per-spacecraft TIRS constants: the values of the Landsat 8 and the Landsat 9 scene MTL
 * files (groups LEVEL1_RADIOMETRIC_RESCALING and LEVEL1_THERMAL_CONSTANTS), the same in
 * every scene seen so far. Prefer each scene's MTL values when available; never apply one
 * spacecraft's constants to the other (L8 ML on L9 DN misreads DN 30000 by ~9 K, derived
 * from L = ML * Qcal + AL and BT = K2 / ln(K1 / L + 1)).
 */
export const TIRS_CONSTANTS: Readonly<Record<LandsatSpacecraft, Readonly<Record<TirsBand, TirsBandConstants>>>> = {
  LANDSAT_8: {
    B10: { ml: 3.342e-4, al: 0.1, k1: 774.8853, k2: 1321.0789 },
    B11: { ml: 3.342e-4, al: 0.1, k1: 480.8883, k2: 1201.1442 },
  },
  LANDSAT_9: {
    B10: { ml: 3.8e-4, al: 0.1, k1: 799.0284, k2: 1329.2405 },
    B11: { ml: 3.49e-4, al: 0.1, k1: 475.6581, k2: 1198.3494 },
  },
};

/** Centre wavelength of TIRS band 10 (um), USGS band designations (10.60-11.19 um). */
export const TIRS_B10_CENTRE_MICROMETRES = 10.895;

/**
 * Constants of a TIRS band for a spacecraft.
 * @param spacecraft 'LANDSAT_8' or 'LANDSAT_9' (MTL SPACECRAFT_ID).
 * @param band 'B10' or 'B11'.
 * @throws InputError for an unknown spacecraft or band.
 * @example
 * tirsConstants('LANDSAT_9', 'B10').k1 // 799.0284
 */
export function tirsConstants(spacecraft: string, band: string): TirsBandConstants {
  const table = (TIRS_CONSTANTS as Record<string, Record<string, TirsBandConstants> | undefined>)[spacecraft];
  if (!table) {
    throw new InputError(`unknown spacecraft ${JSON.stringify(spacecraft)}; expected LANDSAT_8 or LANDSAT_9.`, 'tirsConstants');
  }
  const c = table[band];
  if (!c) throw new InputError(`unknown TIRS band ${JSON.stringify(band)}; expected B10 or B11.`, 'tirsConstants');
  return c;
}

/**
 * Top-of-atmosphere spectral radiance L = ML * Qcal + AL (USGS Landsat 8 (L8) Data Users Handbook, LSDS-1574; document number from memory).
 * @param dn quantised calibrated DN (Qcal).
 * @param ml radiance multiplier (W m-2 sr-1 um-1 per DN).
 * @param al radiance add term (W m-2 sr-1 um-1).
 * @returns radiance in W m-2 sr-1 um-1.
 * @example
 * radianceFromDn(30000, 3.342e-4, 0.1) // 10.126
 */
export function radianceFromDn(dn: number, ml: number, al: number): number {
  const source = 'radianceFromDn';
  return requireFinite(ml, 'ml', source) * requireFinite(dn, 'dn', source) + requireFinite(al, 'al', source);
}

/**
 * At-sensor brightness temperature by inverting Planck's law with the band's
 * calibration constants: BT = K2 / ln(K1 / L + 1) (USGS Landsat 8 (L8) Data Users Handbook, LSDS-1574; document number from memory).
 * @param radiance spectral radiance L (W m-2 sr-1 um-1), > 0.
 * @param k1 K1 constant (W m-2 sr-1 um-1).
 * @param k2 K2 constant (K).
 * @returns brightness temperature in Kelvin.
 * @throws InputError when radiance, K1 or K2 is not positive (no brightness temperature exists).
 * @example
 * brightnessTemperatureKelvin(10, 774.8853, 1321.0789) // 302.7947
 */
export function brightnessTemperatureKelvin(radiance: number, k1: number, k2: number): Kelvin {
  const source = 'brightnessTemperatureKelvin';
  const l = requirePositive(radiance, 'radiance', source);
  return requirePositive(k2, 'k2', source) / Math.log(requirePositive(k1, 'k1', source) / l + 1);
}

/**
 * Brightness temperature of a Landsat 8/9 Level-1 TIRS DN, or null for fill (DN 0; from
 * memory) and values outside the calibrated range 1..65535 (QUANTIZE_CAL_MIN/MAX of the
 * Landsat 9 scene MTL).
 * @param dn Level-1 DN of band 10 or 11.
 * @param constants the band's constants (see {@link tirsConstants}).
 * @example
 * landsatL1BrightnessKelvin(30000, tirsConstants('LANDSAT_8', 'B10')) // 303.655
 */
export function landsatL1BrightnessKelvin(dn: number, constants: TirsBandConstants): Kelvin | null {
  if (!Number.isInteger(dn) || dn < 1 || dn > 65535) return null;
  return brightnessTemperatureKelvin(radianceFromDn(dn, constants.ml, constants.al), constants.k1, constants.k2);
}

/**
 * Scale and offset of Landsat Collection 2 Level-2 ST_B10 (USGS LSDS-1328, "Landsat 8-9 OLI/TIRS
 * Collection 2 Level 2 Data Format Control Book", and the C2 L2 per-asset raster metadata).
 */
export const LANDSAT_C2_ST = { scale: 0.00341802, offset: 149.0, fillDn: 0 } as const;

/**
 * Surface temperature of a Landsat Collection 2 Level-2 ST_B10 DN:
 * ST = DN * 0.00341802 + 149.0 K, DN 0 fill (USGS LSDS-1328; C2 L2 asset metadata). Scene
 * metadata, when present, should supply scale and offset (older products used other
 * encodings: provisional Collection 1 ST had scale 0.1, no offset, from memory).
 * @param dn uint16 DN.
 * @param encoding scale/offset override (from the raster's metadata).
 * @returns Kelvin, or null for fill, a non-integer or a DN outside 1..65535.
 * @example
 * decodeLandsatC2StKelvin(44000) // 299.39288
 */
export function decodeLandsatC2StKelvin(dn: number, encoding: { scale: number; offset: number } = LANDSAT_C2_ST): Kelvin | null {
  if (encoding !== LANDSAT_C2_ST) {
    requirePositive(encoding.scale, 'encoding.scale', 'decodeLandsatC2StKelvin');
    requireFinite(encoding.offset, 'encoding.offset', 'decodeLandsatC2StKelvin');
  }
  if (!Number.isInteger(dn) || dn === LANDSAT_C2_ST.fillDn || dn < 1 || dn > 65535) return null;
  return dn * encoding.scale + encoding.offset;
}

/**
 * MODIS LST encoding: scale 0.02 K, valid 7500..65535, fill 0 (LP DAAC MOD11A1/MYD11A1 V6.1
 * product description and file attributes).
 */
export const MODIS_LST = { scale: 0.02, validMin: 7500, validMax: 65535, fillDn: 0 } as const;

/** Why a MODIS LST DN does or does not decode. */
export type ModisDnStatus = 'valid' | 'fill' | 'out-of-range';

/** Status of a MODIS LST DN: 'fill' for 0, 'out-of-range' outside 7500..65535 or non-integer. */
export function modisLstStatus(dn: number): ModisDnStatus {
  if (dn === MODIS_LST.fillDn) return 'fill';
  if (!Number.isInteger(dn) || dn < MODIS_LST.validMin || dn > MODIS_LST.validMax) return 'out-of-range';
  return 'valid';
}

/**
 * MODIS LST DN to Kelvin: LST = DN * 0.02 (LP DAAC MOD11A1/MYD11A1 V6.1 file attributes;
 * Wan, MODIS LST Product User's Guide, Collection 6, title from memory). The valid range
 * 150..1310.7 K is an encoding range, not a physical one: apply plausibility checks downstream.
 * @returns Kelvin, or null for fill or an out-of-range DN (see {@link modisLstStatus}).
 * @example
 * decodeModisLstKelvin(15000) // 300
 */
export function decodeModisLstKelvin(dn: number): Kelvin | null {
  return modisLstStatus(dn) === 'valid' ? dn * MODIS_LST.scale : null;
}

/**
 * MODIS Day_view_time / Night_view_time DN to local SOLAR time of the observation
 * (hours): DN * 0.1, valid 0..240 (LP DAAC MOD11A1/MYD11A1 V6.1 file attributes); other
 * values (fill 255) give null.
 * @example
 * modisViewTimeHours(135) // 13.5
 */
export function modisViewTimeHours(dn: number): number | null {
  if (!Number.isInteger(dn) || dn < 0 || dn > 240) return null;
  return dn * 0.1;
}
