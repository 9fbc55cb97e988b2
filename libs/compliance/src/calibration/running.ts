// Running per-product calibration of predicted bands against lab results (issue 4, item 5).
//
// What is learned: the residual r = measured − predicted p50 of one quantity (hardness in HV, tensile
// strength in MPa, retained austenite as a volume fraction) over the product's lab results, as a bias
// (its mean) and a spread (its standard deviation).
//
// Method: a Bayesian normal update with unknown mean and variance (normal–inverse-gamma conjugate prior;
// e.g. Murphy 2007, "Conjugate Bayesian analysis of the Gaussian distribution", §3, from memory), with
// exponential forgetting ("variance discounting", West & Harrison, Bayesian Forecasting and Dynamic
// Models, 1997, ch. 10, from memory). Why this one rather than a plain exponentially weighted mean and
// variance:
//   * the prior says what we believe before any lab result: no bias, worth PRIOR_WEIGHT (2) results, so one
//     odd coupon cannot swing the calibration and the first results move it only partly; and a spread as
//     wide as the engine's own ensemble band says, worth PRIOR_SPREAD_WEIGHT (1) result only – the
//     ensemble spread is the model's parameter uncertainty, usually much wider than the scatter a lab sees
//     between lots of one product, so it should give way quickly to what the lab shows;
//   * it carries its own uncertainty: the predictive distribution of the next result is a Student t
//     whose width includes the uncertainty of the bias (factor √(1 + 1/κ)) and of the spread (ν degrees
//     of freedom), so a calibration learned from 4 results gives a wider band than one from 40;
//   * forgetting (discount δ per result) keeps it current: the weight of a result halves every
//     ln 2 / −ln δ ≈ 13.5 results at δ = 0.95, and the effective sample size tends to 1/(1 − δ) = 20,
//     so a change of supplier, salt or furnace recalibrates within a few weeks instead of never. With
//     δ = 1 it is the plain conjugate update (tested against the closed form).
//
// State (all in the quantity's unit): m = bias, κ = weight behind m, ν = degrees of freedom behind the
// spread, ss = ν·s² (scaled sum of squares). One update with residual r (after discounting κ, ν, ss by δ):
//   κ' = κ + 1,  m' = (κ·m + r)/κ',  ν' = ν + 1,  ss' = ss + κ·(r − m)²/κ'.
// Spread estimate s = √(ss/ν). Predictive for the next measured value given a new prediction with p50:
//   p50 + m + s·√(1 + 1/κ)·t_ν.

export const CALIBRATION_METHOD = 'normal-inverse-gamma with discounting (West & Harrison variance discount)';
/** Prior weight (pseudo-results) behind the prior bias 0. */
export const PRIOR_WEIGHT = 2;
/** Prior weight (degrees of freedom) behind the prior spread (the ensemble's). */
export const PRIOR_SPREAD_WEIGHT = 1;
/** Discount per result (forgetting); effective memory 1/(1 − δ) = 20 results. */
export const DEFAULT_DISCOUNT = 0.95;
/** Results needed before a calibration corrects bands (before that, the raw ensemble band stands). */
export const DEFAULT_MIN_RESULTS = 3;

export interface CalibrationState {
  schema: 'ausline.calibration-state/v1';
  /** Lab results folded in (not discounted). */
  n: number;
  /** Bias estimate m (measured − predicted p50), in the quantity's unit. */
  bias: number;
  /** κ: weight behind the bias (prior + discounted results). */
  kappa: number;
  /** ν: degrees of freedom behind the spread. */
  dof: number;
  /** ν·s². */
  scaledSumSquares: number;
  /** Prior spread σ₀ the state started from (the first prediction's ensemble spread). */
  priorSd: number;
  discount: number;
}

export interface CalibrationSummary {
  n: number;
  bias: number;
  /** s = √(ss/ν): spread of measured − predicted p50. */
  sd: number;
  kappa: number;
  dof: number;
  /** √(1 + 1/κ)·s: standard deviation-like scale of the predictive t for the next result. */
  predictiveScale: number;
}

export class CalibrationInputError extends Error {
  constructor(
    readonly path: string,
    message: string,
  ) {
    super(`${path}: ${message}`);
    this.name = 'CalibrationInputError';
  }
}

/** The prior: bias 0 worth PRIOR_WEIGHT results, spread σ₀ worth PRIOR_SPREAD_WEIGHT. */
export function startCalibration(priorSd: number, options: { discount?: number; priorWeight?: number; priorSpreadWeight?: number } = {}): CalibrationState {
  const discount = options.discount ?? DEFAULT_DISCOUNT;
  const weight = options.priorWeight ?? PRIOR_WEIGHT;
  const spreadWeight = options.priorSpreadWeight ?? PRIOR_SPREAD_WEIGHT;
  if (!(priorSd > 0) || !Number.isFinite(priorSd)) throw new CalibrationInputError('priorSd', `must be a positive finite number, got ${priorSd}`);
  if (!(discount > 0 && discount <= 1)) throw new CalibrationInputError('discount', 'must be in (0, 1]');
  if (!(weight > 0)) throw new CalibrationInputError('priorWeight', 'must be positive');
  if (!(spreadWeight > 0)) throw new CalibrationInputError('priorSpreadWeight', 'must be positive');
  return { schema: 'ausline.calibration-state/v1', n: 0, bias: 0, kappa: weight, dof: spreadWeight, scaledSumSquares: spreadWeight * priorSd * priorSd, priorSd, discount };
}

/** Fold one residual (measured − raw predicted p50) into the calibration. Pure. */
export function updateCalibration(state: CalibrationState, residual: number): CalibrationState {
  if (!Number.isFinite(residual)) throw new CalibrationInputError('residual', `must be a finite number, got ${residual}`);
  const d = state.discount;
  const kappa = d * state.kappa;
  const dof = d * state.dof;
  const ss = d * state.scaledSumSquares;
  const kappaNext = kappa + 1;
  const diff = residual - state.bias;
  return {
    ...state,
    n: state.n + 1,
    bias: (kappa * state.bias + residual) / kappaNext,
    kappa: kappaNext,
    dof: dof + 1,
    scaledSumSquares: ss + (kappa * diff * diff) / kappaNext,
  };
}

export function summarizeCalibration(state: CalibrationState): CalibrationSummary {
  const sd = Math.sqrt(state.scaledSumSquares / state.dof);
  return { n: state.n, bias: state.bias, sd, kappa: state.kappa, dof: state.dof, predictiveScale: sd * Math.sqrt(1 + 1 / state.kappa) };
}

/** Structural check of a state read back from storage (JSON). */
export function isCalibrationState(raw: unknown): raw is CalibrationState {
  if (raw === null || typeof raw !== 'object') return false;
  const s = raw as Record<string, unknown>;
  const num = (k: string) => typeof s[k] === 'number' && Number.isFinite(s[k] as number);
  return s.schema === 'ausline.calibration-state/v1' && ['n', 'bias', 'kappa', 'dof', 'scaledSumSquares', 'priorSd', 'discount'].every(num) && (s.dof as number) > 0 && (s.kappa as number) > 0;
}
