/**
 * The documented defaults of heatledger, in one place. Every command, the
 * API and the core read them from here; an option given by the user replaces
 * the default for that run only. Names carry their units.
 */

/**
 * LST outside this range (Kelvin) is counted as implausible, not as data:
 * observed satellite skin-temperature extremes with a margin. Extremes: ~175 K on the
 * East Antarctic plateau (Scambos et al. 2018, GRL 45) and 343.9 K in the Lut Desert,
 * 2005 (Mildrexler, Zhao & Running 2011, BAMS 92:855-860). The margin, and so the
 * window itself, is a rule of thumb (from memory).
 */
export const PLAUSIBLE_RANGE_KELVIN: readonly [number, number] = Object.freeze([170, 360] as const);

/** Largest time between a day LST pass and the night pass paired with it, hours, either side. */
export const PAIRING_WINDOW_HOURS = 18;

/** Largest time between a day LST pass and the albedo scene used for its ATI, days, either side. */
export const ALBEDO_WINDOW_DAYS = 32;

/** A pass whose district (or rural) valid-pixel fraction is below this contributes nothing (0..1). */
export const MIN_VALID_FRACTION = 0.5;

/** ATI is left undefined when T_day - T_night is at or below this many kelvin. */
export const ATI_MIN_DIFFERENCE_KELVIN = 0.5;

/** Gap between the outer edge of the districts and the default rural ring, metres. */
export const RURAL_RING_INNER_METRES = 2000;

/** Outer edge of the default rural ring, metres beyond the outer edge of the districts. */
export const RURAL_RING_OUTER_METRES = 10000;

/** Name of the embedded database folder, relative to the working directory. */
export const DATA_DIR_NAME = '.heatledger';

/** TCP port the HTTP API listens on unless told otherwise. */
export const API_PORT = 8080;

/**
 * The caution shown wherever results may inform heat-health decisions
 * (help text, API answers, the page, reports).
 */
export const CAUTION_TEXT =
  'LST is land-surface (skin) temperature, not air temperature. ' +
  'Yearly means are means of the clear days only, so they depend on which days were clear. ' +
  'SUHI depends on the rural reference chosen. ' +
  'Results inform, and do not replace, local heat-action plans, codes and licensed professionals.';

/** One-line form of {@link CAUTION_TEXT} for tight places (a table footer, a status line). */
export const CAUTION_SHORT_TEXT =
  'LST is surface (skin) temperature, not air temperature; yearly means depend on which days were clear and SUHI on the rural reference chosen; ' +
  'these figures inform, and do not replace, local heat-action plans, codes and licensed professionals.';

/**
 * A year (or, in a seasonal test, a month) counts in a trend or a hot-spot map only with at
 * least this many dates: the CLI's `--min-dates` default and what the API and the report use.
 */
export const MIN_DATES_PER_YEAR = 3;

/** A thermal (Level-1 DN) night pass takes NDVI (or red and near-infrared reflectance) from the nearest day scene within this many days, either side. */
export const EMISSIVITY_WINDOW_DAYS = 16;

/**
 * Emissivity of a thermal scene's pixels when no emissivity raster, no NDVI within the
 * window and no district `emissivity` property applies (and no `--emissivity` is given):
 * a mixed built-up / vegetated surface in the 10-12 um window (common practice, no source).
 */
export const THERMAL_EMISSIVITY_DEFAULT = 0.97;

/**
 * Said wherever a night pass's LST was made from thermal DN without atmospheric
 * correction (status, scene listing, report). The sizes are derived from the
 * radiative transfer equation (Landsat 8 band 10 constants, emissivity 0.97, LST 285-300 K)
 * with illustrative atmospheric parameters (transmittance 0.95 / 0.75-0.6 with their path radiances, from memory).
 */
export const NO_ATMOSPHERIC_CORRECTION_TEXT =
  'no atmospheric correction: LST from the emissivity correction alone, usually too low — ' +
  'by about 0.5-1 K under a dry, clear atmosphere and 1.5-8 K under a warm, humid one.';
