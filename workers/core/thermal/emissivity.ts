/**
 * Land surface emissivity by the NDVI-threshold method (NDVI-THM; Sobrino,
 * Jimenez-Munoz & Paolini 2004, "Land surface temperature retrieval from LANDSAT TM 5",
 * RSE 90:434-440; after Valor & Caselles 1996, RSE 57:167-184, citation from memory).
 * Thresholds, soil line and mixture forms as reproduced by a secondary source.
 */
import { InputError } from '../errors.js';
import { requireBetween, requireFinite } from '../checks.js';

/**
 * Normalised difference vegetation index (NIR - RED) / (NIR + RED) from surface
 * reflectances (Rouse et al. 1974; citation from memory).
 * @param nir near-infrared reflectance (0..1).
 * @param red red reflectance (0..1).
 * @returns NDVI in [-1, 1], or null when it is undefined (NIR + RED <= 0, a
 *   non-finite input, or a result outside [-1, 1] from negative reflectances).
 * @example
 * ndvi(0.45, 0.05) // 0.8
 */
export function ndvi(nir: number, red: number): number | null {
  if (!Number.isFinite(nir) || !Number.isFinite(red)) return null;
  const sum = nir + red;
  if (!(sum > 0)) return null;
  const v = (nir - red) / sum;
  return v >= -1 && v <= 1 ? v : null;
}

/**
 * Proportion of vegetation Pv = ((NDVI - NDVIs) / (NDVIv - NDVIs))^2, the ratio clamped
 * to [0, 1] before squaring (square: Carlson & Ripley 1997, RSE 62:241-252, citation from
 * memory; thresholds 0.2 / 0.5: Sobrino et al. 2004).
 * @param ndviValue NDVI.
 * @param ndviSoil NDVI of bare soil (default 0.2).
 * @param ndviVeg NDVI of full vegetation (default 0.5); must exceed ndviSoil.
 * @returns Pv in [0, 1].
 * @example
 * vegetationFraction(0.35) // 0.25
 */
export function vegetationFraction(ndviValue: number, ndviSoil = 0.2, ndviVeg = 0.5): number {
  const source = 'vegetationFraction';
  const v = requireFinite(ndviValue, 'ndvi', source);
  const s = requireBetween(ndviSoil, 'ndviSoil', -1, 1, source);
  const g = requireBetween(ndviVeg, 'ndviVeg', -1, 1, source);
  if (!(g > s)) throw new InputError(`ndviVeg (${g}) must be greater than ndviSoil (${s}).`, source);
  const ratio = Math.min(1, Math.max(0, (v - s) / (g - s)));
  return ratio * ratio;
}

export interface NdviThresholdOptions {
  /**
   * 'simplified': eps = 0.004 Pv + 0.986 (Sobrino et al. 2004, TM6; the cavity form with
   * eps_v 0.99, eps_s 0.97 rounded). 'cavity': eps = eps_v Pv + eps_s (1 - Pv) + d_eps with
   * d_eps = (1 - eps_s)(1 - Pv) F eps_v (Sobrino et al. 2004). Default 'simplified'.
   */
  form?: 'simplified' | 'cavity';
  /** Bare-soil NDVI threshold (default 0.2, Sobrino et al. 2004). */
  ndviSoil?: number;
  /** Full-vegetation NDVI threshold (default 0.5, Sobrino et al. 2004). */
  ndviVeg?: number;
  /** Vegetation emissivity eps_v, also used above ndviVeg (default 0.99, Sobrino et al. 2004). */
  emissivityVeg?: number;
  /** Soil emissivity eps_s of the cavity form (default 0.97, Sobrino et al. 2004). */
  emissivitySoil?: number;
  /** Geometrical (shape) factor F of the cavity term (default 0.55, a mean value; Sobrino et al. 2004). */
  shapeFactor?: number;
  /** Soil line below ndviSoil: eps = intercept + slope * red (default TM6: 0.979 - 0.035 red, Sobrino et al. 2004). */
  soilLine?: { intercept: number; slope: number };
  /** When set, pixels with NDVI below this value are water and get `waterEmissivity`. Default: off. */
  waterNdviBelow?: number;
  /** Emissivity of water (default 0.99; 0.991-0.995 are also used; from memory). */
  waterEmissivity?: number;
}

/**
 * Emissivity from NDVI by the threshold method (Sobrino et al. 2004):
 * NDVI < NDVIs -> soil line from red reflectance; NDVIs <= NDVI <= NDVIv -> mixture of
 * soil and vegetation (simplified or with the cavity term); NDVI > NDVIv -> eps_v.
 * An optional water rule takes precedence for NDVI below `waterNdviBelow`.
 * @param ndviValue NDVI of the pixel.
 * @param redReflectance red surface reflectance (about 0..1; values outside -0.5..1.5 are
 *   rejected as unscaled DNs), used by the soil line only.
 * @param options form, thresholds and emissivities.
 * @returns emissivity (dimensionless, 0..1).
 * @example
 * emissivityNdviThreshold(0.35, 0.1) // 0.987
 * emissivityNdviThreshold(0.35, 0.1, { form: 'cavity' }) // 0.98725
 */
export function emissivityNdviThreshold(ndviValue: number, redReflectance: number, options: NdviThresholdOptions = {}): number {
  requireBetween(ndviValue, 'ndvi', -1, 1, 'emissivityNdviThreshold');
  return ndviThresholdEmissivity(options)(ndviValue, redReflectance);
}

/**
 * {@link emissivityNdviThreshold} with `options` checked once: the returned function
 * maps (NDVI, red reflectance) to emissivity, so a raster checks its options once per
 * scene, not once per pixel. The NDVI must already lie in [-1, 1]; the red reflectance
 * is checked (-0.5..1.5) where the soil line uses it.
 * @throws InputError for an option out of range (named in the message)
 */
export function ndviThresholdEmissivity(options: NdviThresholdOptions = {}): (ndviValue: number, redReflectance: number) => number {
  const source = 'emissivityNdviThreshold';
  const ndviSoil = requireBetween(options.ndviSoil ?? 0.2, 'ndviSoil', -1, 1, 'vegetationFraction');
  const ndviVeg = requireBetween(options.ndviVeg ?? 0.5, 'ndviVeg', -1, 1, 'vegetationFraction');
  if (!(ndviVeg > ndviSoil)) throw new InputError(`ndviVeg (${ndviVeg}) must be greater than ndviSoil (${ndviSoil}).`, 'vegetationFraction');
  const epsV = requireBetween(options.emissivityVeg ?? 0.99, 'emissivityVeg', 0, 1, source);
  const epsS = requireBetween(options.emissivitySoil ?? 0.97, 'emissivitySoil', 0, 1, source);
  const f = requireBetween(options.shapeFactor ?? 0.55, 'shapeFactor', 0, 1, source);
  const form = options.form ?? 'simplified';
  if (form !== 'simplified' && form !== 'cavity') {
    throw new InputError(`form must be 'simplified' or 'cavity', got ${JSON.stringify(form)}.`, source);
  }
  const waterBelow = options.waterNdviBelow === undefined ? -Infinity : requireBetween(options.waterNdviBelow, 'waterNdviBelow', -1, 1, source);
  const waterEps = options.waterNdviBelow === undefined ? NaN : requireBetween(options.waterEmissivity ?? 0.99, 'waterEmissivity', 0, 1, source);
  const line = options.soilLine ?? { intercept: 0.979, slope: -0.035 };
  const intercept = requireFinite(line.intercept, 'soilLine.intercept', source);
  const slope = requireFinite(line.slope, 'soilLine.slope', source);
  return (v: number, redReflectance: number): number => {
    if (v < waterBelow) return waterEps;
    if (v < ndviSoil) {
      const red = requireBetween(redReflectance, 'redReflectance', -0.5, 1.5, source);
      return Math.min(1, Math.max(0, intercept + slope * red));
    }
    if (v > ndviVeg) return epsV;
    // Pv as in vegetationFraction (here ndviSoil <= v <= ndviVeg, so the ratio needs no clamp)
    const ratio = (v - ndviSoil) / (ndviVeg - ndviSoil);
    const pv = ratio * ratio;
    if (form === 'simplified') return 0.004 * pv + 0.986;
    const cavity = (1 - epsS) * (1 - pv) * f * epsV;
    return epsV * pv + epsS * (1 - pv) + cavity;
  };
}
