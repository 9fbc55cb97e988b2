/**
 * Version of the whole prediction model (formulas, coefficients, defaults, numerics). Stored with every prediction
 * and in every batch state; bump it whenever a change can move a predicted number.
 */
export const MODEL_VERSION = 'ausline-metallurgy/0.1.0';
