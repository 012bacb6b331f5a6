/**
 * Zonal statistics: accumulators (exact histogram for integer DNs, buffer for
 * floats), type-7 quantiles and the per-scene driver.
 */
export type { ZonalStats, ZonalCounts, ValueSummary } from './types.js';
export { emptyStats } from './types.js';
export { IntegerAccumulator, type IntegerKind } from './integer.js';
export { FloatAccumulator } from './float.js';
export { lerp, runQuantiles, type7Sorted } from './quantile.js';
export { zonalScene, DEFAULT_PLAUSIBLE_KELVIN, type ZonalTarget, type ZonalSceneOptions, type ZonalSceneResult } from './scene.js';
export { zonalThermalScene, openEmissivityField, openAtmosphere, type ThermalZonalInput, type ThermalZonalResult } from './thermal.js';
