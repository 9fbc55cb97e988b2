import { z } from 'zod';
import { CHEMISTRY_ELEMENTS, SectionShape } from './ingest.js';

/**
 * What the worker stores per batch prediction (Prediction.result) and what the prediction endpoints answer.
 *
 * Prediction.result = the `ausline predict` output object (libs/metallurgy README; issue 3 item 9 field names)
 * PLUS `verdicts`, `overall`, `hold`, `bainite.band`, `bainite.loggedUntilS` and `basis`. Prediction.state = the
 * engine's serialisable incremental state wrapped with what the worker needs to advance it (never served by the API).
 *
 * The objects are `looseObject`s: the engine adds fields over time (marked "(added)" in its README) and a reader
 * parsing with these schemas keeps them. Numbers are SI-ish with the unit in the name; fractions are volume
 * fractions 0..1; times `...S` are seconds from the load entering the bath (INTO_BATH); `...At` are ISO 8601.
 */

/** p05 / p50 / p95 of the uncertainty ensemble; null = not finite (e.g. "never reached", or outside a conversion table). */
export const PredictionBand = z.object({ p05: z.number().nullable(), p50: z.number().nullable(), p95: z.number().nullable() });
export type PredictionBand = z.infer<typeof PredictionBand>;

export const VerdictLevel = z.enum(['conforming', 'at-risk', 'nonconforming']);
export type VerdictLevel = z.infer<typeof VerdictLevel>;

/**
 * The criteria judged on a prediction and the deviation rule each one opens (dedupKey `${batchId}:${rule}`).
 * A criterion is judged only when the product spec names it (AcceptanceCriteria); `hold-length` is judged whenever
 * `complete-transformation` (or the ADI window) is, from the hold advisor.
 */
export const PREDICTION_CRITERIA = {
  'min-bainite': 'predicted-bainite-min',
  'complete-transformation': 'predicted-incomplete-transformation',
  'max-fresh-martensite': 'predicted-fresh-martensite-max',
  'max-blocky-austenite': 'predicted-blocky-austenite-max',
  'min-film-to-block': 'predicted-film-block-ratio-min',
  'max-retained-austenite': 'predicted-retained-austenite-max',
  'ms-margin': 'predicted-ms-margin',
  'bs-margin': 'predicted-bs-margin',
  'max-upper-products': 'predicted-upper-products',
  'stable-retained-austenite': 'predicted-unstable-austenite',
  'min-si-plus-al': 'predicted-si-al-low',
  hardness: 'predicted-hardness',
  tensile: 'predicted-tensile',
  'adi-stage-i': 'predicted-adi-stage-i',
  'adi-stage-ii': 'predicted-adi-stage-ii',
  'hold-length': 'hold-too-short-predicted',
} as const;
export type PredictionCriterion = keyof typeof PREDICTION_CRITERIA;
export const PREDICTION_CRITERION_IDS = Object.keys(PREDICTION_CRITERIA) as PredictionCriterion[];
/** Every deviation rule id the prediction step owns (cleared when no longer found). */
export const PREDICTION_RULES = Object.values(PREDICTION_CRITERIA) as Array<(typeof PREDICTION_CRITERIA)[PredictionCriterion]>;
export type PredictionRule = (typeof PREDICTION_RULES)[number];

export const CriterionVerdict = z.looseObject({
  criterion: z.string(),
  /** Deviation rule id this verdict opens when not conforming. */
  rule: z.string().optional(),
  verdict: VerdictLevel,
  /** One line with the criterion, the numbers and why. */
  message: z.string(),
  p05: z.number().nullable().optional(),
  p50: z.number().nullable().optional(),
  p95: z.number().nullable().optional(),
  /** The spec limit judged against (for a two-sided band: see `limitMin`/`limitMax`). */
  limit: z.number().nullable().optional(),
  limitMin: z.number().nullable().optional(),
  limitMax: z.number().nullable().optional(),
  unit: z.string().optional(),
  /** Which inputs drove the value (short phrases, most important first). */
  drivers: z.array(z.string()).optional(),
});
export type CriterionVerdict = z.infer<typeof CriterionVerdict>;

/**
 * The hold advisor. `earliestSafeEndAt`: the earliest time the load may leave the bath and still meet every
 * hold-dependent criterion with 95 % confidence at the bath temperature being logged (null when no hold within the
 * advisor's horizon does, `reason` says why). `extraHoldMin`: how much longer (negative: shorter) that is than at the
 * spec's nominal bath temperature (the middle of its bath band), `bathOffsetC` the logged minus nominal temperature.
 */
export const HoldAdvice = z.looseObject({
  earliestSafeEndAt: z.string().nullable(),
  scheduledEndAt: z.string().nullable(),
  extraHoldMin: z.number().nullable(),
  bathOffsetC: z.number().nullable().optional(),
  earliestSafeEndS: z.number().nullable().optional(),
  scheduledHoldMin: z.number().nullable().optional(),
  /** 'batch' = Batch.scheduledHoldMin; 'spec-min-hold' = the spec's minimum hold (no schedule given). */
  scheduledBasis: z.enum(['batch', 'spec-min-hold']).nullable().optional(),
  /** OUT_OF_BATH, once the load is out. */
  actualEndAt: z.string().nullable().optional(),
  /** Bath temperature the advice assumes from now on (mean of the last minutes logged). */
  holdBathTempC: z.number().nullable().optional(),
  nominalBathC: z.number().nullable().optional(),
  nominalEarliestSafeEndS: z.number().nullable().optional(),
  /** Criteria that were the last to become conforming (what sets the earliest end). */
  limiting: z.array(z.string()).optional(),
  reason: z.string().nullable().optional(),
});
export type HoldAdvice = z.infer<typeof HoldAdvice>;

const Pair = z.tuple([z.number(), z.number()]);
const Triple = z.tuple([z.number(), z.number(), z.number()]);

/**
 * The product's lab calibration that corrected a prediction's (or an advice's) bands of the calibrated quantities
 * (libs/compliance calibration: bias and spread of measured − raw predicted p50, per quantity); null when none was
 * in force (fewer than `minResults` lab results), so the bands are the model's own.
 */
export const LabCalibrationBasis = z
  .object({
    method: z.string(),
    minResults: z.number(),
    quantities: z.partialRecord(z.enum(['hardnessHV', 'tensileMPa', 'retainedAusteniteFraction']), z.object({ n: z.number(), bias: z.number(), sd: z.number(), kappa: z.number(), dof: z.number(), predictiveScale: z.number() })),
    /** The engine hook applied to the stored bands (bias added to every member, extra normal spread). */
    applied: z.partialRecord(z.enum(['hardnessHV', 'tensileMPa', 'retainedAusteniteFraction']), z.object({ bias: z.number(), sd: z.number() })).optional(),
  })
  .nullable();
export type LabCalibrationBasis = z.infer<typeof LabCalibrationBasis>;

/** What went into a prediction (for the certificate and for anyone asking "why"). */
export const PredictionBasis = z.looseObject({
  phase: z.enum(['IN_BATH', 'DONE']),
  /** s from INTO_BATH to the last logged bath reading used. */
  loggedUntilS: z.number(),
  /** s from INTO_BATH to the end of the judged history (the projection's end while the load is in the bath). */
  judgedUntilS: z.number(),
  /** While the load is in the bath, the rest of the scheduled hold is projected at the temperature being logged
   *  ('batch' schedule or 'spec-min-hold'); 'log-gap' = the load is out but the bath log ended early. */
  projection: z
    .looseObject({ fromS: z.number(), toS: z.number(), bathTempC: z.number(), basis: z.enum(['batch', 'spec-min-hold', 'log-gap']) })
    .nullable(),
  inputs: z.looseObject({
    heatId: z.string(),
    heatRevision: z.number(),
    specVersionId: z.string(),
    material: z.enum(['steel', 'ductile-iron']),
    section: z.looseObject({ shape: SectionShape, sizeMm: z.number() }),
    austenitize: z.looseObject({ tempC: z.number(), minutes: z.number(), source: z.string() }),
    transferS: z.looseObject({ value: z.number(), source: z.string() }),
    agitation: z.string(),
    heatTransferWPerM2K: z.number().nullable(),
    grainSizeAstm: z.number(),
    ambientC: z.number(),
    bathMeanC: z.number().nullable(),
    bathChannels: z.array(z.looseObject({ channelId: z.string(), code: z.string(), used: z.boolean(), samples: z.number() })),
    uncertainty: z.looseObject({ samples: z.number(), seed: z.number() }),
  }),
  labCalibration: LabCalibrationBasis.optional(),
});
export type PredictionBasis = z.infer<typeof PredictionBasis>;

export const PredictionResult = z.looseObject({
  modelVersion: z.string(),
  material: z.enum(['steel', 'ductile-iron']),
  temperaturesC: z.looseObject({ ae1: z.number(), ae3: z.number(), bs: z.number(), ms: z.number() }),
  t0: z.looseObject({ bathTempC: z.number(), t0CarbonWtPct: z.number(), t0PrimeCarbonWtPct: z.number() }),
  bainite: z.looseObject({
    ceilingFraction: z.number(),
    fractionAtEnd: z.number(),
    timeTo95PctS: z.number().nullable(),
    earliestHoldEndS: z.number().nullable().optional(),
    curve: z.array(Pair),
    /** [tS, p05, p95] of the bainite (ausferrite) fraction, every few minutes (decimated). */
    band: z.array(Triple),
    /** Curve and band beyond this time are projected, not logged. */
    loggedUntilS: z.number(),
  }),
  quench: z.looseObject({ upperProductsFraction: z.number(), coreReachesBathS: z.number().nullable(), idealCriticalDiameterMm: z.number() }),
  final: z.looseObject({
    bainiticFerrite: z.number(),
    filmAustenite: z.number(),
    blockyAustenite: z.number(),
    freshMartensite: z.number(),
    upperProducts: z.number(),
    austeniteCarbonWtPct: z.number(),
    residualAusteniteMsC: z.number(),
  }),
  properties: z.looseObject({
    hardnessHV: PredictionBand,
    tensileMPa: PredictionBand,
    adiGrade: z.string().nullable().optional(),
  }),
  bands: z.record(z.string(), PredictionBand),
  /** The model's bands of the lab-calibrated quantities before the lab calibration (`bands` holds them corrected). */
  rawBands: z.record(z.string(), PredictionBand).optional(),
  warnings: z.array(z.string()),
  verdicts: z.array(CriterionVerdict),
  /** The worst verdict, null when the spec names no criterion. */
  overall: VerdictLevel.nullable(),
  hold: HoldAdvice,
  basis: PredictionBasis,
});
export type PredictionResult = z.infer<typeof PredictionResult>;

/** Why a prediction row is kept besides the rolling latest one. */
export const PredictionMilestone = z.enum(['into-bath', 'ceiling-reached', 'out-of-bath', 'verdict-change']);
export type PredictionMilestone = z.infer<typeof PredictionMilestone>;

/**
 * A stored prediction as the API serves it (never with the engine state). Per batch the rows are: the rolling
 * latest (highest version; updated in place while nothing notable happens, `milestone` null), one row kept at each
 * milestone (labelled) and the prediction just before each milestone (`milestone` null, not the highest version).
 * A retried recompute over the same inputs (same `inputDigest` and model version) writes nothing.
 */
export const PredictionRow = z.object({
  id: z.string(),
  batchId: z.string(),
  version: z.number(),
  modelVersion: z.string(),
  inputDigest: z.string(),
  /** Device time of the last bath reading used. */
  watermark: z.string().nullable(),
  phase: z.string(),
  milestone: PredictionMilestone.nullable(),
  result: PredictionResult,
  createdAt: z.string(),
  updatedAt: z.string(),
});
export type PredictionRow = z.infer<typeof PredictionRow>;

// ---------------------------------------------------------------------------------------------
// Heat advice: POST /v1/heats/:id/advice
// ---------------------------------------------------------------------------------------------

const PartSection = z.strictObject({ shape: SectionShape, sizeMm: z.number().finite().positive().max(2000) });

export const HeatAdviceRequest = z
  .strictObject({
    specId: z.uuid().optional(),
    specVersionId: z.uuid().optional(),
    /** Part section; default the spec's `prediction.section`, else the section of the heat's latest batch on the spec. */
    section: PartSection.optional(),
    /** Default 'moderate'. */
    agitation: z.enum(['still', 'moderate', 'strong']).optional(),
    /** Line whose calibrated bath heat-transfer coefficient to use (Line.hCoefficientByAgitation). */
    lineId: z.uuid().optional(),
    /** Ensemble size and seed (default 1,000 / 1). */
    uncertainty: z.strictObject({ samples: z.number().int().min(20).max(2000), seed: z.number().int().min(0).max(2 ** 31 - 1) }).optional(),
  })
  .superRefine((r, ctx) => {
    if ((r.specId === undefined) === (r.specVersionId === undefined)) {
      ctx.addIssue({ code: 'custom', path: ['specId'], message: 'give exactly one of specId (its approved version in force) or specVersionId' });
    }
  });
export type HeatAdviceRequest = z.infer<typeof HeatAdviceRequest>;

/** One candidate bath temperature of the advice scan. */
export const AdviceRow = z.object({
  tempC: z.number(),
  /** Shortest hold meeting every criterion with 95 % confidence; null = none within the longest hold considered. */
  minHoldMin: z.number().nullable(),
  /** Longest such hold (ADI Stage II, hardness falling below its minimum ...); null = no upper bound found. */
  maxHoldMin: z.number().nullable(),
  conforming: z.boolean(),
  /** Criteria not met at any hold (or at the best hold) at this temperature. */
  failing: z.array(z.string()),
});
export type AdviceRow = z.infer<typeof AdviceRow>;

export const AdviceEdge = z.object({
  /** The last conforming temperature on this side. */
  tempC: z.number(),
  /** The criteria that fail just beyond it, e.g. 'ms-margin', 'min-film-to-block', 'hardness'. */
  reasons: z.array(z.string()),
  messages: z.array(z.string()),
});

export const ChemistryCheck = z.object({
  element: z.enum(CHEMISTRY_ELEMENTS),
  valueWtPct: z.number().nullable(),
  minWtPct: z.number().optional(),
  maxWtPct: z.number().optional(),
  verdict: z.enum(['ok', 'below', 'above', 'missing']),
});

export const HeatAdvice = z.object({
  heatId: z.string(),
  heatNumber: z.string(),
  heatRevision: z.number(),
  specId: z.string(),
  specVersionId: z.string(),
  specVersion: z.number(),
  material: z.enum(['steel', 'ductile-iron']),
  confidence: z.number(),
  modelVersion: z.string(),
  inputs: z.looseObject({
    section: PartSection.extend({ source: z.string() }),
    austenitize: z.object({ tempC: z.number(), minutes: z.number() }),
    transferS: z.number(),
    agitation: z.string(),
    heatTransferWPerM2K: z.number().nullable(),
    grainSizeAstm: z.number(),
    uncertainty: z.object({ samples: z.number(), seed: z.number() }),
    scannedC: z.object({ fromC: z.number(), toC: z.number(), stepC: z.number() }),
    longestHoldMin: z.number(),
    labCalibration: LabCalibrationBasis.optional(),
  }),
  /** The bath window meeting every criterion with 95 % confidence; null when no temperature does. */
  window: z
    .object({
      minTempC: z.number(),
      maxTempC: z.number(),
      /** A hold that is long enough anywhere in the window (the longest of the rows' minimum holds). */
      minHoldMin: z.number(),
      /** A hold that is not too long anywhere in the window (null = no upper bound found). */
      maxHoldMin: z.number().nullable(),
    })
    .nullable(),
  edges: z.object({ lower: AdviceEdge.nullable(), upper: AdviceEdge.nullable() }),
  recommended: z.object({ tempC: z.number(), holdMin: z.number() }).nullable(),
  rows: z.array(AdviceRow),
  receipt: z.object({
    ok: z.boolean(),
    chemistry: z.array(ChemistryCheck),
    hardenability: z.object({
      idealCriticalDiameterMm: z.number(),
      sectionEquivalentDiameterMm: z.number(),
      verdict: z.enum(['ok', 'at-risk', 'insufficient']),
      message: z.string(),
      upperProducts: PredictionBand.nullable(),
    }),
  }),
  warnings: z.array(z.string()),
});
export type HeatAdvice = z.infer<typeof HeatAdvice>;

// ---------------------------------------------------------------------------------------------
// Heat diagram: GET /v1/heats/:id/diagram?fromC&toC&stepC[&specId|specVersionId]
// ---------------------------------------------------------------------------------------------

export const HeatDiagramQuery = z
  .strictObject({
    fromC: z.coerce.number().finite().min(0).max(1000).default(200),
    toC: z.coerce.number().finite().min(0).max(1000).default(900),
    stepC: z.coerce.number().finite().min(1).max(100).default(10),
    specId: z.uuid().optional(),
    specVersionId: z.uuid().optional(),
  })
  .superRefine((q, ctx) => {
    if (q.fromC >= q.toC) ctx.addIssue({ code: 'custom', path: ['toC'], message: `must be above fromC (${q.fromC})` });
    else if ((q.toC - q.fromC) / q.stepC > 500) ctx.addIssue({ code: 'custom', path: ['stepC'], message: 'at most 500 rows: raise stepC or narrow fromC..toC' });
    if (q.specId !== undefined && q.specVersionId !== undefined) {
      ctx.addIssue({ code: 'custom', path: ['specVersionId'], message: 'give specId or specVersionId, not both' });
    }
  });
export type HeatDiagramQuery = z.infer<typeof HeatDiagramQuery>;

export const HeatDiagram = z.object({
  heatId: z.string(),
  material: z.enum(['steel', 'ductile-iron']),
  /** Carbon of the austenite the diagram is drawn for (steel: bulk; ductile iron: matrix carbon at the spec's austenitize). */
  meanCarbonWtPct: z.number(),
  t0: z.array(z.object({ tempC: z.number(), t0CarbonWtPct: z.number(), t0PrimeCarbonWtPct: z.number() })),
  /** Ae3 (Andrews 1965) against carbon at the heat's substitutional chemistry, up to the eutectoid. */
  ae3: z.array(z.object({ carbonWtPct: z.number(), tempC: z.number() })),
  ae1C: z.number(),
  bsC: z.number(),
  msC: z.number(),
  advisedBath: z.object({ minTempC: z.number(), maxTempC: z.number(), minHoldMin: z.number().optional(), reasons: z.array(z.string()).optional() }).optional(),
  warnings: z.array(z.string()),
});
export type HeatDiagram = z.infer<typeof HeatDiagram>;
