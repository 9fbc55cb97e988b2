export * from './deviations/deviation-state.js';
