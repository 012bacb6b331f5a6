/**
 * Thermal inertia P = sqrt(k rho c) and apparent thermal inertia (ATI) from a
 * day/night LST pair.
 */
import { InputError } from '../errors.js';
import type { Kelvin } from '../units.js';
import { requireBetween, requireFinite, requirePositive } from '../checks.js';
import { ATI_MIN_DIFFERENCE_KELVIN } from '../defaults.js';

const DEG = Math.PI / 180;

export interface ThermalProperties {
  /** Thermal conductivity k (W m-1 K-1). */
  conductivityWPerMK: number;
  /** Density rho (kg m-3). */
  densityKgPerM3: number;
  /** Specific heat capacity c (J kg-1 K-1). */
  specificHeatJPerKgK: number;
}

/**
 * Thermal inertia P = sqrt(k rho c) in J m-2 K-1 s-1/2 (Sobrino et al. 1998, Adv. Space
 * Res. 22(5):655; Oke 1987, Boundary Layer Climates, calls it the thermal admittance mu).
 * @throws InputError when a property is not positive.
 * @example
 * thermalInertia({ conductivityWPerMK: 0.57, densityKgPerM3: 1000, specificHeatJPerKgK: 4180 }) // 1543.6
 */
export function thermalInertia(p: ThermalProperties): number {
  const source = 'thermalInertia';
  const k = requirePositive(p.conductivityWPerMK, 'conductivityWPerMK', source);
  const rho = requirePositive(p.densityKgPerM3, 'densityKgPerM3', source);
  const c = requirePositive(p.specificHeatJPerKgK, 'specificHeatJPerKgK', source);
  return Math.sqrt(k * rho * c);
}

/**
 * Thermal diffusivity kappa = k / (rho c) in m2 s-1 (the definition; common practice, no source).
 * @throws InputError when a property is not positive.
 */
export function thermalDiffusivity(p: ThermalProperties): number {
  const source = 'thermalDiffusivity';
  const k = requirePositive(p.conductivityWPerMK, 'conductivityWPerMK', source);
  const rho = requirePositive(p.densityKgPerM3, 'densityKgPerM3', source);
  const c = requirePositive(p.specificHeatJPerKgK, 'specificHeatJPerKgK', source);
  return k / (rho * c);
}

export interface AtiInput {
  /** Broadband surface albedo, 0..1. */
  albedo: number;
  /** Daytime LST (K), ideally near the early-afternoon maximum. */
  dayKelvin: Kelvin;
  /** Night-time LST (K) of the same 24-36 h cycle, ideally pre-dawn (Kahle & Alley 1985, PE&RS 51). */
  nightKelvin: Kelvin;
  /** Day-night differences at or below this (K) give no ATI. Default 0.5 K. */
  minDifferenceKelvin?: number;
  /**
   * Solar correction C multiplying (1 - a) / dT, e.g. the A0 or A1 factor of
   * {@link insolationShapeFactors}. Default 1, the simplest form (Price 1977, JGR 82:2582-2590).
   */
  solarCorrection?: number;
}

/** Why an ATI is missing. */
export type AtiNullReason =
  | 'non-finite-input'
  | 'non-physical-temperature'
  | 'albedo-out-of-range'
  | 'difference-too-small'
  | 'solar-correction-not-positive';

export interface AtiResult {
  /** ATI in K-1, or null when it is undefined. */
  value: number | null;
  /** Null when `value` is a number; otherwise why it is missing. */
  reason: AtiNullReason | null;
}

/**
 * Apparent thermal inertia with the reason when it is undefined:
 * ATI = C (1 - a) / (T_day - T_night) (Price 1977, "Thermal inertia mapping: a new view of the
 * Earth", JGR 82:2582-2590, citation from memory; C = 1 by default).
 * A day-night difference at or below `minDifferenceKelvin` gives null rather than a
 * huge or infinite value, because noise dominates such pairs.
 * @throws InputError when `minDifferenceKelvin` is negative or not finite (a configuration error).
 * @example
 * atiWithReason({ albedo: 0.2, dayKelvin: 320, nightKelvin: 290 }) // { value: 0.026667, reason: null }
 * atiWithReason({ albedo: 0.2, dayKelvin: 300, nightKelvin: 300 }) // { value: null, reason: 'difference-too-small' }
 */
export function atiWithReason(input: AtiInput): AtiResult {
  const minDiff = input.minDifferenceKelvin === undefined ? ATI_MIN_DIFFERENCE_KELVIN : requireFinite(input.minDifferenceKelvin, 'minDifferenceKelvin', 'atiWithReason');
  if (minDiff < 0) throw new InputError(`minDifferenceKelvin must be 0 or more, got ${minDiff}.`, 'atiWithReason');
  const { albedo, dayKelvin, nightKelvin } = input;
  const c = input.solarCorrection ?? 1;
  if (![albedo, dayKelvin, nightKelvin, c].every((x) => typeof x === 'number' && Number.isFinite(x))) {
    return { value: null, reason: 'non-finite-input' };
  }
  if (dayKelvin <= 0 || nightKelvin <= 0) return { value: null, reason: 'non-physical-temperature' };
  if (albedo < 0 || albedo > 1) return { value: null, reason: 'albedo-out-of-range' };
  if (c <= 0) return { value: null, reason: 'solar-correction-not-positive' };
  const dT = dayKelvin - nightKelvin;
  if (dT <= minDiff) return { value: null, reason: 'difference-too-small' };
  return { value: (c * (1 - albedo)) / dT, reason: null }; // Price 1977
}

/**
 * Apparent thermal inertia (K-1), ATI = C (1 - a) / (T_day - T_night) (Price 1977), or
 * null when it is undefined (see {@link atiWithReason} for why).
 * @example
 * apparentThermalInertia({ albedo: 0.2, dayKelvin: 320, nightKelvin: 290 }) // 0.0266667
 */
export function apparentThermalInertia(input: AtiInput): number | null {
  return atiWithReason(input).value;
}

export interface InsolationShapeFactors {
  /** Half-day length psi = arccos(-tan(lat) tan(dec)) (deg, 0 in polar night, 180 in midnight sun). */
  halfDayLengthDeg: number;
  /** Daily mean of the clipped cos(zenith): (psi sin(lat) sin(dec) + cos(lat) cos(dec) sin(psi)) / pi (derived by integration over the hour angle). */
  a0: number;
  /** First Fourier harmonic of the clipped cos(zenith) (derived; the factor of Xue & Cracknell 1995, IJRS 16:431-446, citation from memory). */
  a1: number;
}

/**
 * Shape factors of daily insolation for latitude and declination, usable as the
 * solar correction C of ATI. The argument of arccos is clamped to [-1, 1].
 *   A0 = (psi sin(phi) sin(dec) + cos(phi) cos(dec) sin(psi)) / pi
 *   A1 = (2/pi) sin(phi) sin(dec) sin(psi) + (1/(2 pi)) cos(phi) cos(dec) (2 psi + sin(2 psi))
 * (Fourier coefficients of max(0, cos zenith) over the day, derived by integrating over the
 * hour angle; A1 is the factor of Xue & Cracknell 1995, "Advanced thermal inertia modelling",
 * IJRS 16:431-446, citation from memory).
 * @param latDeg latitude (deg, -90..90).
 * @param declinationDeg solar declination (deg, -90..90).
 * @example
 * insolationShapeFactors(40, 0) // { halfDayLengthDeg: 90, a0: 0.243840, a1: 0.383022 }
 */
export function insolationShapeFactors(latDeg: number, declinationDeg: number): InsolationShapeFactors {
  const source = 'insolationShapeFactors';
  const phi = requireBetween(latDeg, 'latDeg', -90, 90, source) * DEG;
  const dec = requireBetween(declinationDeg, 'declinationDeg', -90, 90, source) * DEG;
  const cosPsi = Math.min(1, Math.max(-1, -Math.tan(phi) * Math.tan(dec)));
  const psi = Math.acos(cosPsi);
  const ss = Math.sin(phi) * Math.sin(dec);
  const cc = Math.cos(phi) * Math.cos(dec);
  return {
    halfDayLengthDeg: psi / DEG,
    a0: (psi * ss + cc * Math.sin(psi)) / Math.PI,
    a1: (2 / Math.PI) * ss * Math.sin(psi) + (1 / (2 * Math.PI)) * cc * (2 * psi + Math.sin(2 * psi)),
  };
}
