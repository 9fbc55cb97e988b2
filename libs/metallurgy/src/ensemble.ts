/**
 * The uncertainty ensemble of a batch: a seeded Latin hypercube over chemistry tolerance, thermocouple accuracy and
 * each model's own error, expanded into plain per-member parameter arrays (index 0 is the nominal case, members
 * 1..n are the samples). Everything here is a deterministic function of the BatchSetup, so it is NOT stored in the
 * batch state: it is rebuilt when needed and memoised per setup (a transparent cache; results do not depend on it).
 *
 * The 1σ values below are OUR CHOICES, stated so a plant can override or calibrate them:
 * - chemistry: order of the product-analysis tolerances of structural/spring steel specifications [M]
 * - thermocouple: 1.5 °C, i.e. the ASTM E230 standard tolerance of type K/N (±2.2 °C or 0.75 %) read as ≈ ±1.5σ [M]
 * - Li 1998 bainite time: ln-sd 0.7 (factor 2 at 1σ) for steel, 1.0 for cast iron – Li is not calibrated for
 *   Si-rich carbide-free steels nor for cast iron (§3.1), so the band is wide on purpose
 * - Li Bs: 25 °C; stored energy of bainite: 400 ± 100 J/mol (measured retained-austenite carbon lies between T0′ and
 *   T0, §5.1); T0′ description: uniform mix between 'calphad' and the constructed 'alt' spread (§9.1; thermo/t0.ts); carbon left in bainitic ferrite
 *   0.03 ± 0.01 wt% (§5.1 [M]); film coefficient 0.15 ± 0.03 (§5.2 [M]); Ms of enriched austenite ± 15 °C;
 *   α_m ± 10 %; ferrite/pearlite time ln-sd 1.0 (§8.4: ferrite-limited rates are uncertain by up to a factor 3);
 *   bath heat transfer ln-sd 0.3; hardness ln-sd 0.08 steel / 0.10 iron; tensile conversion ln-sd 0.06 / 0.08;
 *   ADI matrix carbon (Voigt–Loper, [M]) ± 0.05 wt%.
 */
import { adiMatrixCarbonWtPct, CALPHAD_SUBSTITUTIONALS, type ChemistryWtPct, type Element } from './chemistry.js';
import { equilibriumFerriteFraction } from './cooling/quench.js';
import { vanBohemenAlphaSubstitutionalPerK, vanBohemenCarbonTermC } from './finalState.js';
import { liBainiteFactor, liBainiteStartC, liFerriteFactor, liPearliteFactor } from './kinetics/li1998.js';
import { inverseNormalCdf, latinHypercube, SeededRandom } from './random.js';
import type { BatchSetup } from './setup.js';
import { ae1C, ae3C, criticalTemperatures, msC } from './temperatures.js';

export const DEFAULT_THERMOCOUPLE_SD_C = 1.5;
export const DEFAULT_CHEMISTRY_SD_WT_PCT: Readonly<Partial<Record<Element, number>>> = {
  C: 0.015,
  Si: 0.04,
  Mn: 0.03,
  Ni: 0.02,
  Cr: 0.03,
  Mo: 0.01,
  Al: 0.01,
  Cu: 0.02,
  V: 0.005,
};
/** Bulk carbon of a ductile iron is looser, and only enters the graphite fraction. */
const DUCTILE_IRON_BULK_CARBON_SD_WT_PCT = 0.05;

export const MODEL_ERRORS = {
  bainiteLnTimeSd: { steel: 0.7, 'ductile-iron': 1.0 },
  liBainiteStartSdC: 25,
  storedEnergyMeanJPerMol: 400,
  storedEnergySdJPerMol: 100,
  carbonInBainiticFerriteMeanWtPct: 0.03,
  carbonInBainiticFerriteSdWtPct: 0.01,
  ferritePearliteLnTimeSd: 1.0,
  heatTransferLnSd: 0.3,
  filmCoefficientMean: 0.15,
  filmCoefficientSd: 0.03,
  residualMsSdC: 15,
  alphaRelativeSd: 0.1,
  hardnessLnSd: { steel: 0.08, 'ductile-iron': 0.1 },
  tensileLnSd: { steel: 0.06, 'ductile-iron': 0.08 },
  adiMatrixCarbonSdWtPct: 0.05,
} as const;

/** Normal draws are clipped at ±3.5σ so a Latin-hypercube end stratum cannot produce a negative-carbon member. */
const Z_CLIP = 3.5;

export interface MemberArrays {
  /** Perturbation of each CALPHAD substitutional that has a T0′ sensitivity column (wt%), aligned with t0Elements. */
  t0ElementDelta: Float64Array[];
  /** Carbon of the austenite that enters the bath (bulk C for steel, matrix C for iron), wt%. */
  carbonWtPct: Float64Array;
  /** Bulk carbon (graphite fraction of iron), wt%. */
  bulkCarbonWtPct: Float64Array;
  siWtPct: Float64Array;
  mnWtPct: Float64Array;
  thermocoupleOffsetC: Float64Array;
  /** 2^{0.29G} / (BC · time factor): 1/τ̂ = prefactor·(Bs − T)²·exp(−Q/RT). */
  bainitePrefactor: Float64Array;
  bainiteStartC: Float64Array;
  /** 0 = 'calphad', 1 = the constructed 'alt' T0′ spread (not a published description). */
  descriptionMix: Float64Array;
  /** Stored energy / 400 J/mol. */
  storedEnergyScale: Float64Array;
  /** Calibrated T0′ error, wt% (calibration.t0PrimeSdWtPct; 0 without it). */
  t0PrimeOffsetWtPct: Float64Array;
  carbonInFerriteWtPct: Float64Array;
  /** z of the bath heat-transfer coefficient (ln h = ln h0 + z·σ). */
  heatTransferZ: Float64Array;
  /** ln of the factor on the nominal ferrite / pearlite additive sums (composition factor and model error). */
  ferriteLnFactor: Float64Array;
  pearliteLnFactor: Float64Array;
  ae3ShiftC: Float64Array;
  ae1ShiftC: Float64Array;
  ferriteEq: Float64Array;
  filmCoefficient: Float64Array;
  msSubstitutionalC: Float64Array;
  msBulkC: Float64Array;
  alphaSubstitutionalPerK: Float64Array;
  alphaFactor: Float64Array;
  hardnessLnError: Float64Array;
  tensileLnError: Float64Array;
}

export interface BatchModel {
  key: string;
  setup: BatchSetup;
  /** Austenite chemistry (iron: bulk substitutionals with the matrix carbon). */
  chem: ChemistryWtPct;
  bulkChem: ChemistryWtPct;
  critical: ReturnType<typeof criticalTemperatures>;
  liBainiteStartC: number;
  /** Members including the nominal at index 0. */
  size: number;
  t0Elements: Element[];
  members: MemberArrays;
  /** Memo slots filled by the bath and quench code (derived data only). */
  cache: Map<string, unknown>;
}

const MODEL_CACHE = new Map<string, BatchModel>();
const MODEL_CACHE_MAX = 16;

export function setupKey(setup: BatchSetup): string {
  return JSON.stringify(setup);
}

export function batchModel(setup: BatchSetup): BatchModel {
  const key = setupKey(setup);
  const hit = MODEL_CACHE.get(key);
  if (hit) {
    MODEL_CACHE.delete(key);
    MODEL_CACHE.set(key, hit);
    return hit;
  }
  const model = buildModel(setup, key);
  MODEL_CACHE.set(key, model);
  if (MODEL_CACHE.size > MODEL_CACHE_MAX) MODEL_CACHE.delete(MODEL_CACHE.keys().next().value as string);
  return model;
}

/** Empties the memo (benchmarks use it to time a cold start). */
export function clearModelCache(): void {
  MODEL_CACHE.clear();
}

export function effectiveChemistry(setup: BatchSetup, bulk: ChemistryWtPct): ChemistryWtPct {
  if (setup.material === 'ductile-iron') return { ...bulk, C: adiMatrixCarbonWtPct(setup.austenitize.tempC, bulk) };
  return { ...bulk };
}

/** The chemistry tolerance of a setup (1σ per element, wt%) and the elements it perturbs (present, with an sd). */
export function chemistryTolerance(setup: BatchSetup): { sdChem: Partial<Record<Element, number>>; perturbed: Element[] } {
  const bulkChem = setup.chemistryWtPct;
  const sdChem: Partial<Record<Element, number>> = { ...DEFAULT_CHEMISTRY_SD_WT_PCT, ...(setup.uncertainty.chemistrySdWtPct ?? {}) };
  if (setup.material === 'ductile-iron' && setup.uncertainty.chemistrySdWtPct?.C === undefined) sdChem.C = DUCTILE_IRON_BULK_CARBON_SD_WT_PCT;
  const perturbed = (Object.keys(bulkChem) as Element[]).filter((el) => (bulkChem[el] ?? 0) > 0 && (sdChem[el] ?? 0) > 0);
  return { sdChem, perturbed };
}

/** Standard normal of a Latin-hypercube stratum value, clipped at ±Z_CLIP. */
export function clippedNormal(u: number): number {
  return Math.max(-Z_CLIP, Math.min(Z_CLIP, inverseNormalCdf(u)));
}

function buildModel(setup: BatchSetup, key: string): BatchModel {
  const bulkChem = setup.chemistryWtPct;
  const chem = effectiveChemistry(setup, bulkChem);
  const isIron = setup.material === 'ductile-iron';
  const { sdChem, perturbed } = chemistryTolerance(setup);
  const calphadSet: ReadonlySet<string> = new Set(CALPHAD_SUBSTITUTIONALS);
  const t0Elements = perturbed.filter((el) => calphadSet.has(el));

  const n = Math.max(0, Math.trunc(setup.uncertainty.samples));
  const size = n + 1;
  const dims = perturbed.length + 15;
  const rng = new SeededRandom(setup.uncertainty.seed);
  const lhs = latinHypercube(n, dims, rng);
  // u(dim, member): member 0 is the nominal (median of every distribution).
  const u = (dim: number, member: number): number => (member === 0 ? 0.5 : lhs[dim][member - 1]);

  const arr = () => new Float64Array(size);
  const m: MemberArrays = {
    t0ElementDelta: t0Elements.map(() => arr()),
    carbonWtPct: arr(),
    bulkCarbonWtPct: arr(),
    siWtPct: arr(),
    mnWtPct: arr(),
    thermocoupleOffsetC: arr(),
    bainitePrefactor: arr(),
    bainiteStartC: arr(),
    descriptionMix: arr(),
    storedEnergyScale: arr(),
    t0PrimeOffsetWtPct: arr(),
    carbonInFerriteWtPct: arr(),
    heatTransferZ: arr(),
    ferriteLnFactor: arr(),
    pearliteLnFactor: arr(),
    ae3ShiftC: arr(),
    ae1ShiftC: arr(),
    ferriteEq: arr(),
    filmCoefficient: arr(),
    msSubstitutionalC: arr(),
    msBulkC: arr(),
    alphaSubstitutionalPerK: arr(),
    alphaFactor: arr(),
    hardnessLnError: arr(),
    tensileLnError: arr(),
  };

  const thermocoupleSd = setup.uncertainty.thermocoupleSdC ?? DEFAULT_THERMOCOUPLE_SD_C;
  const timeFactor = setup.calibration?.bainiteTimeFactor ?? 1;
  const grainTerm = Math.pow(2, 0.29 * setup.grainSizeAstm);
  const nominalFc = liFerriteFactor(chem);
  const nominalPc = liPearliteFactor(chem);
  const nominalCrit = criticalTemperatures(chem);
  const nominalAe3 = Math.max(nominalCrit.ae1C, ae3C(chem));
  const nominalAe1 = ae1C(chem);
  const D = perturbed.length;
  const mat = setup.material;

  // Normal deviates per dimension, computed once (member 0 = the nominal: z = 0).
  const zCols: Float64Array[] = [];
  for (let d = 0; d < dims; d++) {
    const col = new Float64Array(size);
    for (let k = 1; k < size; k++) col[k] = clippedNormal(lhs[d][k - 1]);
    zCols.push(col);
  }
  const z = (dim: number, member: number): number => zCols[dim][member];
  const fpCalibration = Math.log(setup.calibration?.ferritePearliteTimeFactor ?? 1);
  // A product's own calibration replaces the generic model errors by the scatter it left (setup.ts, Calibration).
  const bainiteLnSd = setup.calibration?.bainiteTimeLnSd ?? MODEL_ERRORS.bainiteLnTimeSd[setup.material];
  const fpLnSd = setup.calibration?.ferritePearliteTimeLnSd ?? MODEL_ERRORS.ferritePearliteLnTimeSd;
  const t0PrimeSd = setup.calibration?.t0PrimeSdWtPct;
  const hardnessLnBias = Math.log(setup.calibration?.hardnessFactor ?? 1);
  const hardnessLnSd = setup.calibration?.hardnessLnSd ?? MODEL_ERRORS.hardnessLnSd[mat];
  // Scratch chemistries, rewritten per member (no object per member).
  const bulk: ChemistryWtPct = { ...bulkChem };
  const eff: ChemistryWtPct = { ...chem };

  for (let k = 0; k < size; k++) {
    for (let i = 0; i < D; i++) {
      const el = perturbed[i];
      const v = Math.max(0, (bulkChem[el] ?? 0) + (sdChem[el] ?? 0) * z(i, k));
      bulk[el] = v;
      eff[el] = v;
    }
    if (isIron) {
      eff.C = Math.max(0.2, adiMatrixCarbonWtPct(setup.austenitize.tempC, bulk) + MODEL_ERRORS.adiMatrixCarbonSdWtPct * z(D + 14, k));
    }
    for (let i = 0; i < t0Elements.length; i++) {
      const el = t0Elements[i];
      m.t0ElementDelta[i][k] = (bulk[el] ?? 0) - (bulkChem[el] ?? 0);
    }
    const carbon = eff.C ?? 0;
    m.carbonWtPct[k] = carbon;
    m.bulkCarbonWtPct[k] = bulk.C ?? 0;
    m.siWtPct[k] = bulk.Si ?? 0;
    m.mnWtPct[k] = bulk.Mn ?? 0;
    m.thermocoupleOffsetC[k] = thermocoupleSd * z(D, k);
    const lnTimeError = bainiteLnSd * z(D + 1, k);
    m.bainitePrefactor[k] = grainTerm / (liBainiteFactor(eff) * timeFactor * Math.exp(lnTimeError));
    m.bainiteStartC[k] = liBainiteStartC(eff) + MODEL_ERRORS.liBainiteStartSdC * z(D + 2, k);
    m.descriptionMix[k] = k === 0 || t0PrimeSd !== undefined ? 0 : u(D + 3, k);
    m.storedEnergyScale[k] =
      t0PrimeSd !== undefined
        ? 1
        : Math.max(0, MODEL_ERRORS.storedEnergyMeanJPerMol + MODEL_ERRORS.storedEnergySdJPerMol * z(D + 4, k)) / MODEL_ERRORS.storedEnergyMeanJPerMol;
    // dim D + 13 was reserved; the calibrated T0′ error uses it (the other quantities keep their strata).
    m.t0PrimeOffsetWtPct[k] = t0PrimeSd !== undefined ? t0PrimeSd * z(D + 13, k) : 0;
    m.carbonInFerriteWtPct[k] = Math.max(
      0.002,
      MODEL_ERRORS.carbonInBainiticFerriteMeanWtPct + MODEL_ERRORS.carbonInBainiticFerriteSdWtPct * z(D + 5, k),
    );
    m.heatTransferZ[k] = z(D + 6, k);
    const fpError = fpLnSd * z(D + 7, k) + fpCalibration;
    m.ferriteLnFactor[k] = Math.log(nominalFc / liFerriteFactor(eff)) - fpError;
    m.pearliteLnFactor[k] = Math.log(nominalPc / liPearliteFactor(eff)) - fpError;
    const a1 = ae1C(eff);
    m.ae3ShiftC[k] = Math.max(a1, ae3C(eff)) - nominalAe3;
    m.ae1ShiftC[k] = a1 - nominalAe1;
    m.ferriteEq[k] = equilibriumFerriteFraction(carbon);
    m.filmCoefficient[k] = Math.max(0.02, MODEL_ERRORS.filmCoefficientMean + MODEL_ERRORS.filmCoefficientSd * z(D + 8, k));
    const msError = MODEL_ERRORS.residualMsSdC * z(D + 9, k);
    const msBulk = msC(eff, 'van-bohemen');
    // van Bohemen without its carbon term: the same formula as msSubstitutionalC(), without building an object
    m.msSubstitutionalC[k] = msBulk + vanBohemenCarbonTermC(carbon) + msError;
    m.msBulkC[k] = msBulk + msError;
    m.alphaSubstitutionalPerK[k] = vanBohemenAlphaSubstitutionalPerK(eff);
    m.alphaFactor[k] = Math.max(0.5, 1 + MODEL_ERRORS.alphaRelativeSd * z(D + 10, k));
    m.hardnessLnError[k] = hardnessLnBias + hardnessLnSd * z(D + 11, k);
    m.tensileLnError[k] = MODEL_ERRORS.tensileLnSd[mat] * z(D + 12, k);
  }

  return {
    key,
    setup,
    chem,
    bulkChem,
    critical: nominalCrit,
    liBainiteStartC: liBainiteStartC(chem),
    size,
    t0Elements,
    members: m,
    cache: new Map(),
  };
}

/** A stream of standard normals for calibration spreads, independent of the hypercube (seed-derived). */
export function calibrationNormals(seed: number, quantityIndex: number, count: number): Float64Array {
  const rng = new SeededRandom((seed * 7919 + 104729 * (quantityIndex + 1)) | 0);
  const out = new Float64Array(count);
  for (let i = 0; i < count; i++) out[i] = inverseNormalCdf(rng.nextUniform());
  return out;
}
