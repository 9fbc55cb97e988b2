/**
 * Bands of the critical temperatures (Ae1, Ae3, Bs, Ms by the default formulas on the austenite's chemistry, as in
 * `temperaturesC`) from each formula's reported error and the chemistry tolerance: the additive output
 * `temperatureBandsC`.
 *
 * Kept apart from the kinetics ensemble on purpose: it draws from its own seed-derived Latin hypercube, so the
 * ensemble's members – and with them every other band and point value – are exactly what they were without it, and
 * nothing here feeds the kinetics (which carry their own Li Bs and residual-Ms errors, ensemble.ts).
 *
 * Formula error (1σ, normal): the authors' reported error where one is known (temperatures.ts FORMULAS; metallurgy.md
 * quotes none, so these are from memory [M]); otherwise our assumption, the error the ensemble already uses for the
 * same quantity (Bs 25 °C, Ms 15 °C). Chemistry: the ensemble's tolerances (and for iron its matrix-carbon error).
 */
import { adiMatrixCarbonWtPct, type ChemistryWtPct } from './chemistry.js';
import { chemistryTolerance, clippedNormal, MODEL_ERRORS, type BatchModel } from './ensemble.js';
import { latinHypercube, percentilesInPlace, SeededRandom } from './random.js';
import { ae1C, ae3C, bsC, DEFAULT_AE_FORMULA, DEFAULT_BS_FORMULA, DEFAULT_MS_FORMULA, formulaInfo, msC } from './temperatures.js';

export type CriticalTemperature = 'ae1' | 'ae3' | 'bs' | 'ms';
export type TemperatureBandsC = Record<CriticalTemperature, { p05: number; p50: number; p95: number }>;

/** Error assumed for an Ae formula without a reported one: the ±25 °C metallurgy.md §8.3 allows formulas against measured values [M]. */
const UNKNOWN_FORMULA_ERROR_SD_C = 25;
const UNKNOWN_WHY = 'no reported error known; 25 °C, the §8.3 tolerance of formulas against measured values';

/** 1σ formula error per critical temperature of the default formulas, °C, and where it comes from. */
export function defaultFormulaErrorsC(): Record<CriticalTemperature, { sdC: number; basis: string }> {
  const ae = formulaInfo('ae', DEFAULT_AE_FORMULA);
  const bs = formulaInfo('bs', DEFAULT_BS_FORMULA);
  const ms = formulaInfo('ms', DEFAULT_MS_FORMULA);
  const pick = (reported: number | null | undefined, source: string, fallbackC: number, fallbackWhy: string) =>
    reported !== null && reported !== undefined
      ? { sdC: reported, basis: `reported error: ${source}` }
      : { sdC: fallbackC, basis: `our assumption (${fallbackWhy}); ${source}` };
  return {
    ae1: pick(ae.reportedErrorC, ae.reportedErrorSource, UNKNOWN_FORMULA_ERROR_SD_C, UNKNOWN_WHY),
    ae3: pick(ae.reportedErrorAe3C, ae.reportedErrorSource, UNKNOWN_FORMULA_ERROR_SD_C, UNKNOWN_WHY),
    bs: pick(bs.reportedErrorC, bs.reportedErrorSource, MODEL_ERRORS.liBainiteStartSdC, 'the Bs error of the ensemble, 25 °C'),
    ms: pick(ms.reportedErrorC, ms.reportedErrorSource, MODEL_ERRORS.residualMsSdC, 'the Ms error of the ensemble, 15 °C'),
  };
}

const ORDER: readonly CriticalTemperature[] = ['ae1', 'ae3', 'bs', 'ms'];
const CACHE_KEY = 'temperatureBandsC';

/** p05/p50/p95 of Ae1, Ae3, Bs and Ms (°C, one decimal); memoised on the batch model. */
export function temperatureBands(model: BatchModel): TemperatureBandsC {
  const hit = model.cache.get(CACHE_KEY) as TemperatureBandsC | undefined;
  if (hit) return hit;
  const setup = model.setup;
  const isIron = setup.material === 'ductile-iron';
  const { sdChem, perturbed } = chemistryTolerance(setup);
  const errors = defaultFormulaErrorsC();
  const n = Math.max(0, Math.trunc(setup.uncertainty.samples));
  const D = perturbed.length;
  // Own stream: a different derivation from the ensemble's (seed) and the calibration spreads (ensemble.ts).
  const rng = new SeededRandom((setup.uncertainty.seed * 7919 + 0x2545f491) | 0);
  const lhs = latinHypercube(n, D + ORDER.length + 1, rng);
  const z = (dim: number, member: number) => (member === 0 ? 0 : clippedNormal(lhs[dim][member - 1]));

  const values = ORDER.map(() => new Float64Array(n + 1));
  const bulk: ChemistryWtPct = { ...setup.chemistryWtPct };
  for (let k = 0; k <= n; k++) {
    for (let i = 0; i < D; i++) {
      const el = perturbed[i];
      bulk[el] = Math.max(0, (setup.chemistryWtPct[el] ?? 0) + (sdChem[el] ?? 0) * z(i, k));
    }
    const eff: ChemistryWtPct = isIron
      ? { ...bulk, C: Math.max(0.2, adiMatrixCarbonWtPct(setup.austenitize.tempC, bulk) + MODEL_ERRORS.adiMatrixCarbonSdWtPct * z(D + 4, k)) }
      : bulk;
    const ae1 = ae1C(eff) + errors.ae1.sdC * z(D, k);
    values[0][k] = ae1;
    // as temperaturesC: a hypereutectoid Ae3 below Ae1 is reported as Ae1
    values[1][k] = Math.max(ae1, ae3C(eff) + errors.ae3.sdC * z(D + 1, k));
    values[2][k] = bsC(eff) + errors.bs.sdC * z(D + 2, k);
    values[3][k] = msC(eff) + errors.ms.sdC * z(D + 3, k);
  }
  const round1 = (x: number) => Math.round(x * 10) / 10;
  const out = {} as TemperatureBandsC;
  ORDER.forEach((q, i) => {
    const [p05, p50, p95] = percentilesInPlace(values[i], [0.05, 0.5, 0.95]).map(round1);
    out[q] = { p05, p50, p95 };
  });
  model.cache.set(CACHE_KEY, out);
  return out;
}
