export * from './queue.js';
export * from './events.js';
export * from './spec.js';
export * from './ingest.js';
export * from './admin.js';
export * from './config.js';
export * from './prediction.js';
export * from './drift.js';
