/**
 * Handbook thermal properties of common surface materials, for thermal-inertia
 * reference values. Each row names its source and how it was checked.
 */
import { InputError } from '../errors.js';
import type { ThermalProperties } from './inertia.js';

export interface MaterialRow extends ThermalProperties {
  /** Stable key, e.g. 'asphalt'. */
  key: string;
  /** Description as in the source table. */
  description: string;
  /** Where the numbers come from. */
  source: string;
  /**
   * How the values were checked: 'from-memory' = recalled, not checked against a printed
   * copy; 'secondary-source' = reproduced by a secondary source (not the original table).
   */
  confirmation: 'from-memory' | 'secondary-source';
}

const OKE = 'Oke 1987, Boundary Layer Climates, 2nd ed., Table 2.1 / Appendix A2';
const INCROPERA = 'Incropera & DeWitt, Fundamentals of Heat and Mass Transfer, Appendix A (300 K)';

/** The materials table (SI units). */
export const MATERIALS: readonly MaterialRow[] = [
  { key: 'water', description: 'water, still, 4 C', densityKgPerM3: 1000, specificHeatJPerKgK: 4180, conductivityWPerMK: 0.57, source: OKE, confirmation: 'from-memory' },
  { key: 'air', description: 'air, still, 10 C', densityKgPerM3: 1.2, specificHeatJPerKgK: 1010, conductivityWPerMK: 0.025, source: OKE, confirmation: 'from-memory' },
  { key: 'sand-dry', description: 'sandy soil, dry (40% pore space)', densityKgPerM3: 1600, specificHeatJPerKgK: 800, conductivityWPerMK: 0.3, source: OKE, confirmation: 'from-memory' },
  { key: 'sand-saturated', description: 'sandy soil, saturated (40% pore space)', densityKgPerM3: 2000, specificHeatJPerKgK: 1480, conductivityWPerMK: 2.2, source: OKE, confirmation: 'from-memory' },
  { key: 'clay-dry', description: 'clay soil, dry (40% pore space)', densityKgPerM3: 1600, specificHeatJPerKgK: 890, conductivityWPerMK: 0.25, source: `${OKE} (also Pielke 1984, Table 11-3)`, confirmation: 'secondary-source' },
  { key: 'clay-saturated', description: 'clay soil, saturated (40% pore space)', densityKgPerM3: 2000, specificHeatJPerKgK: 1550, conductivityWPerMK: 1.58, source: `${OKE} (also Pielke 1984, Table 11-3)`, confirmation: 'secondary-source' },
  { key: 'ice', description: 'ice, 0 C, pure', densityKgPerM3: 920, specificHeatJPerKgK: 2100, conductivityWPerMK: 2.24, source: OKE, confirmation: 'from-memory' },
  { key: 'asphalt', description: 'asphalt', densityKgPerM3: 2110, specificHeatJPerKgK: 920, conductivityWPerMK: 0.75, source: OKE, confirmation: 'from-memory' },
  { key: 'concrete-dense', description: 'concrete, dense', densityKgPerM3: 2400, specificHeatJPerKgK: 880, conductivityWPerMK: 1.51, source: OKE, confirmation: 'from-memory' },
  { key: 'granite', description: 'granite, Barre', densityKgPerM3: 2630, specificHeatJPerKgK: 775, conductivityWPerMK: 2.79, source: INCROPERA, confirmation: 'from-memory' },
  { key: 'copper', description: 'copper, pure', densityKgPerM3: 8933, specificHeatJPerKgK: 385, conductivityWPerMK: 401, source: INCROPERA, confirmation: 'from-memory' },
  { key: 'brick', description: 'brick, common', densityKgPerM3: 1920, specificHeatJPerKgK: 835, conductivityWPerMK: 0.72, source: INCROPERA, confirmation: 'from-memory' },
  { key: 'wood-hard', description: 'hardwood (oak, maple), across the grain', densityKgPerM3: 720, specificHeatJPerKgK: 1255, conductivityWPerMK: 0.16, source: INCROPERA, confirmation: 'from-memory' },
  { key: 'wood-soft', description: 'softwood (fir, pine), across the grain', densityKgPerM3: 510, specificHeatJPerKgK: 1380, conductivityWPerMK: 0.12, source: INCROPERA, confirmation: 'from-memory' },
];

/**
 * Specific heats used as constants (J kg-1 K-1): liquid water near 20-25 C (4184, the
 * thermochemical calorie per gram-kelvin; from memory), dry air at constant pressure, sea
 * level, 0 C (1003.5, CRC-based specific-heat tables, from memory; the constant of
 * meteorological code), copper at 300 K (385, Incropera & DeWitt Table A.1, from memory).
 */
export const SPECIFIC_HEAT_J_PER_KG_K = { water: 4184, dryAir: 1003.5, copper: 385 } as const;

/**
 * A row of {@link MATERIALS} by key.
 * @throws InputError for an unknown key (the message lists the known ones).
 * @example
 * material('asphalt').conductivityWPerMK // 0.75
 */
export function material(key: string): MaterialRow {
  const row = MATERIALS.find((m) => m.key === key);
  if (!row) {
    throw new InputError(`unknown material ${JSON.stringify(key)}; known: ${MATERIALS.map((m) => m.key).join(', ')}.`, 'material');
  }
  return row;
}
