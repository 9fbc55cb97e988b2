// Pyrometry and equipment records: reference data (versioned per standard and revision),
// judgement of accuracy tests and uniformity surveys, calibration corrections, due dates,
// equipment compliance at an instant, and suspect-product selection. Pure functions only.

export * from './types.js';
export * from './errors.js';
export * from './calendar.js';
export * from './limits.js';
export * from './correction.js';
export * from './accuracy.js';
export * from './uniformity.js';
export * from './overlay.js';
export * from './due.js';
export * from './suspect.js';
export * from './csv.js';
export * from './reference/index.js';
