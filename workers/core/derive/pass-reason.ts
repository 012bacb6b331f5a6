/**
 * Why one pass (scene) gives a district no value, judged from that pass's own
 * zonal row alone: the district lies outside the scene, no pixel was valid, or
 * too few were. The derive step and the scene listing say it in the same words.
 */

/** The wording for a valid fraction below the minimum, e.g. "valid fraction 0.26 below 0.5". */
export function lowValidFractionReason(validFraction: number, minValidFraction: number): string {
  return `valid fraction ${validFraction.toFixed(2)} below ${minValidFraction}`;
}

/** One district's zonal row of one scene, as far as the reason needs it. */
export interface PassCounts {
  /** Pixels of the district in the scene (summed coverage under the fraction rule); 0 = outside the scene. */
  pixels: number;
  validFraction: number | null;
  /** Whether the row has a mean (at least one valid pixel). */
  hasMean: boolean;
  nodataCount: number;
  maskedCount: number;
  implausibleCount: number;
}

/** The reason this pass gives the district no value, or null when its value is used. */
export function passMissingReason(z: PassCounts, minValidFraction: number): string | null {
  if (!(z.pixels > 0)) return 'outside the scene (no pixel of the scene falls in the district)';
  if (!z.hasMean || z.validFraction === null) {
    return `no valid pixels (nodata ${z.nodataCount}, masked ${z.maskedCount}, implausible ${z.implausibleCount} of ${z.pixels})`;
  }
  if (z.validFraction < minValidFraction) return lowValidFractionReason(z.validFraction, minValidFraction);
  return null;
}
