/**
 * @ausline/metallurgy – pure, deterministic metallurgy of austempering (carbide-free bainite steels and ADI).
 * See README.md for the models, the `ausline` command line and a worked example.
 */
// Chemistry, thermodynamics and transformation temperatures (metallurgy.md §1–2).
export * from './chemistry.js';
export * from './thermo/index.js';
export * from './temperatures.js';
export { defaultFormulaErrorsC, temperatureBands, type CriticalTemperature, type TemperatureBandsC } from './temperatureBands.js';

// Kinetics, cooling, final state, properties, uncertainty, prediction (§3–9).
export { MODEL_VERSION } from './version.js';
export * from './setup.js';
export * from './random.js';
export {
  LI_Q_OVER_R_K,
  LI_S_OF_ONE,
  liBainiteFactor,
  liBainiteStartC,
  liExtentFromSum,
  liFerriteFactor,
  liIsothermalTimeS,
  liPearliteFactor,
  liRate,
  liRateAt,
  liS,
  type LiProduct,
  type LiRate,
} from './kinetics/li1998.js';
export { ensureT0Table, t0TableAt, T0_GRID_STEP_C, type T0Table } from './kinetics/t0Table.js';
export {
  advanceBath,
  bathProgress,
  createBathState,
  BATH_STATE_FORMAT,
  DEFAULT_CELL_S,
  type BathProgress,
  type BathSample,
  type BathState,
} from './kinetics/bath.js';
export * from './cooling/conduction.js';
export * from './cooling/quench.js';
export { computeQuenchSummary, heatTransferFor, memberQuench, quenchHistory, type MemberQuench, type QuenchSummary } from './cooling/quenchSummary.js';
export * from './hardenability.js';
export * from './hardness.js';
export * from './finalState.js';
export * from './properties.js';
export {
  batchModel,
  clearModelCache,
  DEFAULT_CHEMISTRY_SD_WT_PCT,
  DEFAULT_THERMOCOUPLE_SD_C,
  MODEL_ERRORS,
  type BatchModel,
  type MemberArrays,
} from './ensemble.js';
export * from './input.js';
export { finalizeBatch, predict, type Band, type PredictOutput } from './predict.js';
export { t0Rows } from './t0Rows.js';
