/**
 * Single-channel land surface temperature from brightness temperature and emissivity.
 */
import { InputError } from '../errors.js';
import type { Kelvin } from '../units.js';
import { requireBetween, requirePositive } from '../checks.js';

/** Planck constant h (J s), exact in the SI since 2019 (CODATA 2018). */
export const PLANCK_J_S = 6.62607015e-34;
/** Speed of light in vacuum c (m/s), exact. */
export const SPEED_OF_LIGHT_M_PER_S = 299_792_458;
/** Boltzmann constant k_B (J/K), exact in the SI since 2019 (CODATA 2018). */
export const BOLTZMANN_J_PER_K = 1.380649e-23;
/** rho = h c / k_B (m K), the second radiation constant c2 of Planck's law (~1.438777e-2 m K, derived). */
export const RHO_METRE_KELVIN = (PLANCK_J_S * SPEED_OF_LIGHT_M_PER_S) / BOLTZMANN_J_PER_K;
/** rho in um K from the exact constants (~14387.77). */
export const RHO_MICROMETRE_KELVIN = RHO_METRE_KELVIN * 1e6;
/** The rounded rho (um K) printed in most single-channel LST papers. */
export const RHO_ROUNDED_MICROMETRE_KELVIN = 14388;

/**
 * Emissivity-corrected LST: LST = BT / (1 + (lambda * BT / rho) * ln(eps)) (Artis & Carnahan
 * 1982, RSE 12:313-329; Weng, Lu & Schubring 2004, RSE 89:467-483; pages from memory).
 * @param btKelvin at-sensor (or atmospherically corrected) brightness temperature, K.
 * @param emissivity surface emissivity in (0, 1].
 * @param wavelengthMicrometres effective band wavelength (um); default 10.895, TIRS B10 centre.
 * @param rhoMicrometreKelvin h c / k_B in um K; default 14388 (rounded, as printed in the
 *   papers); {@link RHO_MICROMETRE_KELVIN} gives the exact CODATA value.
 * @returns LST in Kelvin.
 * @throws InputError for a non-positive temperature, emissivity outside (0, 1],
 *   or inputs that make the denominator non-positive.
 * @example
 * lstFromBrightnessTemperature(300, 0.97) // 302.0903
 */
export function lstFromBrightnessTemperature(
  btKelvin: number,
  emissivity: number,
  wavelengthMicrometres = 10.895,
  rhoMicrometreKelvin: number = RHO_ROUNDED_MICROMETRE_KELVIN,
): Kelvin {
  const source = 'lstFromBrightnessTemperature';
  const bt = requirePositive(btKelvin, 'btKelvin', source);
  const eps = requireBetween(emissivity, 'emissivity', Number.MIN_VALUE, 1, source);
  const lambda = requirePositive(wavelengthMicrometres, 'wavelengthMicrometres', source);
  const rho = requirePositive(rhoMicrometreKelvin, 'rhoMicrometreKelvin', source);
  const denominator = 1 + ((lambda * bt) / rho) * Math.log(eps);
  if (!(denominator > 0)) {
    throw new InputError(`emissivity ${eps} is too small for brightness temperature ${bt} K (the correction diverges).`, source);
  }
  return bt / denominator;
}
