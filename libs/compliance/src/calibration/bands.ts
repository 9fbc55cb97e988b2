// Predicted bands of the quantities a lab measures, and their correction by the running calibration.

import { normalQuantile, studentTQuantile } from './distributions.js';
import { CALIBRATION_METHOD, DEFAULT_MIN_RESULTS, summarizeCalibration, type CalibrationState, type CalibrationSummary } from './running.js';

/** Quantities with a lab measurement to compare and calibrate against. */
export const CALIBRATED_QUANTITIES = ['hardnessHV', 'tensileMPa', 'retainedAusteniteFraction'] as const;
export type CalibratedQuantity = (typeof CALIBRATED_QUANTITIES)[number];

export const QUANTITY_UNIT: Readonly<Record<CalibratedQuantity, string>> = {
  hardnessHV: 'HV',
  tensileMPa: 'MPa',
  retainedAusteniteFraction: 'volume fraction',
};

export interface Band {
  p05: number;
  p50: number;
  p95: number;
}

/** z of the 95th percentile of the standard normal (1.6449). */
export const Z95 = normalQuantile(0.95);

function isRecord(v: unknown): v is Record<string, unknown> {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

function bandAt(root: unknown, path: readonly string[]): Band | null {
  let node: unknown = root;
  for (const key of path) {
    if (!isRecord(node)) return null;
    node = node[key];
  }
  if (!isRecord(node)) return null;
  const { p05, p50, p95 } = node;
  if (typeof p05 !== 'number' || typeof p50 !== 'number' || typeof p95 !== 'number') return null;
  if (![p05, p50, p95].every(Number.isFinite) || p05 > p50 || p50 > p95) return null;
  return { p05, p50, p95 };
}

/** Any band of a prediction result by quantity name (`bands.<q>`, else `properties.<q>`), or null. */
export function predictionBand(result: unknown, quantity: string): Band | null {
  return bandAt(result, ['bands', quantity]) ?? bandAt(result, ['properties', quantity]);
}

/**
 * A stored prediction keeps the engine's uncalibrated bands of the calibrated quantities here (`rawBands.<q>`),
 * beside the bands corrected by the product's lab calibration (`bands.<q>`, `properties.<q>`): the calibration is
 * learned from measured − RAW p50, never from a band it has already moved (that would feed its own bias back).
 */
export const RAW_BANDS_FIELD = 'rawBands';

/**
 * The raw (uncalibrated) predicted band of a quantity from a Prediction.result (the `ausline predict` shape):
 * `rawBands.<q>` when the prediction kept it (every live prediction does; its `bands` may be calibrated), else –
 * results from before any calibration was applied, where `bands` are raw – as follows. Retained austenite after cooling = film + blocky austenite: the engine's own `bands.retainedAusteniteFraction`
 * (summed per ensemble member) when the result has it; for older results the sum of the film and blocky
 * percentiles, exact only if both move together and otherwise a conservative (wider) band, since the sum of
 * two quantiles is the quantile of the sum when the members are comonotonic.
 */
export function rawPredictedBand(result: unknown, quantity: CalibratedQuantity): { band: Band; from: string } | null {
  const kept = bandAt(result, [RAW_BANDS_FIELD, quantity]);
  if (kept) return { band: kept, from: `${RAW_BANDS_FIELD}.${quantity}` };
  if (quantity === 'retainedAusteniteFraction') {
    const own = bandAt(result, ['bands', 'retainedAusteniteFraction']);
    if (own) return { band: own, from: 'bands.retainedAusteniteFraction' };
    const film = predictionBand(result, 'filmAustenite');
    const blocky = predictionBand(result, 'blockyAustenite');
    if (!film || !blocky) return null;
    return { band: { p05: film.p05 + blocky.p05, p50: film.p50 + blocky.p50, p95: film.p95 + blocky.p95 }, from: 'bands.filmAustenite + bands.blockyAustenite' };
  }
  const band = predictionBand(result, quantity);
  return band ? { band, from: bandAt(result, ['bands', quantity]) ? `bands.${quantity}` : `properties.${quantity}` } : null;
}

/** Standard deviation a p05–p95 band implies if it were normal: (p95 − p05)/(2·z₀.₉₅). */
export function bandSd(band: Band): number {
  return (band.p95 - band.p05) / (2 * Z95);
}

export interface CalibratedBand {
  band: Band;
  /** False while the calibration has fewer results than `minResults` (the raw band stands). */
  applied: boolean;
  calibration: CalibrationSummary | null;
  /** t quantile used for p05/p95 (null when not applied). */
  t95: number | null;
}

/**
 * The band of the next measured value given a prediction's raw band: the Student-t predictive of the running
 * calibration, centred on p50 + bias with half-width t₀.₉₅,ν·s·√(1 + 1/κ). It replaces the ensemble's spread
 * by the spread the lab actually sees, so it can be narrower (the usual case once a product has history) or
 * wider than the raw band. Fractions are kept within [0, 1].
 */
export function calibrateBand(raw: Band, state: CalibrationState | null, options: { minResults?: number; quantity?: CalibratedQuantity } = {}): CalibratedBand {
  const minResults = options.minResults ?? DEFAULT_MIN_RESULTS;
  if (!state || state.n < minResults) return { band: raw, applied: false, calibration: state ? summarizeCalibration(state) : null, t95: null };
  const summary = summarizeCalibration(state);
  const t95 = studentTQuantile(0.95, summary.dof);
  const centre = raw.p50 + summary.bias;
  const half = t95 * summary.predictiveScale;
  let band: Band = { p05: centre - half, p50: centre, p95: centre + half };
  if (options.quantity === 'retainedAusteniteFraction') {
    const clamp = (x: number) => Math.min(1, Math.max(0, x));
    band = { p05: clamp(band.p05), p50: clamp(band.p50), p95: clamp(band.p95) };
  }
  return { band, applied: true, calibration: summary, t95 };
}

/**
 * The same calibration in the form the engine's hook takes (libs/metallurgy Calibration.bands[q] =
 * { bias, sd }: a bias added to every ensemble member and an extra normal spread). The hook can shift a band
 * and widen it, not narrow it: `sd` is the extra spread that makes the engine's p05–p95 as wide as the
 * calibrated band when that is wider than the ensemble's, and 0 otherwise (then only the bias carries over).
 */
export function engineBandCalibration(raw: Band, state: CalibrationState | null, options: { minResults?: number } = {}): { bias: number; sd: number } | null {
  const c = calibrateBand(raw, state, options);
  if (!c.applied || !c.calibration) return null;
  const targetSd = (c.band.p95 - c.band.p50) / Z95;
  const ensembleSd = bandSd(raw);
  return { bias: c.calibration.bias, sd: Math.sqrt(Math.max(0, targetSd * targetSd - ensembleSd * ensembleSd)) };
}

export type BandVerdict = 'inside' | 'above' | 'below';

/** Where a measured value lies against a p05–p95 band (limits inclusive). */
export function judgeAgainstBand(measured: number, band: Band): BandVerdict {
  return measured > band.p95 ? 'above' : measured < band.p05 ? 'below' : 'inside';
}

/** In-force calibrations of one product by quantity (what the worker's loader returns). */
export type ProductCalibrations = Partial<Record<CalibratedQuantity, CalibrationState>>;

/**
 * Raw and calibrated bands of every calibrated quantity a prediction result carries, and the engine-hook form
 * (libs/metallurgy Calibration.bands) of the same calibration. For a prediction step that wants to show or
 * judge calibrated bands: keep the raw bands in the result and put these beside them.
 */
export function calibratedPredictionBands(result: unknown, calibrations: ProductCalibrations, options: { minResults?: number } = {}) {
  const out: Partial<Record<CalibratedQuantity, { raw: Band; calibrated: Band; applied: boolean; engine: { bias: number; sd: number } | null }>> = {};
  for (const q of CALIBRATED_QUANTITIES) {
    const raw = rawPredictedBand(result, q);
    if (!raw) continue;
    const state = calibrations[q] ?? null;
    const c = calibrateBand(raw.band, state, { ...options, quantity: q });
    out[q] = { raw: raw.band, calibrated: c.band, applied: c.applied, engine: engineBandCalibration(raw.band, state, options) };
  }
  return out;
}

/** The calibrations that correct bands now: at least `minResults` results folded in (fewer: the raw band stands). */
export function calibrationsInForce(calibrations: ProductCalibrations | null | undefined, options: { minResults?: number } = {}): ProductCalibrations {
  const minResults = options.minResults ?? DEFAULT_MIN_RESULTS;
  const out: ProductCalibrations = {};
  for (const q of CALIBRATED_QUANTITIES) {
    const s = calibrations?.[q];
    if (s && s.n >= minResults) out[q] = s;
  }
  return out;
}

/** A band as the engine reports it (percentiles may be null when no member got there). */
export interface EngineBand {
  p05: number | null;
  p50: number | null;
  p95: number | null;
}

function finiteBand(b: EngineBand | undefined): Band | null {
  if (!b || b.p05 === null || b.p50 === null || b.p95 === null) return null;
  return bandAt({ b }, ['b']);
}

/**
 * The engine-hook form (libs/metallurgy Calibration.bands) of a product's calibrations in force, for one evaluation
 * whose raw bands are `rawBands` (the extra spread depends on the ensemble's own spread there). Null when nothing is
 * in force or no calibrated quantity has a finite raw band: the raw bands stand.
 */
export function labBandHooks(
  rawBands: Partial<Record<CalibratedQuantity, EngineBand>>,
  calibrations: ProductCalibrations | null | undefined,
  options: { minResults?: number } = {},
): Partial<Record<CalibratedQuantity, { bias: number; sd: number }>> | null {
  const inForce = calibrationsInForce(calibrations, options);
  const hooks: Partial<Record<CalibratedQuantity, { bias: number; sd: number }>> = {};
  for (const q of CALIBRATED_QUANTITIES) {
    const state = inForce[q];
    const raw = finiteBand(rawBands[q]);
    if (!state || !raw) continue;
    const hook = engineBandCalibration(raw, state, options);
    if (hook) hooks[q] = hook;
  }
  return Object.keys(hooks).length ? hooks : null;
}

/** What a prediction or an advice says about the lab calibration it used (null: none in force, raw bands). */
export interface LabCalibrationBasis {
  method: string;
  minResults: number;
  quantities: Partial<Record<CalibratedQuantity, CalibrationSummary>>;
  /** The engine hook applied to the bands this record stores (bias, extra spread), when it says so. */
  applied?: Partial<Record<CalibratedQuantity, { bias: number; sd: number }>>;
}

export function labCalibrationBasis(
  calibrations: ProductCalibrations | null | undefined,
  options: { minResults?: number; applied?: Partial<Record<CalibratedQuantity, { bias: number; sd: number }>> | null } = {},
): LabCalibrationBasis | null {
  const inForce = calibrationsInForce(calibrations, options);
  const quantities: LabCalibrationBasis['quantities'] = {};
  for (const q of CALIBRATED_QUANTITIES) {
    const s = inForce[q];
    if (s) quantities[q] = summarizeCalibration(s);
  }
  if (!Object.keys(quantities).length) return null;
  return { method: CALIBRATION_METHOD, minResults: options.minResults ?? DEFAULT_MIN_RESULTS, quantities, ...(options.applied ? { applied: options.applied } : {}) };
}
