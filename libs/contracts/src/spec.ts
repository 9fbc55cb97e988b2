import { z } from 'zod';
import { CHEMISTRY_ELEMENTS, HardnessScale } from './ingest.js';

/**
 * Product spec payloads: what a part family must meet. A product spec is versioned; each version carries
 * its chemistry limits, its process window and its acceptance criteria. The API validates spec payloads
 * with these schemas and the worker re-validates what it reads back from Postgres before evaluating rules.
 *
 * Units are part of every field name (tempC, minutes, seconds). Objects are strict: an unknown or
 * misspelt field is rejected with its path rather than silently ignored, because a typo in a limit
 * would otherwise switch a check off.
 */

const tempC = z.number().finite().min(-50).max(1300);
const positiveSeconds = z.number().finite().positive();
const nonNegativeSeconds = z.number().finite().min(0);
const positiveMinutes = z.number().finite().positive();
const fraction = z.number().finite().min(0).max(1);

/** Adds an issue at `path` when `min > max`; used for every min/max pair. */
function orderedPair(
  ctx: z.core.$RefinementCtx,
  min: number | undefined,
  max: number | undefined,
  path: (string | number)[],
  what: string,
): void {
  if (min !== undefined && max !== undefined && min > max) {
    ctx.addIssue({ code: 'custom', path, message: `${what}: minimum ${min} is above maximum ${max}` });
  }
}

export const AustenitizeWindow = z
  .strictObject({
    minTempC: tempC,
    maxTempC: tempC,
    /** Minimum soak at temperature, counted from the first time every furnace zone is inside the band. */
    minMinutes: positiveMinutes,
    /** Optional upper limit on soak (grain growth, decarburization); absent means no limit. */
    maxMinutes: positiveMinutes.optional(),
  })
  .superRefine((w, ctx) => {
    orderedPair(ctx, w.minTempC, w.maxTempC, ['maxTempC'], 'austenitize temperature');
    orderedPair(ctx, w.minMinutes, w.maxMinutes, ['maxMinutes'], 'austenitize time');
  });
export type AustenitizeWindow = z.infer<typeof AustenitizeWindow>;

export const BathWindow = z
  .strictObject({
    minTempC: tempC,
    maxTempC: tempC,
    /** Allowed continuous time outside [minTempC, maxTempC] while the load is in the bath (e.g. the
     *  temperature rise on immersion); a longer continuous excursion is a deviation. */
    maxExcursionS: nonNegativeSeconds,
    /** Time in the bath, from INTO_BATH to OUT_OF_BATH. */
    minHoldMin: positiveMinutes,
    maxHoldMin: positiveMinutes,
  })
  .superRefine((w, ctx) => {
    orderedPair(ctx, w.minTempC, w.maxTempC, ['maxTempC'], 'bath temperature');
    orderedPair(ctx, w.minHoldMin, w.maxHoldMin, ['maxHoldMin'], 'bath hold');
  });
export type BathWindow = z.infer<typeof BathWindow>;

export const FlatlineCheck = z.strictObject({
  /** A temperature channel whose readings stay within epsilonC of each other for this long is suspect
   *  (a live thermocouple in a working bath or furnace always moves a little). */
  minDurationS: positiveSeconds,
  epsilonC: z.number().finite().min(0),
});
export type FlatlineCheck = z.infer<typeof FlatlineCheck>;

export const PlausibleSignal = z
  .strictObject({
    /** Readings outside this range cannot be real for this equipment (open thermocouple, wiring). */
    minTempC: z.number().finite(),
    maxTempC: z.number().finite(),
    /** Faster change between consecutive readings than this cannot be real. */
    maxRateCPerS: z.number().finite().positive(),
  })
  .superRefine((w, ctx) => orderedPair(ctx, w.minTempC, w.maxTempC, ['maxTempC'], 'plausible temperature'));
export type PlausibleSignal = z.infer<typeof PlausibleSignal>;

export const TwinTolerance = z.strictObject({
  /** Two thermocouples on one bath that differ by more than this ... */
  maxDiffC: z.number().finite().positive(),
  /** ... continuously for at least this long disagree (furnace zones may differ by design and are not paired). */
  minDurationS: nonNegativeSeconds,
});
export type TwinTolerance = z.infer<typeof TwinTolerance>;

export const ProcessWindow = z.strictObject({
  austenitize: AustenitizeWindow,
  /** OUT_OF_FURNACE to INTO_BATH. */
  maxTransferS: positiveSeconds,
  bath: BathWindow,
  /** Largest allowed gap between consecutive samples of one channel while the load is being treated. */
  maxChannelGapS: positiveSeconds,
  flatline: FlatlineCheck,
  plausible: PlausibleSignal,
  twinTolerance: TwinTolerance,
});
export type ProcessWindow = z.infer<typeof ProcessWindow>;

export const HardnessBand = z
  .strictObject({ scale: HardnessScale, min: z.number().finite().positive(), max: z.number().finite().positive() })
  .superRefine((w, ctx) => orderedPair(ctx, w.min, w.max, ['max'], 'hardness'));
export type HardnessBand = z.infer<typeof HardnessBand>;

export const TensileBand = z
  .strictObject({
    minTensileMPa: z.number().finite().positive().optional(),
    maxTensileMPa: z.number().finite().positive().optional(),
    minYieldMPa: z.number().finite().positive().optional(),
    minElongationPct: z.number().finite().min(0).max(100).optional(),
  })
  .superRefine((w, ctx) => orderedPair(ctx, w.minTensileMPa, w.maxTensileMPa, ['maxTensileMPa'], 'tensile strength'));
export type TensileBand = z.infer<typeof TensileBand>;

/**
 * ADI processing window (metallurgy.md §4.2 [M]): Stage I is finished when the untransformed, carbon-poor austenite
 * (which turns to martensite on cooling) is below `stageIMaxMartensiteFraction` (default 0.03, §4.2); Stage II
 * (carbides from the high-carbon austenite) must not have begun. The engine does not model Stage II: its onset is the
 * product's measured onset time at a reference temperature (e.g. from trial holds checked by XRD), scaled to the
 * logged temperature by an Arrhenius law. Defaults are our assumptions, stated in libs/compliance verdicts.
 */
export const AdiProcessWindow = z.strictObject({
  stageIMaxMartensiteFraction: fraction.optional(),
  stageIIOnsetMin: positiveMinutes.max(10_000).optional(),
  stageIIOnsetRefTempC: tempC.optional(),
});
export type AdiProcessWindow = z.infer<typeof AdiProcessWindow>;

/**
 * Per-product settings of the metallurgical prediction. `section` is the part section the spec is written for
 * (heat advice uses it; a batch uses its own section). `calibration` is the model calibration a metallurgist sets
 * from dilatometry, XRD or metallography of the product (libs/metallurgy README, Calibration).
 */
export const PredictionSettings = z.strictObject({
  section: z
    .strictObject({
      shape: z.enum(['PLATE', 'CYLINDER', 'SQUARE_BAR']),
      /** Thickness (PLATE), diameter (CYLINDER) or side (SQUARE_BAR), mm. */
      sizeMm: z.number().finite().positive().max(2000),
    })
    .optional(),
  /** Prior-austenite grain size, ASTM E112 number (default 8). */
  grainSizeAstm: z.number().finite().min(0).max(15).optional(),
  /** Temperature the parts cool to after the hold (default 20 °C). */
  ambientC: z.number().finite().min(-50).max(100).optional(),
  calibration: z
    .strictObject({
      bainiteTimeFactor: z.number().finite().positive().max(100).optional(),
      ferritePearliteTimeFactor: z.number().finite().positive().max(100).optional(),
      t0PrimeBiasWtPct: z.number().finite().min(-1).max(1).optional(),
      /** Scatter left by that calibration (replaces the generic model error; libs/metallurgy README, Calibration). */
      bainiteTimeLnSd: z.number().finite().min(0).max(3).optional(),
      ferritePearliteTimeLnSd: z.number().finite().min(0).max(3).optional(),
      t0PrimeSdWtPct: z.number().finite().min(0).max(0.5).optional(),
      /** Per-grade fit of the hardness model (factor on the predicted HV) and its scatter (ln-sd). */
      hardnessFactor: z.number().finite().min(0.5).max(2).optional(),
      hardnessLnSd: z.number().finite().min(0).max(1).optional(),
    })
    .optional(),
});
export type PredictionSettings = z.infer<typeof PredictionSettings>;

/**
 * What the finished load must show. Every field is optional: a spec names only what its customer asks
 * for. The metallurgical fields are judged on each batch's prediction (p05/p50/p95, libs/compliance
 * verdicts) and checked against lab results; a criterion the spec does not name is not judged.
 */
export const AcceptanceCriteria = z
  .strictObject({
    hardness: HardnessBand.optional(),
    tensile: TensileBand.optional(),
    minImpactJ: z.number().finite().positive().optional(),
    /** Bainitic ferrite (steel) or ausferritic ferrite (ADI), volume fraction 0..1. */
    minBainiteFraction: fraction.optional(),
    maxFreshMartensiteFraction: fraction.optional(),
    maxBlockyAusteniteFraction: fraction.optional(),
    /** Film to blocky retained austenite ratio (dimensionless, >= 0). */
    minFilmToBlockRatio: z.number().finite().min(0).optional(),
    maxRetainedAusteniteFraction: fraction.optional(),
    /** Bath temperature must sit at least this far above the heat's Ms ... */
    minMsMarginC: z.number().finite().min(0).optional(),
    /** ... and at least this far below its Bs. */
    minBsMarginC: z.number().finite().min(0).optional(),
    /** Carbide-free bainite needs Si (+Al) to suppress cementite; minimum of their sum in wt%. */
    minSiPlusAlWtPct: z.number().finite().min(0).max(10).optional(),
    /** Upper transformation products (ferrite, pearlite) formed at the centre of the batch's section during
     *  the quench, before it reaches the bath; volume fraction 0..1 (the slack-quench defect). */
    maxUpperProductsFraction: fraction.optional(),
    /** The hold must last until the transformation reached 95 % of its T0′ ceiling (with 95 % confidence). */
    requireCompleteTransformation: z.boolean().optional(),
    /** The austenite left after the hold must be stable at ambient: its Ms (carbon-enriched) below ambient. */
    requireStableRetainedAustenite: z.boolean().optional(),
    /** Ductile iron: the ADI processing window, Stage I finished and Stage II not begun at the end of the hold. */
    adiProcessWindow: AdiProcessWindow.optional(),
    /** How the metallurgical prediction is set up for this product (all optional, defaults stated). */
    prediction: PredictionSettings.optional(),
  });
export type AcceptanceCriteria = z.infer<typeof AcceptanceCriteria>;

export const ElementLimit = z
  .strictObject({
    minWtPct: z.number().finite().min(0).max(100).optional(),
    maxWtPct: z.number().finite().min(0).max(100).optional(),
  })
  .superRefine((w, ctx) => {
    if (w.minWtPct === undefined && w.maxWtPct === undefined) {
      ctx.addIssue({ code: 'custom', path: [], message: 'give minWtPct, maxWtPct or both' });
    }
    orderedPair(ctx, w.minWtPct, w.maxWtPct, ['maxWtPct'], 'element limit');
  });
export type ElementLimit = z.infer<typeof ElementLimit>;

/** Per-element limits in wt%, keyed by symbol (`{ "C": { "minWtPct": 0.95, "maxWtPct": 1.10 } }`).
 *  Elements not named are unrestricted; the symbols are
 *  those a heat's chemistry may carry (CHEMISTRY_ELEMENTS). */
export const ChemistryLimits = z.partialRecord(z.enum(CHEMISTRY_ELEMENTS), ElementLimit);
export type ChemistryLimits = z.infer<typeof ChemistryLimits>;

export const ProductSpecVersionInput = z.strictObject({
  chemistryLimits: ChemistryLimits,
  processWindow: ProcessWindow,
  acceptanceCriteria: AcceptanceCriteria,
});
export type ProductSpecVersionInput = z.infer<typeof ProductSpecVersionInput>;

/** Path of one version of a product spec (`/v1/specs/{id}/versions/{version}`, and its drift settings). */
export const SpecVersionParams = z.object({
  id: z.uuid('not a UUID'),
  version: z.coerce.number().int('must be a whole number').positive('must be 1 or more'),
});
export type SpecVersionParams = z.infer<typeof SpecVersionParams>;
