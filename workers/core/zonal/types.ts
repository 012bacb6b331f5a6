/** Result types of zonal statistics. */
import type { Kelvin } from '../units.js';

/**
 * Statistics of one district in one scene, in Kelvin after scale/offset.
 * Fields are null where undefined (no valid cell).
 */
export interface ZonalStats {
  /** Cells of the district on the raster (centre rule: centres inside; fraction rule: cells with coverage > 0). */
  pixels: number;
  /** Cells that passed nodata, QA and plausibility checks. */
  valid: number;
  /** valid / pixels (fraction rule: valid coverage / total coverage); null when pixels = 0. */
  validFraction: number | null;
  mean: Kelvin | null;
  /** Population standard deviation (ddof 0), K. */
  std: Kelvin | null;
  min: Kelvin | null;
  max: Kelvin | null;
  /** Quantiles: Hyndman & Fan (1996) type 7; coverage-weighted in the fraction rule (see quantile.ts). */
  median: Kelvin | null;
  p10: Kelvin | null;
  p90: Kelvin | null;
}

/**
 * Why cells were dropped (cell counts, also in the fraction rule). A cell is
 * counted once, in this order: nodata, then QA-masked, then implausible.
 */
export interface ZonalCounts {
  nodata: number;
  masked: number;
  implausible: number;
}

/** Moments and quantiles of the values an accumulator holds. */
export interface ValueSummary {
  /** Number of values (cells). */
  count: number;
  /** Sum of weights (= count when unweighted). */
  weightSum: number;
  mean: number;
  /** Population (ddof 0), weighted when weights were given. */
  std: number;
  min: number;
  max: number;
  p10: number;
  median: number;
  p90: number;
}

/** Zonal statistics with nothing to report (district off the raster). */
export function emptyStats(pixels = 0): ZonalStats {
  return {
    pixels, valid: 0, validFraction: pixels > 0 ? 0 : null,
    mean: null, std: null, min: null, max: null, median: null, p10: null, p90: null,
  };
}
