export * from './drift/index.js';
export * from './pyrometry/index.js';
