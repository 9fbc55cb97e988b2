import { z } from 'zod';

/**
 * Payloads that controllers, labs and people post to the ingest API (/v1). Every schema is strict:
 * an unknown field is an error, because a misspelt field silently ignored is a lost measurement.
 * Times are ISO 8601 with an explicit offset (device time is never guessed into a zone) or epoch
 * milliseconds.
 */

// ---------------------------------------------------------------------------------------------
// Shared pieces
// ---------------------------------------------------------------------------------------------

/** Device times must lie in 2000-01-01 .. 2100-01-01 (UTC), whichever way they are written. */
export const DEVICE_TIME_MIN_MS = 946_684_800_000;
export const DEVICE_TIME_MAX_MS = 4_102_444_800_000;

/**
 * Instant as sent by a device: ISO 8601 with offset ('Z' or '+01:00') or epoch milliseconds.
 * Both forms have the same calendar bounds: a date-time of year 0001 or 9999 is a wrong clock, not a
 * measurement (the fuzz suite found year-0001 samples answered 500 and year-0001 events stored).
 */
export const DeviceTime = z.union([
  z
    .iso.datetime({
      offset: true,
      error: 'expected an ISO 8601 date-time with offset (e.g. 2026-03-01T08:00:00.000+01:00) or epoch milliseconds',
    })
    .refine((t) => Date.parse(t) >= DEVICE_TIME_MIN_MS, 'date-time before 2000-01-01 (check the device clock)')
    .refine((t) => Date.parse(t) <= DEVICE_TIME_MAX_MS, 'date-time after 2100-01-01 (check the device clock)'),
  z
    .number({ error: 'expected an ISO 8601 date-time with offset or epoch milliseconds' })
    .int('epoch milliseconds must be an integer')
    // 2000-01-01 .. 2100-01-01: catches seconds sent where milliseconds are expected.
    .min(DEVICE_TIME_MIN_MS, 'epoch milliseconds before 2000-01-01 (seconds sent instead of milliseconds?)')
    .max(DEVICE_TIME_MAX_MS, 'epoch milliseconds after 2100-01-01'),
]);
export type DeviceTime = z.infer<typeof DeviceTime>;

/** Epoch milliseconds of a validated DeviceTime. */
export function deviceTimeMs(t: DeviceTime): number {
  return typeof t === 'number' ? t : Date.parse(t);
}

const Code = z.string().trim().min(1, 'must not be empty').max(64, 'at most 64 characters');
const Reason = z.string().trim().min(3, 'give a reason (at least 3 characters)').max(1000);
const Uuid = z.uuid('expected a UUID');

export const Material = z.enum(['STEEL', 'DUCTILE_IRON']);
export type Material = z.infer<typeof Material>;

// ---------------------------------------------------------------------------------------------
// Heats
// ---------------------------------------------------------------------------------------------

/**
 * Element symbols a heat's chemistry may carry (and product specs may limit): the alloying and
 * residual elements of steel certificates, plus Mg, Sn and Sb, which every ductile iron certificate
 * states (residual Mg makes the graphite nodular; Sn and Sb promote pearlite and are limited for ADI;
 * common practice).
 */
export const CHEMISTRY_ELEMENTS = [
  'C', 'Si', 'Mn', 'Ni', 'Cr', 'Mo', 'Al', 'Cu', 'V', 'Nb', 'Ti', 'B', 'N', 'P', 'S', 'Co', 'W', 'Mg', 'Sn', 'Sb',
] as const;
export type ChemistryElement = (typeof CHEMISTRY_ELEMENTS)[number];
const KNOWN_ELEMENTS: ReadonlySet<string> = new Set(CHEMISTRY_ELEMENTS);

/**
 * Chemistry in wt% per element symbol. Carbon is required (every certificate states it and every
 * model needs it); the other elements are optional. Values are kept as sent, never rounded.
 */
export const ChemistryWtPct = z
  .record(
    z.string(),
    z
      .number({ error: 'expected a number (wt%)' })
      .min(0, 'wt% must not be negative')
      .max(100, 'wt% must not exceed 100'),
  )
  .superRefine((chemistry, ctx) => {
    for (const symbol of Object.keys(chemistry)) {
      if (!KNOWN_ELEMENTS.has(symbol)) {
        ctx.addIssue({
          code: 'custom',
          path: [symbol],
          message: `unknown element symbol '${symbol}' (known: ${CHEMISTRY_ELEMENTS.join(', ')})`,
        });
      }
    }
    if (!('C' in chemistry)) {
      ctx.addIssue({ code: 'custom', path: ['C'], message: 'carbon (C) is required' });
    }
    const sumWtPct = Object.values(chemistry).reduce((sum, v) => sum + (Number.isFinite(v) ? v : 0), 0);
    if (sumWtPct > 100) {
      ctx.addIssue({ code: 'custom', path: [], message: `elements sum to ${sumWtPct.toFixed(3)} wt%, more than 100` });
    }
  });
export type ChemistryWtPct = Partial<Record<ChemistryElement, number>>;

/**
 * One heat. Re-posting the same heat number with identical chemistry is a no-op; different
 * chemistry needs `revisionReason` (a new revision is recorded), otherwise the post is refused.
 */
export const HeatInput = z.strictObject({
  heatNumber: Code,
  material: Material,
  grade: z.string().trim().min(1).max(64).optional(),
  chemistryWtPct: ChemistryWtPct,
  /** Where the chemistry comes from, e.g. 'mill-certificate', 'foundry-spectrometer', 'lab'. */
  source: z.string().trim().min(1).max(64).default('mill-certificate'),
  /** Required to change the chemistry (or grade/material) of an existing heat. */
  revisionReason: Reason.optional(),
});
export type HeatInput = z.infer<typeof HeatInput>;

/** Reply of POST /v1/heats for one heat. */
export type HeatOutcome = 'created' | 'unchanged' | 'revised';

/**
 * CSV import (POST /v1/heats/import, text/csv): a header row, then one heat per row. Columns:
 * heatNumber, material, grade, source, revisionReason (optional), and one column per element
 * symbol (empty cell = not stated). Column names are matched case-sensitively for element symbols
 * (Co vs CO) and case-insensitively for the rest.
 */
export const HEAT_CSV_FIXED_COLUMNS = ['heatNumber', 'material', 'grade', 'source', 'revisionReason'] as const;
export const HEAT_CSV_MAX_ROWS = 5000;

// ---------------------------------------------------------------------------------------------
// Product specs (the window/criteria payloads are F3's schemas in spec.ts; here the envelope)
// ---------------------------------------------------------------------------------------------

export const ProductSpecCreate = z.strictObject({
  code: Code,
  name: z.string().trim().min(1).max(200),
  material: Material,
  description: z.string().trim().max(2000).optional(),
});
export type ProductSpecCreate = z.infer<typeof ProductSpecCreate>;

// ---------------------------------------------------------------------------------------------
// Batches and load events
// ---------------------------------------------------------------------------------------------

export const SectionShape = z.enum(['PLATE', 'CYLINDER', 'SQUARE_BAR']);
export type SectionShape = z.infer<typeof SectionShape>;

/**
 * A furnace load. References may be given by id or by the plant's own code/number (exactly one of
 * each pair). The spec version in force is the latest APPROVED version of the product spec at
 * creation. Idempotent by `code`: the same code with the same content is a no-op.
 */
export const BatchCreate = z
  .strictObject({
    code: Code,
    lineId: Uuid.optional(),
    lineCode: Code.optional(),
    heatId: Uuid.optional(),
    heatNumber: Code.optional(),
    productSpecId: Uuid.optional(),
    productSpecCode: Code.optional(),
    partCount: z.number().int('must be a whole number').positive('must be at least 1').max(1_000_000),
    weightKg: z.number().positive('must be more than 0').max(100_000),
    sectionShape: SectionShape,
    /** Thickness (PLATE), diameter (CYLINDER) or side (SQUARE_BAR) in mm. */
    sectionSizeMm: z.number().positive('must be more than 0').max(2000),
    scheduledHoldMin: z.number().positive('must be more than 0').max(10_000).optional(),
  })
  .superRefine((b, ctx) => {
    const pairs: Array<[keyof typeof b, keyof typeof b, string]> = [
      ['lineId', 'lineCode', 'line'],
      ['heatId', 'heatNumber', 'heat'],
      ['productSpecId', 'productSpecCode', 'product spec'],
    ];
    for (const [byId, byCode, what] of pairs) {
      const given = Number(b[byId] !== undefined) + Number(b[byCode] !== undefined);
      if (given !== 1) {
        ctx.addIssue({
          code: 'custom',
          path: [byId],
          message: `give exactly one of ${String(byId)} or ${String(byCode)} for the ${what}`,
        });
      }
    }
  });
export type BatchCreate = z.infer<typeof BatchCreate>;

export const LoadEventKind = z.enum(['CHARGED', 'OUT_OF_FURNACE', 'INTO_BATH', 'OUT_OF_BATH']);
export type LoadEventKind = z.infer<typeof LoadEventKind>;

/** The order a load passes the steps in. */
export const LOAD_EVENT_ORDER: readonly LoadEventKind[] = ['CHARGED', 'OUT_OF_FURNACE', 'INTO_BATH', 'OUT_OF_BATH'];

/** Which kind of equipment reports each step. */
export const LOAD_EVENT_EQUIPMENT: Record<LoadEventKind, 'FURNACE' | 'BATH'> = {
  CHARGED: 'FURNACE',
  OUT_OF_FURNACE: 'FURNACE',
  INTO_BATH: 'BATH',
  OUT_OF_BATH: 'BATH',
};

/** A load event on device time. Retry-safe by (batch, kind). Equipment by id or code, exactly one. */
export const LoadEventInput = z
  .strictObject({
    kind: LoadEventKind,
    at: DeviceTime,
    equipmentId: Uuid.optional(),
    equipmentCode: Code.optional(),
  })
  .superRefine((e, ctx) => {
    if (Number(e.equipmentId !== undefined) + Number(e.equipmentCode !== undefined) !== 1) {
      ctx.addIssue({ code: 'custom', path: ['equipmentId'], message: 'give exactly one of equipmentId or equipmentCode' });
    }
  });
export type LoadEventInput = z.infer<typeof LoadEventInput>;

export const BatchStatus = z.enum(['PLANNED', 'IN_FURNACE', 'IN_TRANSFER', 'IN_BATH', 'DONE']);
export type BatchStatus = z.infer<typeof BatchStatus>;

// ---------------------------------------------------------------------------------------------
// Lab results
// ---------------------------------------------------------------------------------------------

/** Hardness scales: Vickers, Rockwell C, Brinell with tungsten carbide ball. */
export const HardnessScale = z.enum(['HV', 'HRC', 'HBW']);
export type HardnessScale = z.infer<typeof HardnessScale>;

/**
 * Test method standards accepted per hardness scale (common practice: Vickers ISO 6507-1 / ASTM
 * E384 (micro) / ASTM E92; Rockwell ISO 6508-1 / ASTM E18; Brinell ISO 6506-1 / ASTM E10).
 */
export const HARDNESS_STANDARDS = {
  HV: ['ISO 6507-1', 'ASTM E92', 'ASTM E384'],
  HRC: ['ISO 6508-1', 'ASTM E18'],
  HBW: ['ISO 6506-1', 'ASTM E10'],
} as const;

/** Plausible reading range per scale; outside it the value is a typo or the wrong scale. */
export const HARDNESS_RANGE: Record<HardnessScale, { min: number; max: number }> = {
  HV: { min: 50, max: 1500 },
  HRC: { min: 20, max: 70 }, // ASTM E18 scale C is defined for about 20-70 HRC (common practice)
  HBW: { min: 50, max: 650 }, // ISO 6506-1 tungsten carbide ball: up to 650 HBW (common practice)
};

const LabCommon = {
  /** The lab's own id of this result; a re-post with the same ref is a no-op. */
  externalRef: Code,
  measuredAt: DeviceTime.optional(),
  /** Where on the part or coupon, e.g. 'surface', 'core', 'separately cast Y-block 25 mm'. */
  location: z.string().trim().min(1).max(200).optional(),
  note: z.string().trim().max(2000).optional(),
};

const Readings = z
  .array(z.number({ error: 'expected a number' }), { error: 'expected an array of readings' })
  .min(1, 'at least one reading')
  .max(200, 'at most 200 readings');

export const HardnessResult = z
  .strictObject({
    kind: z.literal('HARDNESS'),
    scale: HardnessScale,
    /** Test method standard, e.g. 'ISO 6507-1' or 'ASTM E18'; must match the scale. */
    testStandard: z.string().trim().min(1),
    /** Vickers test force designation, e.g. 'HV10'; optional. */
    testForce: z.string().trim().regex(/^HV\d+(\.\d+)?$/, "expected e.g. 'HV10'").optional(),
    readings: Readings,
    ...LabCommon,
  })
  .superRefine((r, ctx) => {
    const allowed: readonly string[] = HARDNESS_STANDARDS[r.scale];
    if (!allowed.includes(r.testStandard)) {
      ctx.addIssue({
        code: 'custom',
        path: ['testStandard'],
        message: `'${r.testStandard}' is not a ${r.scale} test standard (expected one of: ${allowed.join(', ')})`,
      });
    }
    if (r.testForce !== undefined && r.scale !== 'HV') {
      ctx.addIssue({ code: 'custom', path: ['testForce'], message: 'testForce applies to the HV scale only' });
    }
    const { min, max } = HARDNESS_RANGE[r.scale];
    r.readings.forEach((v, i) => {
      if (v < min || v > max) {
        ctx.addIssue({
          code: 'custom',
          path: ['readings', i],
          message: `${v} ${r.scale} is outside the plausible range ${min}-${max} ${r.scale}`,
        });
      }
    });
  });

/** Retained austenite by X-ray diffraction (ASTM E975 valid from 1 vol% upwards). */
export const RetainedAusteniteResult = z.strictObject({
  kind: z.literal('RETAINED_AUSTENITE'),
  method: z.literal('XRD'),
  testStandard: z.enum(['ASTM E975', 'SAE SP-453']),
  volumePct: z.number({ error: 'expected a number (vol%)' }).min(0, 'must not be negative').max(100, 'at most 100 vol%'),
  ...LabCommon,
});

/** Tensile test: Rm (UTS), Rp0.2 (0.2% proof stress), elongation A. */
export const TensileResult = z
  .strictObject({
    kind: z.literal('TENSILE'),
    testStandard: z.enum(['ISO 6892-1', 'ASTM E8/E8M', 'ASTM A370']),
    rmMPa: z.number().positive('must be more than 0').max(5000),
    rp02MPa: z.number().positive('must be more than 0').max(5000),
    elongationPct: z.number().min(0, 'must not be negative').max(100),
    ...LabCommon,
  })
  .superRefine((r, ctx) => {
    if (r.rp02MPa > r.rmMPa) {
      ctx.addIssue({ code: 'custom', path: ['rp02MPa'], message: `Rp0.2 ${r.rp02MPa} MPa exceeds Rm ${r.rmMPa} MPa` });
    }
  });

/** Charpy impact: absorbed energy per specimen, test temperature, notch (ADI is often unnotched). */
export const ImpactResult = z.strictObject({
  kind: z.literal('IMPACT'),
  testStandard: z.enum(['ISO 148-1', 'ASTM E23']),
  notch: z.enum(['V', 'U', 'UNNOTCHED']),
  energiesJ: z
    .array(z.number().min(0, 'must not be negative').max(1000))
    .min(1, 'at least one specimen')
    .max(20),
  temperatureC: z.number().min(-273.15, 'below absolute zero').max(1000),
  ...LabCommon,
});

export const LabResultInput = z.discriminatedUnion('kind', [
  HardnessResult,
  RetainedAusteniteResult,
  TensileResult,
  ImpactResult,
]);
export type LabResultInput = z.infer<typeof LabResultInput>;

// ---------------------------------------------------------------------------------------------
// Samples
// ---------------------------------------------------------------------------------------------

export const SAMPLES_MAX_PER_REQUEST = 10_000;

export const SampleInput = z.strictObject({
  /** Channel code on the equipment, e.g. 'tc1'. */
  channel: Code,
  t: DeviceTime,
  value: z.number({ error: 'expected a finite number' }),
});
export type SampleInput = z.infer<typeof SampleInput>;

export const SamplesPost = z.strictObject({
  samples: z
    .array(SampleInput, { error: 'expected an array of samples' })
    .min(1, 'at least one sample')
    .max(SAMPLES_MAX_PER_REQUEST, `at most ${SAMPLES_MAX_PER_REQUEST} samples per request`),
});
export type SamplesPost = z.infer<typeof SamplesPost>;

/** Reply of POST /v1/equipment/:id/samples. The request is all-or-nothing, so `rejected` is 0. */
export interface SamplesReply {
  /** Rows newly stored. */
  stored: number;
  /** Samples already stored under the same (channel, t): a retry or an overlapping re-send. */
  duplicates: number;
  /** Of the duplicates, how many carried a different value than the stored one (the stored one is kept). */
  conflicts: number;
  rejected: 0;
  /** Batches whose recompute was enqueued (or, Redis being down, marked stale). */
  batchesQueued: number;
}

// ---------------------------------------------------------------------------------------------
// Deviation queries and actions
// ---------------------------------------------------------------------------------------------

export const DeviationSeveritySchema = z.enum(['MINOR', 'MAJOR', 'CRITICAL']);
export const DeviationStatusSchema = z.enum(['OPEN', 'ACKNOWLEDGED', 'DISPOSITIONED', 'CLOSED', 'CLEARED']);
export const DispositionSchema = z.enum(['USE_AS_IS', 'RETREAT', 'SCRAP', 'CONCESSION']);

/** Comma-separated list in a query string, each item checked against `item`. */
function csvOf<T extends z.ZodType<unknown, string>>(item: T) {
  return z
    .string()
    .transform((s) => s.split(',').map((x) => x.trim()).filter((x) => x.length > 0))
    .pipe(z.array(item).min(1));
}

/**
 * A time filter. Any instant from 1970 to 9999 makes a sensible filter; outside, PostgreSQL refuses
 * some (year 0000 does not exist there: the fuzz suite found from=0000-01-01T00:00:00Z answered 500).
 */
const QueryTime = z.iso
  .datetime({ offset: true, error: 'expected an ISO 8601 date-time with offset' })
  .refine((t) => {
    const ms = Date.parse(t);
    return ms >= 0 && ms <= 253_402_300_799_999;
  }, 'expected a date-time from 1970-01-01 to 9999-12-31');
const Limit = z.coerce.number().int('must be a whole number').min(1).max(500).default(50);

export const DeviationQuery = z
  .strictObject({
    /** openedAt >= from */
    from: QueryTime.optional(),
    /** openedAt < to */
    to: QueryTime.optional(),
    lineId: Uuid.optional(),
    batchId: Uuid.optional(),
    productSpecId: Uuid.optional(),
    severity: csvOf(DeviationSeveritySchema).optional(),
    status: csvOf(DeviationStatusSchema).optional(),
    rule: csvOf(z.string().min(1).max(100)).optional(),
    limit: Limit,
    /** Opaque cursor from the previous page's `nextCursor`. */
    cursor: z.string().max(500).optional(),
  })
  .superRefine((q, ctx) => {
    if (q.from && q.to && Date.parse(q.from) >= Date.parse(q.to)) {
      ctx.addIssue({ code: 'custom', path: ['to'], message: "'to' must be after 'from'" });
    }
  });
export type DeviationQuery = z.infer<typeof DeviationQuery>;

export const DeviationAcknowledge = z.strictObject({ reason: Reason.optional() });
export const DeviationDisposition = z.strictObject({
  disposition: DispositionSchema,
  /** Why this disposition; recorded with the signer in the audit trail. */
  reason: z.string().trim().min(5, 'give a reason (at least 5 characters)').max(1000),
  /** Customer concession / deviation permit number; required for CONCESSION (IATF 16949 8.7.1.1). */
  dispositionRef: z.string().trim().min(1).max(100).optional(),
}).superRefine((d, ctx) => {
  if (d.disposition === 'CONCESSION' && d.dispositionRef === undefined) {
    ctx.addIssue({ code: 'custom', path: ['dispositionRef'], message: 'a CONCESSION needs the customer permit number' });
  }
});
export type DeviationDisposition = z.infer<typeof DeviationDisposition>;
export const DeviationClose = z.strictObject({ reason: Reason });

export const BatchQuery = z.strictObject({
  lineId: Uuid.optional(),
  heatId: Uuid.optional(),
  productSpecId: Uuid.optional(),
  status: csvOf(BatchStatus).optional(),
  code: Code.optional(),
  stale: z.enum(['true', 'false']).transform((s) => s === 'true').optional(),
  /** createdAt >= from */
  from: QueryTime.optional(),
  /** createdAt < to */
  to: QueryTime.optional(),
  limit: Limit,
  cursor: z.string().max(500).optional(),
});
export type BatchQuery = z.infer<typeof BatchQuery>;

export const HeatQuery = z.strictObject({
  heatNumber: Code.optional(),
  material: Material.optional(),
  limit: Limit,
  cursor: z.string().max(500).optional(),
});
export type HeatQuery = z.infer<typeof HeatQuery>;

/** One page of a list endpoint. */
export interface Page<T> {
  items: T[];
  /** Number of rows matching the filters (all pages). */
  total: number;
  /** Pass as `cursor` to get the next page; null on the last page. */
  nextCursor: string | null;
}
