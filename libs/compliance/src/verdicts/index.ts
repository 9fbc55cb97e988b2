export * from './bands.js';
export * from './judge.js';
export * from './findings.js';
