// Lots across batches (issue 4, items 4 and 7): the values a product's lots are charted by, the drift chart
// with its frozen limits and signal episodes, the drift deviation text, the process a batch actually ran,
// and the lot key of certificates.

export * from './lot-key.js';
export * from './process-record.js';
export * from './metric-values.js';
export * from './drift-chart.js';
export * from './drift-finding.js';
export * from './drift-settings.js';
export * from './certificate.js';
