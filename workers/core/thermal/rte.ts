/**
 * Single-band land surface temperature by inverting the radiative transfer
 * equation (RTE) of a thermal band:
 *
 *   L_sensor = tau * (eps * B(Ts) + (1 - eps) * L_down) + L_up
 *
 * so B(Ts) = (L_sensor - L_up - tau (1 - eps) L_down) / (tau eps) and
 * Ts = K2 / ln(K1 / B(Ts) + 1), the band's Planck inversion with its calibration
 * constants (RTE: e.g. Jiménez-Muñoz & Sobrino 2003, JGR 108(D22):4688, eq. 1;
 * Barsi, Barker & Schott 2003, "An Atmospheric Correction Parameter Calculator for
 * a Single Thermal Band Earth-Sensing Instrument", IGARSS 2003, eq. 1 — citations from
 * memory. Planck inversion with K1/K2: USGS Landsat 8 Data Users Handbook, LSDS-1574,
 * document number from memory).
 *
 * Without atmospheric parameters (tau = 1, L_up = L_down = 0) the same inversion
 * is the emissivity correction alone: B(Ts) = L_sensor / eps. With the band's K1/K2
 * at hand it is exact within the band model, so thermal scenes use it rather than
 * the Wien-approximation formula of lst.ts (Artis & Carnahan 1982), which serves
 * brightness temperatures without band constants.
 */
import { InputError } from '../errors.js';
import type { Kelvin } from '../units.js';
import { brightnessTemperatureKelvin, type TirsBandConstants } from './sensors.js';

/** Band-effective atmospheric parameters of one scene (radiances in W m-2 sr-1 um-1). */
export interface AtmosphereParameters {
  /** Atmospheric transmittance tau, in (0, 1]. */
  transmittance: number;
  /** Upwelling (path) radiance L_up, >= 0. */
  upwellingRadiance: number;
  /** Downwelling (sky) radiance L_down, >= 0. */
  downwellingRadiance: number;
}

/** Per-pixel atmosphere: three rasters on the scene's grid (band-effective values, radiances in W m-2 sr-1 um-1). */
export interface AtmosphereRasterPaths {
  transmittanceRaster: string;
  upwellingRaster: string;
  downwellingRaster: string;
}

/** A scene's atmosphere: one set of values, or rasters of them. */
export type SceneAtmosphere = AtmosphereParameters | AtmosphereRasterPaths;

/** Whether a scene's atmosphere is given as rasters. */
export function isAtmosphereRasters(a: SceneAtmosphere): a is AtmosphereRasterPaths {
  return typeof (a as AtmosphereRasterPaths).transmittanceRaster === 'string';
}

/** No atmosphere: the emissivity correction alone. */
export const NO_ATMOSPHERE: Readonly<AtmosphereParameters> = Object.freeze({ transmittance: 1, upwellingRadiance: 0, downwellingRadiance: 0 });

/**
 * Check a scene's atmospheric parameters.
 * @throws InputError naming `source` when tau is not in (0, 1] or a radiance is negative or not finite
 */
export function checkAtmosphere(a: AtmosphereParameters, source: string): AtmosphereParameters {
  const ok = (v: unknown) => typeof v === 'number' && Number.isFinite(v);
  if (!ok(a.transmittance) || !(a.transmittance > 0 && a.transmittance <= 1)) {
    throw new InputError(`atmospheric transmittance ${String(a.transmittance)} is not in (0, 1]`, source);
  }
  for (const [name, v] of [['upwelling radiance', a.upwellingRadiance], ['downwelling radiance', a.downwellingRadiance]] as const) {
    if (!ok(v) || v < 0) throw new InputError(`${name} ${String(v)} W m-2 sr-1 um-1 is not a finite number >= 0`, source);
  }
  return a;
}

/**
 * Blackbody radiance of the surface, B(Ts), from the at-sensor radiance:
 * (L - L_up - tau (1 - eps) L_down) / (tau eps).
 * @example surfaceBlackbodyRadiance(10, 0.97, NO_ATMOSPHERE) // 10.3093
 */
export function surfaceBlackbodyRadiance(atSensorRadiance: number, emissivity: number, atm: AtmosphereParameters): number {
  const t = atm.transmittance;
  return (atSensorRadiance - atm.upwellingRadiance - t * (1 - emissivity) * atm.downwellingRadiance) / (t * emissivity);
}

/**
 * LST from at-sensor radiance, emissivity and atmosphere (the RTE inversion above).
 * @returns Kelvin; NaN when the surface radiance left after the correction is not positive
 *   (no temperature has it: an atmosphere too strong for this pixel)
 * @throws InputError for emissivity outside (0, 1]
 * @example lstFromRadiance(10, 0.97, NO_ATMOSPHERE, tirsConstants('LANDSAT_8', 'B10')) // ~305.3
 */
export function lstFromRadiance(atSensorRadiance: number, emissivity: number, atm: AtmosphereParameters, c: TirsBandConstants): Kelvin {
  if (!(emissivity > 0 && emissivity <= 1)) throw new InputError(`emissivity ${emissivity} is not in (0, 1]`, 'lstFromRadiance');
  const b = surfaceBlackbodyRadiance(atSensorRadiance, emissivity, atm);
  if (!(b > 0)) return NaN;
  return brightnessTemperatureKelvin(b, c.k1, c.k2);
}

/**
 * The forward model: at-sensor radiance of a surface at `lstKelvin` with the band's
 * Planck function in K1/K2 form, B(T) = K1 / (exp(K2 / T) - 1), through the atmosphere.
 * @example atSensorRadiance(300, 1, NO_ATMOSPHERE, tirsConstants('LANDSAT_8', 'B10')) // ~9.81
 */
export function atSensorRadiance(lstKelvin: number, emissivity: number, atm: AtmosphereParameters, c: TirsBandConstants): number {
  const b = c.k1 / Math.expm1(c.k2 / lstKelvin);
  return atm.transmittance * (emissivity * b + (1 - emissivity) * atm.downwellingRadiance) + atm.upwellingRadiance;
}
