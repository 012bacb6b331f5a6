/** One wording for how a thermal scene's LST was made (status, scene listing, report, demo). */
import { NO_ATMOSPHERIC_CORRECTION_TEXT } from '../defaults.js';

export interface LstMethodFacts {
  lstMethod: 'rte' | 'emissivity_only' | null;
  atmosphere:
    | { transmittance: number; upwelling_w_m2_sr_um: number; downwelling_w_m2_sr_um: number }
    | { transmittance_raster: string; upwelling_raster: string; downwelling_raster: string }
    | null;
  thermalConstantsSource: string | null;
  emissivitySource: string | null;
}

/**
 * A sentence saying how the LST of a thermal scene was made.
 * @example
 * lstMethodSentence({ lstMethod: 'emissivity_only', atmosphere: null, thermalConstantsSource: 'manifest', emissivitySource: 'constant 0.97 (default)' })
 * // 'LST from thermal DN; constants: manifest; emissivity: constant 0.97 (default); no atmospheric correction: ...'
 */
export function lstMethodSentence(f: LstMethodFacts): string {
  const parts = [
    'LST from thermal DN',
    `constants: ${f.thermalConstantsSource ?? 'unknown'}`,
    `emissivity: ${f.emissivitySource ?? 'not yet computed'}`,
  ];
  if (f.lstMethod === 'rte' && f.atmosphere && 'transmittance_raster' in f.atmosphere) {
    const a = f.atmosphere;
    parts.push(`radiative transfer equation inverted per pixel with the transmittance ${a.transmittance_raster}, upwelling ${a.upwelling_raster} and downwelling ${a.downwelling_raster} rasters`);
  } else if (f.lstMethod === 'rte' && f.atmosphere && 'transmittance' in f.atmosphere) {
    const a = f.atmosphere;
    parts.push(`radiative transfer equation inverted with transmittance ${a.transmittance}, upwelling ${a.upwelling_w_m2_sr_um} and downwelling ${a.downwelling_w_m2_sr_um} W m-2 sr-1 um-1`);
  } else {
    parts.push(NO_ATMOSPHERIC_CORRECTION_TEXT);
  }
  return parts.join('; ');
}

/** What a thermal scene whose method was never stored (refused or not yet ingested) says instead of the sentence. */
export const LST_NOT_MADE_TEXT = 'LST not made from this thermal scene: no method was stored (see its state and reason)';

/** How a thermal scene's LST was made, as every listing shows it (status, the API's scenes and status). */
export interface LstMethodDescription {
  lstMethod: 'rte' | 'emissivity_only' | null;
  atmosphericCorrection: boolean | null;
  thermalConstantsSource: string | null;
  emissivitySource: string | null;
  /** {@link lstMethodSentence}, or {@link LST_NOT_MADE_TEXT} when no method was stored. */
  howLstWasMade: string;
  /** NO_ATMOSPHERIC_CORRECTION_TEXT for a pass made without atmospheric correction, else null. */
  atmosphericCorrectionNote: string | null;
}

/** The stored facts of a thermal scene, described once for every listing. */
export function describeLstMethod(f: LstMethodFacts & { atmosphericCorrection: boolean | null }): LstMethodDescription {
  return {
    lstMethod: f.lstMethod,
    atmosphericCorrection: f.atmosphericCorrection,
    thermalConstantsSource: f.thermalConstantsSource,
    emissivitySource: f.emissivitySource,
    howLstWasMade: f.lstMethod !== null ? lstMethodSentence(f) : LST_NOT_MADE_TEXT,
    // the sentence says the correction is missing exactly then
    atmosphericCorrectionNote: f.lstMethod === 'emissivity_only' || (f.lstMethod === 'rte' && !f.atmosphere) ? NO_ATMOSPHERIC_CORRECTION_TEXT : null,
  };
}
