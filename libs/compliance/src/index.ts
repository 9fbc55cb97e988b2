export * from './deviations/deviation-state.js';
export * from './process-window/types.js';
export { evaluateProcessWindow } from './process-window/evaluate.js';
export { DEFAULT_INGEST_LATENCY_ALLOWANCE_S } from './process-window/context.js';
export * from './drift/index.js';
export * from './pyrometry/index.js';
