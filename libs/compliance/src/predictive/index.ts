export * from './digest.js';
export * from './bath-series.js';
export * from './batch-setup.js';
export * from './evaluate.js';
export * from './batch-prediction.js';
export * from './heat-advice.js';
