/**
 * The prediction of a batch: from the bath state (kinetics over the logged history) to the output object of
 * `ausline predict` – critical temperatures, T0/T0′ at the bath, the bainite fraction and its ceiling, the quench,
 * the final microstructure, properties with p05/p50/p95 bands, and every warning.
 *
 * Point values (bainite.*, quench.*, final.*) are the NOMINAL model (the member with no perturbation). Bands come
 * from the ensemble members (Latin hypercube over chemistry, thermocouple and each model's error, §9).
 */
import { checkChemistry } from './chemistry.js';
import { equivalentRoundDiameterMm } from './cooling/conduction.js';
import { memberQuench, type QuenchSummary } from './cooling/quenchSummary.js';
import { CORE_AT_BATH_MARGIN_C } from './cooling/quench.js';
import { calibrationNormals, type BatchModel } from './ensemble.js';
import { finalMicrostructure, koistinenMarburger, type FinalState } from './finalState.js';
import { A255_GRAIN_SIZE_ASTM, idealCriticalDiameter } from './hardenability.js';
import { a897GradeForTensile, adiTensileFromHbw, hbwFromHv, hrcFromHv, iso17804GradeForTensile } from './hardness.js';
import { advanceBath, bathProgress, createBathState, LONG_GAP_S, MIN_MEANINGFUL_CEILING, type BathState } from './kinetics/bath.js';
import { t0TableAt, type T0Table } from './kinetics/t0Table.js';
import type { PredictInput } from './input.js';
import {
  ASSUMED_RETAINED_AUSTENITE_HV,
  bainiticFerriteYieldMPa,
  graphiteVolumeFraction,
  hvFromHrcExtended,
  martensiteHrcA255,
  maynierFerritePearliteHV,
  mixtureHardnessHV,
  STEEL_TENSILE_PER_HV,
  TABOR_HV_PER_MPA,
} from './properties.js';
import { percentilesInPlace } from './random.js';
import { BAND_QUANTITIES, sectionSizeMm, type BandQuantity, type BatchSetup, type Calibration } from './setup.js';
import { t0CarbonWtPct, t0PrimeCarbonWtPct } from './thermo/index.js';
import { temperatureBands, type TemperatureBandsC } from './temperatureBands.js';
import { MODEL_VERSION } from './version.js';

export interface Band {
  p05: number | null;
  p50: number | null;
  p95: number | null;
}

export interface PredictOutput {
  modelVersion: string;
  material: BatchSetup['material'];
  temperaturesC: { ae1: number; ae3: number; bs: number; ms: number };
  /** p05/p50/p95 of the critical temperatures from the formulas' reported errors and the chemistry tolerance (temperatureBands.ts). */
  temperatureBandsC: TemperatureBandsC;
  t0: { bathTempC: number; t0CarbonWtPct: number; t0PrimeCarbonWtPct: number };
  bainite: {
    ceilingFraction: number;
    fractionAtEnd: number;
    timeTo95PctS: number | null;
    /** Earliest end of the hold: the p95 of the members' time to 95 % of the ceiling, not before the centre reaches the bath. */
    earliestHoldEndS: number | null;
    curve: Array<[number, number]>;
  };
  quench: {
    upperProductsFraction: number;
    coreReachesBathS: number | null;
    idealCriticalDiameterMm: number;
    heatTransferWPerM2K: number;
    ferriteOnsetIndex: number;
    pearliteOnsetIndex: number;
  };
  final: {
    bainiticFerrite: number;
    filmAustenite: number;
    blockyAustenite: number;
    freshMartensite: number;
    upperProducts: number;
    bathMartensite: number;
    austeniteCarbonWtPct: number;
    residualAusteniteMsC: number;
    filmToBlockyRatio: number | null;
  };
  properties: {
    hardnessHV: Band;
    tensileMPa: Band;
    hardnessHRC: Band;
    hardnessHBW: Band;
    adiGrade?: string | null;
    adiGradeIso17804?: string | null;
  };
  bands: Record<BandQuantity, Band>;
  /** Ensemble size and seed the bands came from. */
  uncertainty: { samples: number; seed: number };
  warnings: string[];
}

const PERCENTILES = [0.05, 0.5, 0.95] as const;

/** Whole pipeline for one complete history: create, advance over every sample, finalize. */
export function predict(input: PredictInput): PredictOutput {
  const { bath, ...setup } = input;
  return finalizeBatch(advanceBath(createBathState(setup), bath));
}

interface MemberResult {
  final: FinalState;
  ceiling: number;
  fractionAtEnd: number;
  time95S: number; // Infinity = not reached
  t0Prime: number;
  hardnessHV: number;
  tensileMPa: number;
}

/**
 * Final state, properties and bands of a batch from its (advanced) bath state. Pure; the state is not modified.
 * `opts.calibration.bands` overrides the setup's band calibration (the live worker may learn it after the batch
 * started).
 */
export function finalizeBatch(state: BathState, opts: { calibration?: Calibration } = {}): PredictOutput {
  if (!state.last || !state.quench) throw new RangeError('finalizeBatch: the bath state holds no samples yet');
  const progress = bathProgress(state);
  const model = progress.model;
  const setup = model.setup;
  const quench = state.quench;
  const table = progress.t0Table;
  const n = model.size;
  const mq = memberQuench(model, quench);
  const isIron = setup.material === 'ductile-iron';
  const warnings: string[] = [];
  const bandCalibration = { ...(setup.calibration?.bands ?? {}), ...(opts.calibration?.bands ?? {}) };

  const bathMeanC = state.log.sumDtS > 0 ? state.log.sumTempDtCS / state.log.sumDtS : state.last.loggedC;
  const endS = progress.endS;
  const partMinC = progress.partMinC ?? bathMeanC;
  const coolingRateCPerH = (quench.coolingRateAt700CPerS ?? 0) * 3600;
  const hvUpper = maynierFerritePearliteHV(model.chem, coolingRateCPerH);

  const results: MemberResult[] = new Array(n);
  for (let k = 0; k < n; k++) results[k] = memberResult(model, table, mq, k, { bathMeanC, partMinC, hvUpper, progress });

  // ---- nominal values
  const nom = results[0];
  const t0Bias = setup.calibration?.t0PrimeBiasWtPct ?? 0;
  const t0Nominal = t0CarbonWtPct(model.chem, bathMeanC);
  const t0PrimeNominal = t0PrimeCarbonWtPct(model.chem, bathMeanC) + t0Bias;
  const upperNominal = mq.upperProducts[0];
  const pool0 = Math.max(0, 1 - upperNominal - nom.final.bathMartensite);
  const curve: Array<[number, number]> = [[0, 0]];
  for (let i = 0; i < progress.curve.length; i += 2) curve.push([round(progress.curve[i], 1), round(pool0 * progress.curve[i + 1], 4)]);
  if (curve[curve.length - 1][0] < endS) curve.push([round(endS, 1), round(nom.fractionAtEnd, 4)]);

  // ---- bands
  const bands = {} as Record<BandQuantity, Band>;
  const values = new Float64Array(Math.max(0, n - 1));
  const band = (q: BandQuantity, pick: (r: MemberResult, k: number) => number, digits: number): Band => {
    if (n <= 1) {
      const v = pick(results[0], 0);
      const b = Number.isFinite(v) ? round(v, digits) : null;
      return { p05: b, p50: b, p95: b };
    }
    const cal = bandCalibration[q];
    const z = cal?.sd ? calibrationNormals(setup.uncertainty.seed, BAND_QUANTITIES.indexOf(q), n - 1) : null;
    for (let k = 1; k < n; k++) {
      let v = pick(results[k], k);
      if (cal && Number.isFinite(v)) v += (cal.bias ?? 0) + (z ? (cal.sd as number) * z[k - 1] : 0);
      values[k - 1] = Number.isNaN(v) ? Infinity : v;
    }
    const [q05, q50, q95] = percentilesInPlace(values, PERCENTILES).map((v) => (Number.isFinite(v) ? round(v, digits) : null));
    return { p05: q05, p50: q50, p95: q95 };
  };
  bands.ceilingFraction = band('ceilingFraction', (r) => r.ceiling, 4);
  bands.fractionAtEnd = band('fractionAtEnd', (r) => r.fractionAtEnd, 4);
  bands.timeTo95PctS = band('timeTo95PctS', (r) => r.time95S, 0);
  bands.upperProductsFraction = band('upperProductsFraction', (r) => r.final.upperProducts, 4);
  bands.coreReachesBathS = band('coreReachesBathS', (_, k) => (Number.isNaN(mq.coreReachesBathS[k]) ? Infinity : mq.coreReachesBathS[k]), 0);
  bands.bainiticFerrite = band('bainiticFerrite', (r) => r.final.bainiticFerrite, 4);
  bands.filmAustenite = band('filmAustenite', (r) => r.final.filmAustenite, 4);
  bands.blockyAustenite = band('blockyAustenite', (r) => r.final.blockyAustenite, 4);
  bands.freshMartensite = band('freshMartensite', (r) => r.final.freshMartensite, 4);
  bands.filmToBlockyRatio = band('filmToBlockyRatio', (r) => r.final.filmToBlockyRatio ?? Infinity, 3);
  bands.austeniteCarbonWtPct = band('austeniteCarbonWtPct', (r) => r.final.austeniteCarbonWtPct, 4);
  bands.residualAusteniteMsC = band('residualAusteniteMsC', (r) => r.final.residualAusteniteMsC, 1);
  bands.t0PrimeCarbonWtPct = band('t0PrimeCarbonWtPct', (r) => r.t0Prime, 4);
  bands.hardnessHV = band('hardnessHV', (r) => r.hardnessHV, 0);
  bands.tensileMPa = band('tensileMPa', (r) => r.tensileMPa, 0);
  // Films + blocky austenite left after cooling (a spec's maximum retained austenite judges the member sum).
  bands.retainedAusteniteFraction = band('retainedAusteniteFraction', (r) => r.final.filmAustenite + r.final.blockyAustenite, 4);
  // HRC and HBW are monotonic conversions of HV, so their percentiles are the conversions of HV's percentiles.
  const convert = (b: Band, f: (hv: number) => number | null, digits: number): Band => ({
    p05: b.p05 === null ? null : roundOrNull(f(b.p05), digits),
    p50: b.p50 === null ? null : roundOrNull(f(b.p50), digits),
    p95: b.p95 === null ? null : roundOrNull(f(b.p95), digits),
  });
  bands.hardnessHRC = convert(bands.hardnessHV, hrcFromHv, 1);
  bands.hardnessHBW = convert(bands.hardnessHV, hbwFromHv, 0);

  // Earliest end of the hold: 95 % of the members have reached 95 % of their ceiling, and the centre is at the bath.
  const t95Band = bands.timeTo95PctS.p95;
  const coreNominal = quench.coreReachesBathSByZ[1];
  const earliestHoldEndS = t95Band === null ? null : round(Math.max(t95Band, coreNominal ?? 0), 0);

  // ---- nominal critical temperatures and the rest of the output
  const crit = model.critical;
  const di = idealCriticalDiameter(model.chem);
  const properties: PredictOutput['properties'] = {
    hardnessHV: bands.hardnessHV,
    tensileMPa: bands.tensileMPa,
    hardnessHRC: bands.hardnessHRC,
    hardnessHBW: bands.hardnessHBW,
  };
  if (isIron) {
    const t50 = bands.tensileMPa.p50;
    properties.adiGrade = t50 === null ? null : (a897GradeForTensile(t50)?.grade ?? null);
    properties.adiGradeIso17804 = t50 === null ? null : iso17804GradeForTensile(t50);
  }

  collectWarnings(warnings, {
    model,
    state,
    quench,
    nominal: nom,
    bands,
    bathMeanC,
    partMinC,
    endS,
    t0PrimeNominal,
    idealDiameterMm: di.mm,
    diOutOfRange: di.outOfRange,
    ferriteOnset: mq.ferriteOnsetIndex[0],
    pearliteOnset: mq.pearliteOnsetIndex[0],
    t0Bias,
    bandCalibration,
  });

  return {
    modelVersion: MODEL_VERSION,
    material: setup.material,
    temperaturesC: { ae1: round(crit.ae1C, 1), ae3: round(crit.ae3C, 1), bs: round(crit.bsC, 1), ms: round(crit.msC, 1) },
    temperatureBandsC: temperatureBands(model),
    t0: { bathTempC: round(bathMeanC, 2), t0CarbonWtPct: round(t0Nominal, 4), t0PrimeCarbonWtPct: round(t0PrimeNominal, 4) },
    bainite: {
      ceilingFraction: round(nom.ceiling, 4),
      fractionAtEnd: round(nom.fractionAtEnd, 4),
      timeTo95PctS: Number.isFinite(nom.time95S) ? round(nom.time95S, 0) : null,
      earliestHoldEndS,
      curve,
    },
    quench: {
      upperProductsFraction: round(upperNominal, 4),
      coreReachesBathS: coreNominal === null ? null : round(coreNominal, 1),
      idealCriticalDiameterMm: round(di.mm, 1),
      heatTransferWPerM2K: round(quench.heatTransferWPerM2K, 0),
      ferriteOnsetIndex: round(mq.ferriteOnsetIndex[0], 4),
      pearliteOnsetIndex: round(mq.pearliteOnsetIndex[0], 4),
    },
    final: {
      bainiticFerrite: round(nom.final.bainiticFerrite, 4),
      filmAustenite: round(nom.final.filmAustenite, 4),
      blockyAustenite: round(nom.final.blockyAustenite, 4),
      freshMartensite: round(nom.final.freshMartensite, 4),
      upperProducts: round(nom.final.upperProducts, 4),
      bathMartensite: round(nom.final.bathMartensite, 4),
      austeniteCarbonWtPct: round(nom.final.austeniteCarbonWtPct, 4),
      residualAusteniteMsC: round(nom.final.residualAusteniteMsC, 1),
      filmToBlockyRatio: nom.final.filmToBlockyRatio === null ? null : round(nom.final.filmToBlockyRatio, 3),
    },
    properties,
    bands,
    uncertainty: { samples: setup.uncertainty.samples, seed: setup.uncertainty.seed },
    warnings: dedupe(warnings),
  };
}

/** Lever-rule ceiling of member k at tempC from the T0 table columns (same formula as the kinetics' lever table). */
export function memberT0PrimeWtPct(model: BatchModel, table: T0Table, k: number, tempC: number): number {
  const m = model.members;
  const len = table.t0Calphad.length;
  let p = (tempC - table.fromC) / table.stepC;
  if (p < 0) p = 0;
  if (p > len - 1) p = len - 1;
  const j = Math.max(0, Math.min(Math.floor(p), len - 2));
  const j1 = Math.min(j + 1, len - 1);
  const f = p - j;
  // linear interpolation of each column at (j, f), written out (no closure: this runs once per member)
  const tp = table.t0PrimeCalphad[j] + f * (table.t0PrimeCalphad[j1] - table.t0PrimeCalphad[j]);
  const alt = table.t0PrimeAlt[j] + f * (table.t0PrimeAlt[j1] - table.t0PrimeAlt[j]);
  const t0 = table.t0Calphad[j] + f * (table.t0Calphad[j1] - table.t0Calphad[j]);
  let c = tp + m.descriptionMix[k] * (alt - tp) + (m.storedEnergyScale[k] - 1) * (tp - t0) + (model.setup.calibration?.t0PrimeBiasWtPct ?? 0) + m.t0PrimeOffsetWtPct[k];
  for (let e = 0; e < table.sensitivity.length; e++) {
    const col = table.sensitivity[e];
    c += (col[j] + f * (col[j1] - col[j])) * m.t0ElementDelta[e][k];
  }
  return c;
}

function memberResult(
  model: BatchModel,
  table: T0Table | null,
  mq: ReturnType<typeof memberQuench>,
  k: number,
  ctx: { bathMeanC: number; partMinC: number; hvUpper: number; progress: ReturnType<typeof bathProgress> },
): MemberResult {
  const m = model.members;
  const setup = model.setup;
  const offset = m.thermocoupleOffsetC[k];
  const bathC = ctx.bathMeanC + offset;
  const carbon = m.carbonWtPct[k];
  const upper = mq.upperProducts[k];
  // Martensite formed on entering a bath below Ms (KM with van Bohemen α_m at the bulk carbon).
  const alphaBulk = Math.max(1e-4, (m.alphaSubstitutionalPerK[k] - 19.8e-3 * (1 - Math.exp(-1.56 * carbon))) * m.alphaFactor[k]);
  const bathMartensite = (1 - upper) * koistinenMarburger(m.msBulkC[k], ctx.partMinC + offset, alphaBulk);
  const pool = Math.max(0, 1 - upper - bathMartensite);
  const t0Prime = table ? memberT0PrimeWtPct(model, table, k, bathC) : Number.NaN;
  const lever = t0Prime > carbon ? Math.min(1, (t0Prime - carbon) / (t0Prime - m.carbonInFerriteWtPct[k])) : 0;
  const v = ctx.progress.v[k];
  const final = finalMicrostructure({
    upperProducts: upper,
    bathMartensite,
    bainitePoolFraction: v,
    carbonWtPct: carbon,
    carbonInBainiticFerriteWtPct: m.carbonInFerriteWtPct[k],
    filmCoefficient: m.filmCoefficient[k],
    msSubstitutionalC: m.msSubstitutionalC[k],
    alphaSubstitutionalPerK: m.alphaSubstitutionalPerK[k],
    alphaFactor: m.alphaFactor[k],
    ambientC: setup.ambientC,
  });
  // Hardness: linear mixture of phase hardnesses (properties.ts), ADI times the matrix share.
  const sigmaBf = bainiticFerriteYieldMPa({ Si: m.siWtPct[k], Mn: m.mnWtPct[k] }, bathC, m.carbonInFerriteWtPct[k]);
  let hv = mixtureHardnessHV(
    {
      bainiticFerrite: final.bainiticFerrite,
      austenite: final.filmAustenite + final.blockyAustenite,
      freshMartensite: final.freshMartensite,
      bathMartensite: final.bathMartensite,
      upperProducts: final.upperProducts,
    },
    {
      bainiticFerriteHV: TABOR_HV_PER_MPA * sigmaBf,
      austeniteHV: ASSUMED_RETAINED_AUSTENITE_HV,
      martensiteHV: hvFromHrcExtended(martensiteHrcA255(final.austeniteCarbonWtPct)),
      upperProductsHV: ctx.hvUpper,
    },
  );
  if (setup.material === 'ductile-iron') hv *= 1 - graphiteVolumeFraction(m.bulkCarbonWtPct[k], carbon);
  hv *= Math.exp(m.hardnessLnError[k]);
  let tensile: number;
  if (setup.material === 'ductile-iron') {
    const hbw = hbwFromHv(hv) ?? 0.95 * hv;
    tensile = adiTensileFromHbw(hbw) * Math.exp(m.tensileLnError[k]);
  } else tensile = STEEL_TENSILE_PER_HV * hv * Math.exp(m.tensileLnError[k]);
  const t95 = ctx.progress.time95S[k];
  return {
    final,
    ceiling: pool * lever,
    fractionAtEnd: final.bainiticFerrite,
    time95S: t95 >= 0 ? t95 : Infinity,
    t0Prime,
    hardnessHV: hv,
    tensileMPa: tensile,
  };
}

interface WarningContext {
  model: BatchModel;
  state: BathState;
  quench: QuenchSummary;
  nominal: MemberResult;
  bands: Record<BandQuantity, Band>;
  bathMeanC: number;
  partMinC: number;
  endS: number;
  t0PrimeNominal: number;
  idealDiameterMm: number;
  diOutOfRange: string[];
  ferriteOnset: number;
  pearliteOnset: number;
  t0Bias: number;
  bandCalibration: NonNullable<Calibration['bands']>;
}

function collectWarnings(w: string[], c: WarningContext): void {
  const { model, state, nominal } = c;
  const setup = model.setup;
  const chem = model.chem;
  const isIron = setup.material === 'ductile-iron';
  const fmt = (x: number, d = 1) => x.toFixed(d);

  for (const issue of checkChemistry(setup.chemistryWtPct, setup.material).issues) {
    if (issue.severity === 'warning') w.push(`${issue.field}: ${issue.message}`);
  }
  for (const msg of model.critical.warnings) w.push(`temperaturesC: ${msg}`);

  const si = chem.Si ?? 0;
  const al = chem.Al ?? 0;
  if (!isIron && si + al < 1.0) {
    w.push(
      `chemistryWtPct.Si: Si + Al = ${fmt(si + al, 2)} wt%: common practice holds that 1–2 wt% Si (or Al) is needed to keep cementite out of the carbon-enriched austenite; below that the carbide-free model (T0′ ceiling, retained austenite) overstates the retained austenite`,
    );
  }

  // Bath vs transformation temperatures (§0 step 2).
  const ms = model.critical.msC;
  const bs = model.critical.bsC;
  if (c.partMinC < ms) {
    w.push(
      `bath: the part went down to ${fmt(c.partMinC)} °C, below Ms ${fmt(ms)} °C (van Bohemen): ${fmt(100 * nominal.final.bathMartensite, 1)} % martensite formed in the bath (Koistinen–Marburger), counted as bathMartensite`,
    );
  }
  if (c.bathMeanC >= bs) {
    w.push(
      `bath: mean bath temperature ${fmt(c.bathMeanC)} °C is at or above Bs ${fmt(bs)} °C: no bainite window; ferrite/pearlite forming during the hold itself are not modelled (only on the quench path)`,
    );
  } else if (bs - c.bathMeanC < 30) {
    w.push(`bath: mean bath temperature ${fmt(c.bathMeanC)} °C is within 30 °C of Bs ${fmt(bs)} °C: slow, coarse and blocky-prone transformation`);
  }
  if (nominal.ceiling < MIN_MEANINGFUL_CEILING) {
    w.push(
      `bainite: no bainite is possible at ${fmt(c.bathMeanC)} °C: the T0′ carbon (${fmt(c.t0PrimeNominal, 3)} wt%) does not exceed the austenite carbon (${fmt(model.members.carbonWtPct[0], 3)} wt%)`,
    );
  } else if (nominal.fractionAtEnd < 0.95 * nominal.ceiling) {
    w.push(
      `bainite: incomplete transformation: ${fmt(100 * nominal.fractionAtEnd, 1)} % bainitic ferrite at the end of the hold is below 95 % of the ceiling (${fmt(100 * nominal.ceiling, 1)} %)`,
    );
  }
  if (nominal.final.filmToBlockyRatio !== null && nominal.final.filmToBlockyRatio < 0.9) {
    w.push(
      `final: film/blocky austenite ratio ${fmt(nominal.final.filmToBlockyRatio, 2)} is below 0.9 (Bhadeshia & Edmonds toughness criterion, coefficient from memory)`,
    );
  }
  if (nominal.final.blockyAtHoldEnd > 0.1) w.push(`final: blocky austenite ${fmt(100 * nominal.final.blockyAtHoldEnd, 1)} % at the end of the hold exceeds 10 % (heuristic alarm)`);
  if (nominal.final.freshMartensite > 0.005) {
    w.push(
      `final: ${fmt(100 * nominal.final.freshMartensite, 1)} % fresh (untempered) martensite forms in blocky austenite on cooling (Ms of the enriched austenite ${fmt(nominal.final.residualAusteniteMsC)} °C)`,
    );
  }

  // Quench leg.
  const onset = (name: string, x: number) => {
    if (x >= 1) w.push(`quench: ${name} onset index ${fmt(x, 2)} ≥ 1 on the centre path (Scheil sum of Li 1998 times to 1 %): ${name} predicted before the centre reaches the bath`);
    else if (x >= 0.1) w.push(`quench: ${name} onset index ${fmt(x, 2)} ≥ 0.1 on the centre path: ${name} risk before the centre reaches the bath`);
  };
  onset('ferrite', c.ferriteOnset);
  onset('pearlite', c.pearliteOnset);
  const coreS = c.quench.coreReachesBathSByZ[1];
  if (coreS === null) w.push(`quench: the centre does not come within ${CORE_AT_BATH_MARGIN_C} °C of the bath within the simulated 4 h`);
  else if (coreS > c.endS) w.push(`quench: the bath log ends at ${fmt(c.endS, 0)} s, before the centre reaches the bath (${fmt(coreS, 0)} s)`);
  const eqD = equivalentRoundDiameterMm(setup.section.shape, sectionSizeMm(setup.section));
  if (eqD > c.idealDiameterMm) {
    w.push(
      `quench: the section cools like a ${fmt(eqD, 0)} mm round, larger than the ideal critical diameter ${fmt(c.idealDiameterMm, 0)} mm (ASTM A255): even an ideal quench would not keep its centre free of upper products`,
    );
  }
  if (c.diOutOfRange.length) w.push(`quench: ideal critical diameter is indicative only, A255 factors out of range: ${c.diOutOfRange.join('; ')}`);
  // The A255 factors are for ASTM grain size 7 (§7.1); metallurgy.md does not give the grain-size carbon factors
  // ("Other grain sizes need the A255 grain-size carbon factors [M]"), so DI is not corrected, only flagged.
  if (setup.grainSizeAstm !== A255_GRAIN_SIZE_ASTM) {
    w.push(
      `quench.idealCriticalDiameterMm: computed for ASTM grain size ${A255_GRAIN_SIZE_ASTM} (the A255 factors' basis); the setup's grain size ${setup.grainSizeAstm} is not applied (the A255 grain-size carbon factors are not in our sources)`,
    );
  }
  if (!setup.heatTransferWPerM2K) {
    w.push(`quench: bath heat transfer ${fmt(c.quench.heatTransferWPerM2K, 0)} W/(m² K) is the uncalibrated default for '${setup.agitation}' agitation (from memory); calibrate it per line`);
  }

  // Bath log.
  if (state.log.maxGapS > LONG_GAP_S) w.push(`bath: the log has a gap of ${fmt(state.log.maxGapS, 0)} s; temperatures are interpolated linearly across it`);
  if ((state.log.firstTS ?? 0) > 30) w.push(`bath: the first sample is at ${fmt(state.log.firstTS ?? 0, 0)} s; its temperature is assumed back to the load entering the bath`);

  // Model validity.
  if (isIron) {
    w.push('bainite: Li 1998 kinetics are calibrated on low-alloy steels, not cast iron: time to 95 % is a screening estimate (wide band); calibrate bainiteTimeFactor per product');
    w.push(
      'quench: Li 1998 ferrite/pearlite rates are fitted to low-alloy steels (no Cu term, no graphite): for ductile iron the upper-products prediction is a screening estimate; calibrate ferritePearliteTimeFactor per product',
    );
    w.push(
      't0: ADI austenite is reported to reach ≈1.8–2.2 wt% C in Stage I (metallurgy.md §4.2), above T0′: the T0′ ceiling understates the ausferrite; calibrate t0PrimeBiasWtPct per product against XRD',
    );
    const at = setup.austenitize.tempC;
    if (at < 850 || at > 950) w.push(`austenitize.tempC: ${at} °C is outside 850–950 °C where the Voigt–Loper matrix carbon is fitted`);
    if (c.endS > 3 * 3600) w.push('bainite: Stage II (carbide precipitation from the high-carbon austenite) is not modelled; long holds may lose retained austenite');
  } else {
    if (si > 1.0) w.push('bainite: Li 1998 kinetics are not calibrated for Si-rich carbide-free steels: time to 95 % is a screening estimate (wide band); calibrate bainiteTimeFactor per product');
    const ae3 = model.critical.ae3C;
    const carbon = chem.C ?? 0;
    if (carbon < 0.77 && setup.austenitize.tempC < ae3) {
      w.push(`austenitize.tempC: ${setup.austenitize.tempC} °C is below Ae3 ${fmt(ae3)} °C: ferrite is present before the quench (intercritical), not modelled`);
    }
    if (carbon > 0.8) w.push('chemistryWtPct.C: hypereutectoid steel: undissolved carbides lower the carbon in austenite; feed the dissolved carbon, not the bulk (§8.3)');
  }
  w.push(
    'properties: hardness is a mixture of phase hardnesses from a component strength model (coefficients from memory, retained austenite assumed 300 HV), not a published relation for carbide-free bainite; its band is widened (ln-sd 0.08–0.10) – calibrate per product',
  );
  if (isIron) {
    w.push(
      'properties.adiGrade: grade inferred from predicted hardness via the A897 table: the tensile it is graded on was itself interpolated from the A897 typical-HBW ranges at the predicted hardness (graphite counted as zero hardness), so it is a prediction, not a measurement; confirm by test',
    );
  }
  else w.push('properties: tensile from hardness (≈3.25·HV, order of ISO 18265 conversions, ±10 %) is approximate');

  // Thermodynamic description spread at the bath (§9.1) and segregation (§9.9).
  const t0Table = state.t0Table;
  if (t0Table) {
    const tp = t0TableAt(t0Table, t0Table.t0PrimeCalphad, c.bathMeanC);
    const alt = t0TableAt(t0Table, t0Table.t0PrimeAlt, c.bathMeanC);
    if (Math.abs(tp - alt) > 0.05) {
      w.push(
        `t0: the CALPHAD T0′ and the constructed stronger-Mn/Ni 'alt' spread (standing in for the published temperature-shift descriptions, §9.1) differ by ${fmt(Math.abs(tp - alt), 3)} wt% in T0′ carbon at the bath; the spread is carried in the bands`,
      );
    }
  }
  const mn = chem.Mn ?? 0;
  if (mn > 0.3 && nominal.ceiling >= MIN_MEANINGFUL_CEILING) {
    const segregated = { ...chem, Mn: 1.3 * mn };
    const tpSeg = t0PrimeCarbonWtPct(segregated, c.bathMeanC) + c.t0Bias;
    const carbon = model.members.carbonWtPct[0];
    const sb = model.members.carbonInFerriteWtPct[0];
    const leverSeg = tpSeg > carbon ? (tpSeg - carbon) / (tpSeg - sb) : 0;
    const pool = Math.max(0, 1 - nominal.final.upperProducts - nominal.final.bathMartensite);
    if (nominal.ceiling - pool * leverSeg > 0.05) {
      w.push(
        `bainite: in Mn-segregated regions (+30 % Mn) the ceiling drops from ${fmt(100 * nominal.ceiling, 1)} % to ${fmt(100 * pool * leverSeg, 1)} % (metallurgy.md §9.9): expect more blocky austenite there`,
      );
    }
  }
  if (c.t0Bias !== 0) w.push(`t0: T0′ includes a per-product calibration bias of ${c.t0Bias} wt%`);
  if (setup.calibration?.bainiteTimeFactor !== undefined) w.push(`bainite: Li bainite times are scaled by the per-product calibration factor ${setup.calibration.bainiteTimeFactor}`);
  if (setup.calibration?.hardnessFactor !== undefined) w.push(`properties: predicted hardness is scaled by the per-product calibration factor ${setup.calibration.hardnessFactor}`);
  const spreads = (['bainiteTimeLnSd', 'ferritePearliteTimeLnSd', 't0PrimeSdWtPct', 'hardnessLnSd'] as const).filter((q) => setup.calibration?.[q] !== undefined);
  if (spreads.length) w.push(`bands: the per-product calibration's own scatter replaces the default model error for ${spreads.join(', ')}`);
  if (setup.calibration?.ferritePearliteTimeFactor !== undefined) {
    w.push(`quench: Li ferrite/pearlite times are scaled by the per-product calibration factor ${setup.calibration.ferritePearliteTimeFactor}`);
  }
  const calibrated = Object.keys(c.bandCalibration);
  if (calibrated.length) w.push(`bands: per-product calibration (bias/spread) applied to ${calibrated.join(', ')}`);
}

function round(x: number, digits: number): number {
  const k = 10 ** digits;
  const r = Math.round(x * k) / k;
  return Object.is(r, -0) ? 0 : r;
}

function roundOrNull(x: number | null, digits: number): number | null {
  return x === null || !Number.isFinite(x) ? null : round(x, digits);
}

function dedupe(list: string[]): string[] {
  return [...new Set(list)];
}
