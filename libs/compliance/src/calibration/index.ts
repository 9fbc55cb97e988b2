// Lab results against predictions (issue 4, item 5): measurements of predicted quantities, the running
// per-product calibration (bias and spread of measured − predicted p50) and the calibrated bands.

export * from './distributions.js';
export * from './running.js';
export * from './bands.js';
export * from './lab.js';
export * from './sequence.js';
export * from './mismatch.js';
export * from './assignable-cause.js';
