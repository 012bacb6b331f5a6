/** Thermal-band decoding, Planck inversion, emissivity, single-channel LST, ATI and thermal inertia. */
export {
  TIRS_CONSTANTS,
  TIRS_B10_CENTRE_MICROMETRES,
  LANDSAT_C2_ST,
  MODIS_LST,
  tirsConstants,
  radianceFromDn,
  brightnessTemperatureKelvin,
  landsatL1BrightnessKelvin,
  decodeLandsatC2StKelvin,
  decodeModisLstKelvin,
  modisLstStatus,
  modisViewTimeHours,
  type LandsatSpacecraft,
  type TirsBand,
  type TirsBandConstants,
  type ModisDnStatus,
} from './sensors.js';
export { ndvi, vegetationFraction, emissivityNdviThreshold, ndviThresholdEmissivity, type NdviThresholdOptions } from './emissivity.js';
export {
  lstFromBrightnessTemperature,
  PLANCK_J_S,
  SPEED_OF_LIGHT_M_PER_S,
  BOLTZMANN_J_PER_K,
  RHO_METRE_KELVIN,
  RHO_MICROMETRE_KELVIN,
  RHO_ROUNDED_MICROMETRE_KELVIN,
} from './lst.js';
export {
  thermalInertia,
  thermalDiffusivity,
  apparentThermalInertia,
  atiWithReason,
  insolationShapeFactors,
  type ThermalProperties,
  type AtiInput,
  type AtiResult,
  type AtiNullReason,
  type InsolationShapeFactors,
} from './inertia.js';
export { MATERIALS, SPECIFIC_HEAT_J_PER_KG_K, material, type MaterialRow } from './materials.js';
export {
  parseSceneMetadata,
  metadataField,
  thermalConstantsFromMetadata,
  acquisitionTimeFromMetadata,
  thermalBandFromName,
  metadataFileCandidates,
  type SceneMetadataFile,
} from './metadata-file.js';
export { NO_ATMOSPHERE, isAtmosphereRasters, checkAtmosphere, surfaceBlackbodyRadiance, lstFromRadiance, atSensorRadiance, type AtmosphereParameters, type AtmosphereRasterPaths, type SceneAtmosphere } from './rte.js';
export { chooseThermalConstants, normaliseSpacecraft, type ThermalConstantsChoice, type ThermalConstantsInputs } from './scene-constants.js';
export {
  thermalLstRaster,
  requireSameGrid,
  checkEmissivity,
  emissivityFromNdviOnly,
  emissivityInRange,
  EMISSIVITY_MIN_EXCLUSIVE,
  type AtmosphereRasters,
  type EmissivityField,
  type ThermalLstPlan,
} from './lst-raster.js';
export { chooseSceneEmissivity, type NdviSource, type OwnEmissivityInputs, type SceneEmissivityInput } from './emissivity-choice.js';
export { writeThermalLst } from './write-lst.js';
export { describeLstMethod, LST_NOT_MADE_TEXT, lstMethodSentence, type LstMethodDescription, type LstMethodFacts } from './describe.js';
