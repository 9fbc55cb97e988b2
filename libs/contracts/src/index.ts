export * from './queue.js';
export * from './events.js';
