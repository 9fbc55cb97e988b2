import type { AcceptanceCriteria, AdviceRow, ChemistryLimits, HeatAdvice, HeatDiagram, ProcessWindow } from '@ausline/contracts';
import {
  advanceBath,
  ae1C,
  ae3C,
  batchModel,
  checkChemistry,
  createBathState,
  criticalTemperatures,
  equivalentRoundDiameterMm,
  idealCriticalDiameter,
  MODEL_VERSION,
  sectionSizeMm,
  t0Rows,
  type Agitation,
  type BatchSetup,
  type Calibration,
} from '@ausline/metallurgy';
import { calibrationsInForce, labCalibrationBasis, type ProductCalibrations } from '../calibration/bands.js';
import { judgeMax } from '../verdicts/bands.js';
import { HOLD_DEPENDENT_CRITERIA } from '../verdicts/judge.js';
import { DEFAULT_AMBIENT_C, DEFAULT_GRAIN_SIZE_ASTM, engineChemistry, engineMaterial, engineSection, lineHeatTransferFor, PredictionInputError, type RecordMaterial, type RecordSectionShape } from './batch-setup.js';
import { CHECKPOINT_S, COARSE_STEP_S, evaluateState, projectionPoints, searchEarliest, type EvaluationContext } from './evaluate.js';

/**
 * Heat advice: for a heat and a product spec, the bath temperature window and the minimum hold that meet every
 * criterion the spec names with 95 % confidence, for the spec's section, with the reason at each edge; plus the
 * acceptance check at receipt (chemistry against the spec's limits, hardenability against the section).
 *
 * How: for candidate bath temperatures from just below Ms to just below Bs (10 °C apart, edges refined by bisection
 * to 2.5 °C), an isothermal hold is simulated with the same model and ensemble the batches get (austenitize in the
 * middle of the spec's band for its minimum soak, the spec's longest transfer – the worst the spec allows). At each
 * temperature the hold advisor finds the shortest hold at which every hold-dependent criterion conforms (up to the
 * spec's maximum hold); the row conforms if every criterion the spec names conforms at that hold (and, for the
 * longest hold it stays so, at the spec's maximum hold). A batch run inside the window, at least for the window's
 * minimum hold, therefore gets the same verdicts (tested through the API).
 */

export interface HeatAdviceInput {
  heat: { id: string; heatNumber: string; revision: number; material: RecordMaterial; chemistryWtPct: Readonly<Record<string, number>> };
  spec: { id: string; versionId: string; version: number; processWindow: ProcessWindow; acceptanceCriteria: AcceptanceCriteria; chemistryLimits: ChemistryLimits };
  section: { shape: RecordSectionShape; sizeMm: number; source: string };
  agitation: Agitation;
  lineHeatTransfer: Readonly<Record<string, number>> | null;
  uncertainty: { samples: number; seed: number };
  /** The product's running lab calibrations (those in force correct every evaluated band; see evaluate.ts). */
  labCalibration?: ProductCalibrations;
}

export const ADVICE_STEP_C = 10;
export const ADVICE_REFINE_C = 2.5;

interface RowDetail extends AdviceRow {
  messages: string[];
}

export function adviseHeat(input: HeatAdviceInput): HeatAdvice {
  const steps = adviseHeatSteps(input);
  for (;;) {
    const next = steps.next();
    if (next.done) return next.value;
  }
}

/**
 * The same computation in steps: it yields after each candidate temperature, so a server can give its event loop a
 * turn between them (a whole advice takes seconds with 1,000 ensemble members).
 */
export function* adviseHeatSteps(input: HeatAdviceInput): Generator<void, HeatAdvice, void> {
  const warnings: string[] = [];
  const setup = adviceSetup(input, warnings);
  const model = batchModel(setup);
  const crit = model.critical;
  const criteria = input.spec.acceptanceCriteria;
  const window = input.spec.processWindow;
  const longestHoldS = window.bath.maxHoldMin * 60;
  const ctx: EvaluationContext = {
    setup,
    criteria,
    labCalibration: calibrationsInForce(input.labCalibration),
    section: { shape: input.section.shape, sizeMm: input.section.sizeMm },
    nominalBathC: (window.bath.minTempC + window.bath.maxTempC) / 2,
    transferS: setup.transferS,
  };

  const fromC = Math.max(100, Math.floor((crit.msC - 10) / ADVICE_STEP_C) * ADVICE_STEP_C);
  const toC = Math.min(550, Math.floor((crit.bsC - 5) / ADVICE_STEP_C) * ADVICE_STEP_C);
  if (!(toC > fromC)) warnings.push(`advice: Bs ${crit.bsC.toFixed(0)} °C is not above Ms ${crit.msC.toFixed(0)} °C: no bainite window for this heat`);
  const cache = new Map<number, RowDetail>();
  const keyOf = (tempC: number) => Math.round(tempC * 100) / 100;
  const rowAt = (tempC: number): RowDetail => {
    const key = keyOf(tempC);
    let row = cache.get(key);
    if (!row) {
      row = evaluateTemperature(ctx, key, longestHoldS);
      cache.set(key, row);
    }
    return row;
  };
  for (let t = fromC; t <= toC + 1e-9; t += ADVICE_STEP_C) {
    rowAt(t);
    yield;
  }

  // The widest run of conforming grid rows, its edges refined by bisection.
  const grid = [...cache.values()].sort((a, b) => a.tempC - b.tempC);
  let best: { lo: number; hi: number } | null = null;
  for (let i = 0; i < grid.length; i++) {
    if (!grid[i].conforming) continue;
    let j = i;
    while (j + 1 < grid.length && grid[j + 1].conforming) j++;
    if (!best || j - i > best.hi - best.lo) best = { lo: i, hi: j };
    i = j;
  }
  let windowOut: HeatAdvice['window'] = null;
  let edges: HeatAdvice['edges'] = { lower: null, upper: null };
  let recommended: HeatAdvice['recommended'] = null;
  if (best) {
    let loC = grid[best.lo].tempC;
    let hiC = grid[best.hi].tempC;
    let belowC = best.lo > 0 ? grid[best.lo - 1].tempC : null;
    let aboveC = best.hi + 1 < grid.length ? grid[best.hi + 1].tempC : null;
    while (belowC !== null && loC - belowC > ADVICE_REFINE_C + 1e-9) {
      const mid = (loC + belowC) / 2;
      if (rowAt(mid).conforming) loC = mid;
      else belowC = mid;
      yield;
    }
    while (aboveC !== null && aboveC - hiC > ADVICE_REFINE_C + 1e-9) {
      const mid = (hiC + aboveC) / 2;
      if (rowAt(mid).conforming) hiC = mid;
      else aboveC = mid;
      yield;
    }
    const inside = [...cache.values()].filter((r) => r.conforming && r.tempC >= loC - 1e-9 && r.tempC <= hiC + 1e-9);
    const minHoldMin = Math.max(...inside.map((r) => r.minHoldMin as number));
    const maxHolds = inside.map((r) => r.maxHoldMin).filter((m): m is number => m !== null);
    windowOut = { minTempC: loC, maxTempC: hiC, minHoldMin, maxHoldMin: maxHolds.length ? Math.min(...maxHolds) : null };
    const edge = (tempC: number, outsideC: number | null, side: 'lower' | 'upper'): HeatAdvice['edges']['lower'] => {
      if (outsideC === null) {
        const bound =
          side === 'lower'
            ? `the scan starts at ${fromC} °C, below Ms ${crit.msC.toFixed(0)} °C (van Bohemen)`
            : `the scan ends at ${toC} °C, just below Bs ${crit.bsC.toFixed(0)} °C (van Bohemen)`;
        return { tempC, reasons: ['end-of-scan'], messages: [bound] };
      }
      const out = rowAt(outsideC);
      return { tempC, reasons: out.failing, messages: out.messages };
    };
    edges = { lower: edge(loC, belowC, 'lower'), upper: edge(hiC, aboveC, 'upper') };
    const middle = (loC + hiC) / 2;
    const centre = inside.reduce((a, b) => (Math.abs(b.tempC - middle) < Math.abs(a.tempC - middle) ? b : a));
    recommended = { tempC: centre.tempC, holdMin: Math.ceil(minHoldMin / 5) * 5 };
  } else if (grid.length) {
    const counts = new Map<string, number>();
    for (const r of grid) for (const f of r.failing) counts.set(f, (counts.get(f) ?? 0) + 1);
    warnings.push(`advice: no bath temperature between ${fromC} and ${toC} °C meets every criterion with 95 % confidence; most often failing: ${[...counts].sort((a, b) => b[1] - a[1]).slice(0, 3).map(([c]) => c).join(', ')}`);
  }

  const rows: AdviceRow[] = [...cache.values()]
    .sort((a, b) => a.tempC - b.tempC)
    .map(({ messages: _messages, ...r }) => r);
  return {
    heatId: input.heat.id,
    heatNumber: input.heat.heatNumber,
    heatRevision: input.heat.revision,
    specId: input.spec.id,
    specVersionId: input.spec.versionId,
    specVersion: input.spec.version,
    material: setup.material,
    confidence: 0.95,
    modelVersion: MODEL_VERSION,
    inputs: {
      section: { ...input.section },
      austenitize: setup.austenitize,
      transferS: setup.transferS,
      agitation: setup.agitation,
      heatTransferWPerM2K: setup.heatTransferWPerM2K ?? null,
      grainSizeAstm: setup.grainSizeAstm,
      uncertainty: { samples: setup.uncertainty.samples, seed: setup.uncertainty.seed },
      scannedC: { fromC, toC, stepC: ADVICE_STEP_C },
      longestHoldMin: window.bath.maxHoldMin,
      // Which lab calibration corrected the bands (null: none in force, raw model bands).
      labCalibration: labCalibrationBasis(input.labCalibration),
    },
    window: windowOut,
    edges,
    recommended,
    rows,
    receipt: receiptCheck(input, setup, ctx, warnings),
    warnings,
  };
}

/** The model setup for the advice: the spec's process window at its middle / worst allowed values. */
export function adviceSetup(input: HeatAdviceInput, warnings: string[]): BatchSetup {
  const material = engineMaterial(input.heat.material);
  const chemistryWtPct = engineChemistry(input.heat.chemistryWtPct, warnings);
  const errors = checkChemistry(chemistryWtPct, material).issues.filter((i) => i.severity === 'error');
  if (errors.length) throw new PredictionInputError(errors.map((i) => `heat ${i.field.startsWith('chemistryWtPct') ? i.field : `chemistryWtPct.${i.field}`}: ${i.message}`));
  const settings = input.spec.acceptanceCriteria.prediction ?? {};
  const w = input.spec.processWindow;
  const h = lineHeatTransferFor(input.lineHeatTransfer, input.agitation);
  const cal: Calibration = { ...(settings.calibration ?? {}) };
  return {
    material,
    chemistryWtPct,
    grainSizeAstm: settings.grainSizeAstm ?? DEFAULT_GRAIN_SIZE_ASTM,
    section: engineSection(input.section.shape, input.section.sizeMm),
    austenitize: { tempC: (w.austenitize.minTempC + w.austenitize.maxTempC) / 2, minutes: w.austenitize.minMinutes },
    transferS: w.maxTransferS,
    agitation: input.agitation,
    ...(h !== null ? { heatTransferWPerM2K: h } : {}),
    ambientC: settings.ambientC ?? DEFAULT_AMBIENT_C,
    uncertainty: { samples: input.uncertainty.samples, seed: input.uncertainty.seed },
    ...(Object.keys(cal).length ? { calibration: cal } : {}),
  };
}

/** Criteria that only get better with a longer hold (so failing at the longest hold = failing at every hold). */
const IMPROVE_WITH_HOLD: ReadonlySet<string> = new Set([
  'min-bainite',
  'complete-transformation',
  'max-fresh-martensite',
  'max-blocky-austenite',
  'min-film-to-block',
  'max-retained-austenite',
  'stable-retained-austenite',
  'adi-stage-i',
]);

/** Isothermal advice runs integrate on 30 s cells (the batches' 10 s cells resolve the logged history). */
export const ADVICE_CELL_S = 30;

/** One candidate temperature: the shortest conforming hold (≤ the spec's longest) and what fails if none. */
function evaluateTemperature(ctx: EvaluationContext, tempC: number, longestHoldS: number): RowDetail {
  const start = advanceBath(createBathState(ctx.setup, { cellS: ADVICE_CELL_S }), [[0, tempC]]);
  const fail = (failing: Array<{ criterion: string; message: string }>, minHoldMin: number | null = null): RowDetail => ({
    tempC,
    minHoldMin,
    maxHoldMin: null,
    conforming: false,
    failing: failing.map((v) => v.criterion),
    messages: failing.map((v) => v.message),
  });
  // Criteria that do not depend on the hold (Ms/Bs margins, upper products, Si + Al) are settled at the first checkpoint.
  const first = advanceBath(start, projectionPoints(0, CHECKPOINT_S, tempC));
  const early = evaluateState(first, ctx, { holdEndS: CHECKPOINT_S, projected: false });
  const fixedFailing = early.verdicts.filter((v) => !HOLD_DEPENDENT_CRITERIA.has(v.criterion as never) && v.criterion !== 'adi-stage-ii' && v.verdict !== 'conforming');
  if (fixedFailing.length) return fail(fixedFailing);
  // What no hold can fix: failing at the longest hold allowed although it only improves with time.
  const longest = advanceBath(first, projectionPoints(CHECKPOINT_S, longestHoldS, tempC));
  const atLongest = evaluateState(longest, ctx, { holdEndS: longestHoldS, projected: false });
  const hopeless = atLongest.verdicts.filter((v) => IMPROVE_WITH_HOLD.has(v.criterion) && v.verdict !== 'conforming');
  if (hopeless.length) return fail(hopeless);

  const search = searchEarliest(start, ctx, 0, tempC, longestHoldS, []);
  if (search.earliestS === null) {
    return fail(
      (search.limiting.length ? search.limiting : ['complete-transformation']).map((c) => ({
        criterion: c,
        message: search.reason ?? `no hold up to ${Math.round(longestHoldS / 60)} min meets ${c}`,
      })),
    );
  }
  const minHoldS = search.earliestS;
  const atMin = advanceBath(start, projectionPoints(0, minHoldS, tempC));
  const judged = evaluateState(atMin, ctx, { holdEndS: minHoldS, projected: false });
  const failing = judged.verdicts.filter((v) => v.verdict !== 'conforming');
  if (failing.length) return fail(failing, minHoldS / 60);
  // The longest hold: conforming at the spec's maximum hold, else the last coarse step before a criterion broke.
  let maxHoldS: number | null = null;
  if (atLongest.verdicts.some((v) => v.verdict !== 'conforming')) {
    let state = atMin;
    let stateS = minHoldS;
    for (let t = (Math.floor(minHoldS / COARSE_STEP_S) + 1) * COARSE_STEP_S; t < longestHoldS; t += COARSE_STEP_S) {
      state = advanceBath(state, projectionPoints(stateS, t, tempC));
      if (evaluateState(state, ctx, { holdEndS: t, projected: false }).verdicts.some((v) => v.verdict !== 'conforming')) break;
      stateS = t;
    }
    maxHoldS = stateS;
  }
  return { tempC, minHoldMin: minHoldS / 60, maxHoldMin: maxHoldS === null ? null : maxHoldS / 60, conforming: true, failing: [], messages: [] };
}

/** Receipt check: chemistry against the spec's limits, hardenability against the section. */
function receiptCheck(input: HeatAdviceInput, setup: BatchSetup, ctx: EvaluationContext, warnings: string[]): HeatAdvice['receipt'] {
  const chemistry: HeatAdvice['receipt']['chemistry'] = [];
  for (const [el, limit] of Object.entries(input.spec.chemistryLimits) as Array<[keyof ChemistryLimits, { minWtPct?: number; maxWtPct?: number }]>) {
    const v = input.heat.chemistryWtPct[el as string];
    const value = typeof v === 'number' ? v : null;
    let verdict: 'ok' | 'below' | 'above' | 'missing' = 'ok';
    if (value === null) verdict = limit.minWtPct !== undefined ? 'missing' : 'ok';
    else if (limit.minWtPct !== undefined && value < limit.minWtPct) verdict = 'below';
    else if (limit.maxWtPct !== undefined && value > limit.maxWtPct) verdict = 'above';
    chemistry.push({ element: el as never, valueWtPct: value, ...(limit.minWtPct !== undefined ? { minWtPct: limit.minWtPct } : {}), ...(limit.maxWtPct !== undefined ? { maxWtPct: limit.maxWtPct } : {}), verdict });
  }
  chemistry.sort((a, b) => a.element.localeCompare(b.element));

  const model = batchModel(setup);
  const di = idealCriticalDiameter(model.chem);
  const eqD = equivalentRoundDiameterMm(setup.section.shape, sectionSizeMm(setup.section));
  if (di.outOfRange.length) warnings.push(`receipt: ideal critical diameter indicative only, A255 factors out of range: ${di.outOfRange.join('; ')}`);
  // Upper products on the quench at the spec's nominal bath temperature, with the spec's longest transfer.
  const nominal = ctx.nominalBathC ?? (input.spec.processWindow.bath.minTempC + input.spec.processWindow.bath.maxTempC) / 2;
  const s = advanceBath(advanceBath(createBathState(setup, { cellS: ADVICE_CELL_S }), [[0, nominal]]), projectionPoints(0, CHECKPOINT_S, nominal));
  const upper = evaluateState(s, ctx, { holdEndS: CHECKPOINT_S, projected: false }).output.bands.upperProductsFraction;
  const limit = input.spec.acceptanceCriteria.maxUpperProductsFraction ?? DEFAULT_RECEIPT_UPPER_PRODUCTS;
  const v = judgeMax(upper, limit);
  const verdict: 'ok' | 'at-risk' | 'insufficient' = eqD > di.mm || v === 'nonconforming' ? 'insufficient' : v === 'at-risk' ? 'at-risk' : 'ok';
  const pct = (x: number | null) => (x === null ? '—' : `${(100 * x).toFixed(1)} %`);
  const message =
    `${input.section.sizeMm} mm ${input.section.shape.toLowerCase().replace('_', ' ')} cools like a ${eqD.toFixed(0)} mm round; ideal critical diameter ${di.mm.toFixed(0)} mm (ASTM A255); ` +
    `upper products at the centre after a ${setup.transferS} s transfer into ${nominal} °C salt ${pct(upper.p50)} (p05 ${pct(upper.p05)}, p95 ${pct(upper.p95)}) against ${pct(limit)}: ` +
    (verdict === 'ok' ? 'hardenable enough for this section' : verdict === 'at-risk' ? 'marginal for this section' : 'not hardenable enough for this section');
  return {
    ok: chemistry.every((c) => c.verdict === 'ok') && verdict === 'ok',
    chemistry,
    hardenability: { idealCriticalDiameterMm: round(di.mm, 1), sectionEquivalentDiameterMm: round(eqD, 1), verdict, message, upperProducts: upper },
  };
}

/** Upper products allowed at receipt when the spec names no limit: 5 % (our assumption). */
export const DEFAULT_RECEIPT_UPPER_PRODUCTS = 0.05;

// ---------------------------------------------------------------------------------------------
// Heat diagram (W5): T0/T0′ rows, Ae3 against carbon, Bs, Ms, the austenite's carbon
// ---------------------------------------------------------------------------------------------

export interface HeatDiagramInput {
  heat: { id: string; material: RecordMaterial; chemistryWtPct: Readonly<Record<string, number>> };
  fromC: number;
  toC: number;
  stepC: number;
  /** Austenitize temperature for a ductile iron's matrix carbon (default 900 °C). */
  austenitizeTempC?: number;
}

export function heatDiagram(input: HeatDiagramInput): HeatDiagram {
  const warnings: string[] = [];
  const material = engineMaterial(input.heat.material);
  const chem = engineChemistry(input.heat.chemistryWtPct, warnings);
  const errors = checkChemistry(chem, material).issues.filter((i) => i.severity === 'error');
  if (errors.length) throw new PredictionInputError(errors.map((i) => `heat ${i.field.startsWith('chemistryWtPct') ? i.field : `chemistryWtPct.${i.field}`}: ${i.message}`));
  // The austenite the diagram is for: bulk carbon for steel, the matrix carbon at the austenitize for an iron.
  const model = batchModel({
    material,
    chemistryWtPct: chem,
    grainSizeAstm: DEFAULT_GRAIN_SIZE_ASTM,
    section: { shape: 'plate', thicknessMm: 10 },
    austenitize: { tempC: input.austenitizeTempC ?? 900, minutes: 60 },
    transferS: 10,
    agitation: 'moderate',
    ambientC: DEFAULT_AMBIENT_C,
    uncertainty: { samples: 0, seed: 1 },
  });
  const austenite = model.chem;
  const crit = criticalTemperatures(austenite);
  warnings.push(...crit.warnings.map((w) => `temperaturesC: ${w}`));
  const t0 = t0Rows({ chemistryWtPct: austenite, fromC: input.fromC, toC: input.toC, stepC: input.stepC }).rows;
  // Ae3 (Andrews 1965) against carbon up to where it meets Ae1 (the eutectoid), at the heat's substitutionals.
  const ae1 = ae1C(austenite);
  const ae3: HeatDiagram['ae3'] = [];
  for (let c = 0; c <= 1.2 + 1e-9; c += 0.05) {
    const t = ae3C({ ...austenite, C: round(c, 2) });
    if (t < ae1) break;
    ae3.push({ carbonWtPct: round(c, 2), tempC: round(t, 1) });
  }
  return {
    heatId: input.heat.id,
    material,
    meanCarbonWtPct: round(austenite.C ?? 0, 4),
    t0,
    ae3,
    ae1C: round(ae1, 1),
    bsC: round(crit.bsC, 1),
    msC: round(crit.msC, 1),
    warnings,
  };
}

function round(x: number, digits: number): number {
  const k = 10 ** digits;
  return Math.round(x * k) / k;
}
