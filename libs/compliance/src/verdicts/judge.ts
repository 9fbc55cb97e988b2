import { PREDICTION_CRITERIA, type AcceptanceCriteria, type CriterionVerdict, type PredictionCriterion, type VerdictLevel } from '@ausline/contracts';
import { hbwFromHv, hrcFromHv, hvFromHbw, hvFromHrc, type PredictOutput } from '@ausline/metallurgy';
import { judgeMax, judgeMin, judgeRange, worstVerdict, ONE_SIDED_Z95, type NumericBand } from './bands.js';

/**
 * Judges each acceptance criterion a product spec names on a batch prediction (libs/metallurgy `finalizeBatch`
 * output plus a few bands the prediction layer derives from the same ensemble). Pure and deterministic: the same
 * prediction, criteria and context always give the same verdicts and the same wording.
 *
 * A criterion the spec does not name is not judged (a spec names only what its customer asks for). Verdicts:
 * conforming = the whole p05–p95 band meets the limit; nonconforming = the whole band breaks it; at-risk = it crosses.
 * Each verdict says the criterion, the numbers, and which input drove the value (`drivers`).
 */

/** Criteria whose value changes with the length of the hold (the hold advisor waits for these). */
export const HOLD_DEPENDENT_CRITERIA: ReadonlySet<PredictionCriterion> = new Set<PredictionCriterion>([
  'min-bainite',
  'complete-transformation',
  'max-fresh-martensite',
  'max-blocky-austenite',
  'min-film-to-block',
  'max-retained-austenite',
  'stable-retained-austenite',
  'hardness',
  'tensile',
  'adi-stage-i',
]);

/**
 * Common practice: 1–2 wt% Si (or Al) keeps cementite out of the carbon-enriched austenite (metallurgy.md §5.3 [M];
 * issue 3 "1–2 wt% Si keeps cementite out", common practice). Used as the limit when a spec asks for the check with
 * `minSiPlusAlWtPct` and, for information, in the drivers.
 */
export const COMMON_PRACTICE_MIN_SI_PLUS_AL_WT_PCT = 1.0;

/** ADI Stage I ends when the carbon-poor austenite that martensite would form from is below ≈ 3 % (metallurgy.md §4.2 [M]). */
export const ADI_STAGE_I_MAX_MARTENSITE_FRACTION = 0.03;
/**
 * ADI Stage II onset when the spec gives none: 240 min at 370 °C – OUR ASSUMPTION, anchored on the upper end of the
 * 30–240 min ADI hold range of practice.md §2.2 [S33] at a mid-window temperature; a product's own onset (trial holds
 * checked by XRD) belongs in the spec (`adiProcessWindow.stageIIOnsetMin` at `stageIIOnsetRefTempC`).
 */
export const ADI_STAGE_II_DEFAULT = { onsetMin: 240, refTempC: 370 } as const;
/**
 * Temperature dependence of the Stage II onset: Arrhenius with Q = 140 kJ/mol, the order of the activation energy of
 * carbon diffusion in austenite (from memory, [M]); onset spread ln-sd 0.5 (our assumption).
 */
export const ADI_STAGE_II_ACTIVATION_J_PER_MOL = 140_000;
export const ADI_STAGE_II_LN_SD = 0.5;
const R_J_PER_MOL_K = 8.31451;

export interface JudgeContext {
  chemistryWtPct: Readonly<Record<string, number | undefined>>;
  /** s from INTO_BATH to the end of the judged history. */
  holdEndS: number;
  /** The end of the judged history is projected (load still in the bath). */
  projected: boolean;
  /** Mean bath temperature of the judged history, °C. */
  bathTempC: number;
  /** The spec's nominal bath temperature (middle of its band), °C. */
  nominalBathC: number | null;
  transferS: number;
  section: { shape: 'PLATE' | 'CYLINDER' | 'SQUARE_BAR'; sizeMm: number };
  equivalentDiameterMm: number;
  ambientC: number;
  /** 1σ analysis tolerance of Si and Al, wt% (for the Si + Al band). */
  siSdWtPct: number;
  alSdWtPct: number;
}

/** Bands derived by the prediction layer from the same ensemble. */
export interface ExtraBands {
  /** Bath temperature minus the austenite's Ms, per member (°C). */
  msMarginC: NumericBand;
  /** Bs minus the bath temperature, per member (°C). */
  bsMarginC: NumericBand;
}

export interface HoldJudgement {
  /** Earliest safe end of hold from the hold advisor, s from INTO_BATH; null = none found. */
  earliestSafeEndS: number | null;
  /** End of hold judged: the actual one (out of the bath) or the scheduled one. */
  endS: number;
  endBasis: 'actual' | 'batch' | 'spec-min-hold';
  limiting: readonly string[];
}

export interface JudgeInput {
  prediction: PredictOutput;
  criteria: AcceptanceCriteria;
  extra: ExtraBands;
  context: JudgeContext;
  hold?: HoldJudgement | null;
}

// ---------------------------------------------------------------------------------------------
// Formatting (stable wording: numbers rounded to what a metallurgist reads)
// ---------------------------------------------------------------------------------------------

const pct = (x: number | null | undefined): string => {
  if (x === null || x === undefined || !Number.isFinite(x)) return '—';
  const p = 100 * x;
  return `${Math.abs(p) < 10 ? p.toFixed(1) : p.toFixed(0)} %`;
};
const degC = (x: number | null | undefined): string => (x === null || x === undefined || !Number.isFinite(x) ? '—' : `${x.toFixed(0)} °C`);
const minutes = (s: number | null | undefined): string => (s === null || s === undefined || !Number.isFinite(s) ? 'never' : `${Math.round(s / 60)} min`);
const num = (x: number | null | undefined, digits: number): string => (x === null || x === undefined || !Number.isFinite(x) ? '—' : x.toFixed(digits));

const VERDICT_WORD: Record<VerdictLevel, string> = { conforming: 'conforming', 'at-risk': 'at risk', nonconforming: 'nonconforming' };

function bandText(b: NumericBand, f: (x: number | null) => string): string {
  return `${f(b.p50)} (p05 ${f(b.p05)}, p95 ${f(b.p95)})`;
}

// ---------------------------------------------------------------------------------------------
// Drivers: which input moved the value
// ---------------------------------------------------------------------------------------------

interface DriverFacts {
  p: PredictOutput;
  c: JudgeContext;
  ferriteWord: string;
}

function bathOffsetDriver(f: DriverFacts): string | null {
  const { c } = f;
  if (c.nominalBathC === null) return null;
  const off = c.bathTempC - c.nominalBathC;
  if (Math.abs(off) < 3) return null;
  return `bath ${degC(c.bathTempC)} is ${Math.abs(off).toFixed(0)} °C ${off > 0 ? 'above' : 'below'} the spec's nominal ${degC(c.nominalBathC)}`;
}

function ceilingDriver(f: DriverFacts): string {
  const { p, c } = f;
  const carbon = p.final.austeniteCarbonWtPct;
  return `T0′ ceiling ${pct(p.bands.ceilingFraction.p50 ?? p.bainite.ceilingFraction)} at ${degC(c.bathTempC)} (T0′ carbon ${num(p.t0.t0PrimeCarbonWtPct, 2)} wt%; austenite ends at ${num(carbon, 2)} wt% C): no longer hold goes past it`;
}

function timeDriver(f: DriverFacts): string {
  const { p, c } = f;
  const t95 = p.bands.timeTo95PctS;
  return `hold ${minutes(c.holdEndS)}${c.projected ? ' (scheduled)' : ''} vs time to 95 % of the ceiling ${minutes(t95.p50)} (p95 ${minutes(t95.p95)})`;
}

function upperDriver(f: DriverFacts): string | null {
  const { p, c } = f;
  const up = p.bands.upperProductsFraction.p50 ?? p.quench.upperProductsFraction;
  if (!(up >= 0.02)) return null;
  return `upper products ${pct(up)} from the quench take austenite first (transfer ${c.transferS.toFixed(0)} s, ${sectionText(c)})`;
}

function sectionText(c: JudgeContext): string {
  const shape = c.section.shape === 'PLATE' ? 'plate' : c.section.shape === 'CYLINDER' ? 'round' : 'square bar';
  return `${num(c.section.sizeMm, 1)} mm ${shape}`;
}

/** Is the bainite (ausferrite) fraction limited by the ceiling or by the hold? Most important first. */
function transformationDrivers(f: DriverFacts): string[] {
  const { p, c } = f;
  const out: string[] = [];
  const t95 = p.bands.timeTo95PctS.p95;
  const timeLimited = t95 === null || t95 > c.holdEndS || p.bainite.fractionAtEnd < 0.95 * p.bainite.ceilingFraction;
  if (timeLimited) out.push(timeDriver(f));
  out.push(ceilingDriver(f));
  const off = bathOffsetDriver(f);
  if (off) out.push(off);
  const up = upperDriver(f);
  if (up) out.push(up);
  return out;
}

function austeniteStabilityDriver(f: DriverFacts): string {
  const { p, c } = f;
  return `retained austenite at ${num(p.final.austeniteCarbonWtPct, 2)} wt% C has Ms ${degC(p.final.residualAusteniteMsC)} (van Bohemen) against ambient ${degC(c.ambientC)}`;
}

// ---------------------------------------------------------------------------------------------
// The criteria
// ---------------------------------------------------------------------------------------------

interface Judged {
  criterion: PredictionCriterion;
  verdict: VerdictLevel;
  message: string;
  band?: NumericBand;
  limit?: number | null;
  limitMin?: number | null;
  limitMax?: number | null;
  unit: string;
  drivers: string[];
}

function toVerdict(j: Judged): CriterionVerdict {
  return {
    criterion: j.criterion,
    rule: PREDICTION_CRITERIA[j.criterion],
    verdict: j.verdict,
    message: j.message,
    ...(j.band ? { p05: j.band.p05, p50: j.band.p50, p95: j.band.p95 } : {}),
    ...(j.limit !== undefined ? { limit: j.limit } : {}),
    ...(j.limitMin !== undefined ? { limitMin: j.limitMin } : {}),
    ...(j.limitMax !== undefined ? { limitMax: j.limitMax } : {}),
    unit: j.unit,
    drivers: j.drivers,
  };
}

export function judgePrediction(input: JudgeInput): CriterionVerdict[] {
  const { prediction: p, criteria: a, extra, context: c } = input;
  const isIron = p.material === 'ductile-iron';
  const f: DriverFacts = { p, c, ferriteWord: isIron ? 'ausferritic ferrite' : 'bainitic ferrite' };
  const out: Judged[] = [];
  const b = p.bands;
  const predicted = c.projected ? 'predicted at the scheduled end of hold' : 'predicted';

  if (a.minBainiteFraction !== undefined) {
    const band = b.bainiticFerrite;
    const verdict = judgeMin(band, a.minBainiteFraction);
    out.push({
      criterion: 'min-bainite',
      verdict,
      band,
      limit: a.minBainiteFraction,
      unit: 'fraction',
      message: `${cap(f.ferriteWord)} ${predicted} ${bandText(band, pct)} against a minimum of ${pct(a.minBainiteFraction)}: ${VERDICT_WORD[verdict]}`,
      drivers: transformationDrivers(f),
    });
  }

  if (a.requireCompleteTransformation) {
    const band = b.timeTo95PctS;
    // "Time to 95 % of the ceiling" must not exceed the end of the hold; null = some members never got there.
    const verdict = judgeMax(band, c.holdEndS, 'plus-infinity');
    out.push({
      criterion: 'complete-transformation',
      verdict,
      band,
      limit: c.holdEndS,
      unit: 's',
      message: `Time to 95 % of the T0′ ceiling ${minutes(band.p50)} (p05 ${minutes(band.p05)}, p95 ${minutes(band.p95)}) against a hold of ${minutes(c.holdEndS)}${c.projected ? ' (scheduled)' : ''}: ${verdict === 'conforming' ? 'transformation complete' : verdict === 'at-risk' ? 'transformation may be incomplete' : 'transformation incomplete'} (${VERDICT_WORD[verdict]})`,
      drivers: [timeDriver(f), ...[bathOffsetDriver(f)].filter((x): x is string => x !== null)],
    });
  }

  if (a.maxFreshMartensiteFraction !== undefined) {
    const band = b.freshMartensite;
    const verdict = judgeMax(band, a.maxFreshMartensiteFraction);
    const drivers = [austeniteStabilityDriver(f), ...transformationDrivers(f)];
    if ((p.final.bathMartensite ?? 0) > 0.005) drivers.unshift(`${pct(p.final.bathMartensite)} martensite already formed in the bath (part below Ms ${degC(p.temperaturesC.ms)})`);
    out.push({
      criterion: 'max-fresh-martensite',
      verdict,
      band,
      limit: a.maxFreshMartensiteFraction,
      unit: 'fraction',
      message: `Fresh martensite on cooling ${predicted} ${bandText(band, pct)} against a maximum of ${pct(a.maxFreshMartensiteFraction)}: ${VERDICT_WORD[verdict]}`,
      drivers,
    });
  }

  if (a.maxBlockyAusteniteFraction !== undefined) {
    const band = b.blockyAustenite;
    const verdict = judgeMax(band, a.maxBlockyAusteniteFraction);
    out.push({
      criterion: 'max-blocky-austenite',
      verdict,
      band,
      limit: a.maxBlockyAusteniteFraction,
      unit: 'fraction',
      message: `Blocky retained austenite ${predicted} ${bandText(band, pct)} against a maximum of ${pct(a.maxBlockyAusteniteFraction)}: ${VERDICT_WORD[verdict]}`,
      drivers: transformationDrivers(f),
    });
  }

  if (a.minFilmToBlockRatio !== undefined) {
    const band = b.filmToBlockyRatio;
    // null = no blocky austenite left: the ratio is unbounded (good).
    const verdict = judgeMin(band, a.minFilmToBlockRatio, 'plus-infinity');
    const ratio = (x: number | null) => (x === null ? 'no blocky' : num(x, 2));
    out.push({
      criterion: 'min-film-to-block',
      verdict,
      band,
      limit: a.minFilmToBlockRatio,
      unit: 'ratio',
      message: `Film-to-block austenite ratio ${predicted} ${bandText(band, ratio)} against a minimum of ${num(a.minFilmToBlockRatio, 2)}: ${VERDICT_WORD[verdict]}`,
      drivers: [`blocky austenite ${pct(b.blockyAustenite.p50)} vs films ${pct(b.filmAustenite.p50)}`, ...transformationDrivers(f)],
    });
  }

  if (a.maxRetainedAusteniteFraction !== undefined) {
    const band = b.retainedAusteniteFraction;
    const verdict = judgeMax(band, a.maxRetainedAusteniteFraction);
    out.push({
      criterion: 'max-retained-austenite',
      verdict,
      band,
      limit: a.maxRetainedAusteniteFraction,
      unit: 'fraction',
      message: `Retained austenite (films + blocky) ${predicted} ${bandText(band, pct)} against a maximum of ${pct(a.maxRetainedAusteniteFraction)}: ${VERDICT_WORD[verdict]}`,
      drivers: transformationDrivers(f),
    });
  }

  if (a.minMsMarginC !== undefined) {
    const band = extra.msMarginC;
    const verdict = judgeMin(band, a.minMsMarginC);
    out.push({
      criterion: 'ms-margin',
      verdict,
      band,
      limit: a.minMsMarginC,
      unit: '°C',
      message: `Bath ${degC(c.bathTempC)} sits ${bandText(band, (x) => (x === null ? '—' : `${x.toFixed(0)} °C`))} above the heat's Ms ${degC(p.temperaturesC.ms)} (van Bohemen) against a minimum margin of ${a.minMsMarginC} °C: ${VERDICT_WORD[verdict]}`,
      drivers: [msDriver(p, c), ...[bathOffsetDriver(f)].filter((x): x is string => x !== null)],
    });
  }

  if (a.minBsMarginC !== undefined) {
    const band = extra.bsMarginC;
    const verdict = judgeMin(band, a.minBsMarginC);
    out.push({
      criterion: 'bs-margin',
      verdict,
      band,
      limit: a.minBsMarginC,
      unit: '°C',
      message: `Bath ${degC(c.bathTempC)} sits ${bandText(band, (x) => (x === null ? '—' : `${x.toFixed(0)} °C`))} below the heat's Bs ${degC(p.temperaturesC.bs)} (van Bohemen) against a minimum margin of ${a.minBsMarginC} °C: ${VERDICT_WORD[verdict]}`,
      drivers: [`Bs ${degC(p.temperaturesC.bs)} from C ${num(c.chemistryWtPct.C, 2)}, Mn ${num(c.chemistryWtPct.Mn ?? 0, 2)}, Cr ${num(c.chemistryWtPct.Cr ?? 0, 2)}, Mo ${num(c.chemistryWtPct.Mo ?? 0, 2)} wt%`, ...[bathOffsetDriver(f)].filter((x): x is string => x !== null)],
    });
  }

  if (a.maxUpperProductsFraction !== undefined) {
    const band = b.upperProductsFraction;
    const verdict = judgeMax(band, a.maxUpperProductsFraction);
    const drivers: string[] = [];
    if (c.equivalentDiameterMm > p.quench.idealCriticalDiameterMm) {
      drivers.push(`the ${sectionText(c)} cools like a ${c.equivalentDiameterMm.toFixed(0)} mm round, above the heat's ideal critical diameter ${p.quench.idealCriticalDiameterMm.toFixed(0)} mm (ASTM A255)`);
    } else drivers.push(`${sectionText(c)} (cools like a ${c.equivalentDiameterMm.toFixed(0)} mm round; ideal critical diameter ${p.quench.idealCriticalDiameterMm.toFixed(0)} mm, ASTM A255)`);
    const core = p.quench.coreReachesBathS;
    drivers.push(`centre reaches the bath after ${core === null ? 'more than 4 h' : `${core.toFixed(0)} s`}`);
    drivers.push(`transfer ${c.transferS.toFixed(0)} s in air`);
    const h = (p.quench as { heatTransferWPerM2K?: number }).heatTransferWPerM2K;
    if (h !== undefined) drivers.push(`bath heat transfer ${h.toFixed(0)} W/(m² K)`);
    out.push({
      criterion: 'max-upper-products',
      verdict,
      band,
      limit: a.maxUpperProductsFraction,
      unit: 'fraction',
      message: `Upper transformation products (ferrite, pearlite) at the centre of the ${sectionText(c)} during the quench ${bandText(band, pct)} against a maximum of ${pct(a.maxUpperProductsFraction)}: ${VERDICT_WORD[verdict]}`,
      drivers,
    });
  }

  if (a.requireStableRetainedAustenite) {
    const band = b.residualAusteniteMsC;
    const verdict = judgeMax(band, c.ambientC);
    out.push({
      criterion: 'stable-retained-austenite',
      verdict,
      band,
      limit: c.ambientC,
      unit: '°C',
      message: `Ms of the retained austenite ${predicted} ${bandText(band, (x) => degC(x))} against ambient ${degC(c.ambientC)}: ${verdict === 'conforming' ? 'stable' : verdict === 'at-risk' ? 'may transform to martensite on cooling' : 'transforms to martensite on cooling'} (${VERDICT_WORD[verdict]})`,
      drivers: [austeniteStabilityDriver(f), ...transformationDrivers(f)],
    });
  }

  if (a.minSiPlusAlWtPct !== undefined) {
    const si = c.chemistryWtPct.Si ?? 0;
    const al = c.chemistryWtPct.Al ?? 0;
    const sum = si + al;
    const sd = Math.hypot(si > 0 ? c.siSdWtPct : 0, al > 0 ? c.alSdWtPct : 0);
    const band: NumericBand = { p05: round(sum - ONE_SIDED_Z95 * sd, 3), p50: round(sum, 3), p95: round(sum + ONE_SIDED_Z95 * sd, 3) };
    const verdict = judgeMin(band, a.minSiPlusAlWtPct);
    out.push({
      criterion: 'min-si-plus-al',
      verdict,
      band,
      limit: a.minSiPlusAlWtPct,
      unit: 'wt%',
      message: `Si + Al ${num(sum, 2)} wt% (analysis tolerance ±${num(ONE_SIDED_Z95 * sd, 2)}) against a minimum of ${num(a.minSiPlusAlWtPct, 2)} wt% needed to keep cementite out of the enriched austenite: ${VERDICT_WORD[verdict]}`,
      drivers: [
        `heat chemistry Si ${num(si, 2)} wt%, Al ${num(al, 3)} wt%`,
        `common practice: 1–2 wt% Si (or Al) keeps cementite out (metallurgy.md §5.3); below it the carbide-free prediction overstates the retained austenite`,
      ],
    });
  }

  if (a.hardness) out.push(judgeHardness(p, a.hardness, f, predicted));

  if (a.tensile && (a.tensile.minTensileMPa !== undefined || a.tensile.maxTensileMPa !== undefined)) {
    const band = b.tensileMPa;
    const verdict = judgeRange(band, a.tensile.minTensileMPa, a.tensile.maxTensileMPa);
    const lim = [a.tensile.minTensileMPa !== undefined ? `min ${a.tensile.minTensileMPa}` : null, a.tensile.maxTensileMPa !== undefined ? `max ${a.tensile.maxTensileMPa}` : null].filter(Boolean).join(', ');
    const drivers = hardnessDrivers(f);
    drivers.push(isIron ? 'ADI tensile read off the A897 grade table at the predicted hardness' : 'tensile from hardness (≈3.25·HV, approximate)');
    if (a.tensile.minYieldMPa !== undefined || a.tensile.minElongationPct !== undefined) drivers.push('yield strength and elongation are not predicted; the lab result decides them');
    out.push({
      criterion: 'tensile',
      verdict,
      band,
      limitMin: a.tensile.minTensileMPa ?? null,
      limitMax: a.tensile.maxTensileMPa ?? null,
      limit: a.tensile.minTensileMPa ?? a.tensile.maxTensileMPa ?? null,
      unit: 'MPa',
      message: `Tensile strength ${predicted} ${bandText(band, (x) => (x === null ? '—' : `${x.toFixed(0)} MPa`))} against ${lim} MPa: ${VERDICT_WORD[verdict]}`,
      drivers,
    });
  }

  if (isIron && a.adiProcessWindow) {
    const stageIMax = a.adiProcessWindow.stageIMaxMartensiteFraction ?? ADI_STAGE_I_MAX_MARTENSITE_FRACTION;
    const band = b.freshMartensite;
    const verdict = judgeMax(band, stageIMax);
    out.push({
      criterion: 'adi-stage-i',
      verdict,
      band,
      limit: stageIMax,
      unit: 'fraction',
      message: `ADI Stage I: carbon-poor austenite turning to martensite on cooling ${bandText(band, pct)} against at most ${pct(stageIMax)} at the end of Stage I: ${verdict === 'conforming' ? 'Stage I finished' : verdict === 'at-risk' ? 'Stage I may be unfinished' : 'Stage I unfinished'} (${VERDICT_WORD[verdict]})`,
      drivers: transformationDrivers(f),
    });
    const onset = stageIIOnsetBand(a.adiProcessWindow, c.bathTempC);
    // The end of hold must come before the Stage II onset: conforming when it is before its p05.
    const v2: VerdictLevel = c.holdEndS <= (onset.p05 as number) ? 'conforming' : c.holdEndS > (onset.p95 as number) ? 'nonconforming' : 'at-risk';
    out.push({
      criterion: 'adi-stage-ii',
      verdict: v2,
      band: { p05: round((onset.p05 as number) / 60, 0), p50: round((onset.p50 as number) / 60, 0), p95: round((onset.p95 as number) / 60, 0) },
      limit: round(c.holdEndS / 60, 1),
      unit: 'min',
      message: `ADI Stage II (carbides from the high-carbon austenite) estimated to begin after ${minutes(onset.p50)} (p05 ${minutes(onset.p05)}, p95 ${minutes(onset.p95)}) at ${degC(c.bathTempC)}; hold ${minutes(c.holdEndS)}${c.projected ? ' (scheduled)' : ''}: ${v2 === 'conforming' ? 'Stage II not begun' : v2 === 'at-risk' ? 'Stage II may have begun' : 'Stage II begun'} (${VERDICT_WORD[v2]})`,
      drivers: [
        a.adiProcessWindow.stageIIOnsetMin !== undefined
          ? `the product's Stage II onset ${a.adiProcessWindow.stageIIOnsetMin} min at ${a.adiProcessWindow.stageIIOnsetRefTempC ?? ADI_STAGE_II_DEFAULT.refTempC} °C (spec), scaled to the bath temperature`
          : `no product onset in the spec: assumed ${ADI_STAGE_II_DEFAULT.onsetMin} min at ${ADI_STAGE_II_DEFAULT.refTempC} °C (screening estimate), scaled to the bath temperature`,
        ...[bathOffsetDriver(f)].filter((x): x is string => x !== null),
      ],
    });
  }

  const hold = input.hold;
  if (hold && hold.earliestSafeEndS !== null && out.some((j) => HOLD_DEPENDENT_CRITERIA.has(j.criterion))) {
    const ok = hold.endS >= hold.earliestSafeEndS;
    const endWord = hold.endBasis === 'actual' ? 'the hold ended' : hold.endBasis === 'batch' ? 'the scheduled end of hold' : "the spec's minimum hold (no schedule given) ends";
    out.push({
      criterion: 'hold-length',
      verdict: ok ? 'conforming' : 'nonconforming',
      band: { p05: null, p50: round(hold.earliestSafeEndS, 0), p95: null },
      limit: round(hold.endS, 0),
      unit: 's',
      message: ok
        ? `Hold long enough: ${endWord} at ${minutes(hold.endS)}, after the earliest safe end ${minutes(hold.earliestSafeEndS)} at ${degC(c.bathTempC)}`
        : `Hold too short: ${endWord} at ${minutes(hold.endS)}, before the earliest safe end ${minutes(hold.earliestSafeEndS)} (every hold-dependent criterion met with 95 % confidence at ${degC(c.bathTempC)}); ${Math.ceil((hold.earliestSafeEndS - hold.endS) / 60)} min more needed`,
      drivers: [hold.limiting.length ? `last criteria to be met: ${hold.limiting.join(', ')}` : 'time to 95 % of the ceiling', ...[bathOffsetDriver(f)].filter((x): x is string => x !== null)],
    });
  }

  return out.map(toVerdict);
}

function msDriver(p: PredictOutput, c: JudgeContext): string {
  return `Ms ${degC(p.temperaturesC.ms)} from C ${num(c.chemistryWtPct.C, 2)}, Mn ${num(c.chemistryWtPct.Mn ?? 0, 2)}, Si ${num(c.chemistryWtPct.Si ?? 0, 2)}, Cr ${num(c.chemistryWtPct.Cr ?? 0, 2)}, Ni ${num(c.chemistryWtPct.Ni ?? 0, 2)} wt%${p.material === 'ductile-iron' ? ' (matrix carbon from the austenitize)' : ''}`;
}

function hardnessDrivers(f: DriverFacts): string[] {
  const { p } = f;
  const out: string[] = [];
  if ((p.bands.freshMartensite.p50 ?? 0) >= 0.05) out.push(`fresh martensite ${pct(p.bands.freshMartensite.p50)} raises it`);
  if ((p.bands.upperProductsFraction.p50 ?? 0) >= 0.02) out.push(`upper products ${pct(p.bands.upperProductsFraction.p50)} lower it`);
  out.push(`${f.ferriteWord} ${pct(p.bands.bainiticFerrite.p50)} formed at ${degC(f.c.bathTempC)}`);
  const off = bathOffsetDriver(f);
  if (off) out.push(off);
  return out;
}

function judgeHardness(p: PredictOutput, h: NonNullable<AcceptanceCriteria['hardness']>, f: DriverFacts, predicted: string): Judged {
  const hv = p.properties.hardnessHV;
  // Judge in HV where the spec limit converts (ASTM E140 rows, monotonic); else in the spec's scale, where a null
  // percentile is outside the conversion table (its side unknown, so at best at-risk).
  const toHv = h.scale === 'HV' ? (x: number) => x : h.scale === 'HRC' ? hvFromHrc : hvFromHbw;
  const fromHv = h.scale === 'HV' ? (x: number) => x : h.scale === 'HRC' ? hrcFromHv : hbwFromHv;
  const minHv = toHv(h.min);
  const maxHv = toHv(h.max);
  let verdict: VerdictLevel;
  if (minHv !== null && maxHv !== null) verdict = judgeRange(hv, minHv, maxHv);
  else {
    const scaled = h.scale === 'HRC' ? p.properties.hardnessHRC : p.properties.hardnessHBW;
    verdict = worstVerdict([judgeMin(scaled, h.min), judgeMax(scaled, h.max)]) as VerdictLevel;
  }
  const conv = (x: number | null) => (x === null ? null : fromHv(x));
  const band: NumericBand = {
    p05: roundOrNull(conv(hv.p05), h.scale === 'HRC' ? 1 : 0),
    p50: roundOrNull(conv(hv.p50), h.scale === 'HRC' ? 1 : 0),
    p95: roundOrNull(conv(hv.p95), h.scale === 'HRC' ? 1 : 0),
  };
  const show = (x: number | null) => (x === null ? 'out of table' : `${x} ${h.scale}`);
  return {
    criterion: 'hardness',
    verdict,
    band,
    limitMin: h.min,
    limitMax: h.max,
    limit: h.min,
    unit: h.scale,
    message: `Hardness ${predicted} ${bandText(band, show)}${h.scale === 'HV' ? '' : ` (${hv.p05}–${hv.p95} HV, ASTM E140)`} against ${h.min}–${h.max} ${h.scale}: ${VERDICT_WORD[verdict]}`,
    drivers: hardnessDrivers(f),
  };
}

/** Stage II onset time band (s) at a bath temperature, from the spec's reference onset or our default. */
export function stageIIOnsetBand(w: NonNullable<AcceptanceCriteria['adiProcessWindow']>, bathTempC: number): NumericBand {
  const onsetMin = w.stageIIOnsetMin ?? ADI_STAGE_II_DEFAULT.onsetMin;
  const refC = w.stageIIOnsetRefTempC ?? ADI_STAGE_II_DEFAULT.refTempC;
  const t50 = onsetMin * 60 * Math.exp((ADI_STAGE_II_ACTIVATION_J_PER_MOL / R_J_PER_MOL_K) * (1 / (bathTempC + 273.15) - 1 / (refC + 273.15)));
  return { p05: t50 * Math.exp(-ONE_SIDED_Z95 * ADI_STAGE_II_LN_SD), p50: t50, p95: t50 * Math.exp(ONE_SIDED_Z95 * ADI_STAGE_II_LN_SD) };
}

function cap(s: string): string {
  return s.charAt(0).toUpperCase() + s.slice(1);
}

function round(x: number, digits: number): number {
  const k = 10 ** digits;
  return Math.round(x * k) / k;
}

function roundOrNull(x: number | null, digits: number): number | null {
  return x === null || !Number.isFinite(x) ? null : round(x, digits);
}
