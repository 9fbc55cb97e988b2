// Drift across lots (issue 4, item 4): pure SPC statistics for the worker and the dashboard.
// Individuals/MR with versioned Phase I limits, EWMA, tabular CUSUM, Western Electric and Nelson run
// rules, a DriftMonitor (batch and incremental), and average run lengths by Markov chain and Monte-Carlo.

export * from './types.js';
export * from './normal.js';
export * from './random.js';
export * from './individuals.js';
export * from './ewma.js';
export * from './cusum.js';
export * from './run-rules.js';
export * from './arl.js';
export * from './config.js';
export * from './monitor.js';
