import { z } from 'zod';
import {
  addDays,
  applyCalibrationCorrection,
  applyReferenceOverlay,
  computeDueItems,
  findPyrometryReference,
  isEquipmentCompliantAt,
  localDateOf,
  selectSuspectBatches,
  INSTRUMENTATION_TYPES,
  INSTRUMENT_USES,
  SAT_METHODS,
  SENSOR_USES,
  THERMOCOUPLE_METAL,
  type CalibrationPoint,
  type ComplianceFinding,
  type ComplianceResult,
  type CorrectionMethod,
  type DueItem,
  type DueStatus,
  type EquipmentRecord as PyrometryEquipmentRecord,
  type FindingKind,
  type InstrumentRecord,
  type InstrumentUse,
  type LimitUnit,
  type OverlayError,
  type PyrometryHistory,
  type PyrometryReference,
  type ReferenceOverlay,
  type SensorRecord,
  type SensorUse as SensorUseKind,
  type SuspectBatch,
  type ThermocoupleType,
} from '@ausline/compliance';
import type {
  Calibration,
  EquipmentRecord,
  Instrument,
  Prisma,
  PrismaClient,
  Sensor,
  SuspectTrigger,
} from '../generated/prisma/client.js';
import { DeviationRepository, type DeviationBatchRef, type DeviationChange, type DeviationFindingInput } from './deviations.js';
import type { RecomputeChannel, RecomputeInputs } from './recompute-inputs.js';

/**
 * Pyrometry records on the database (issue 8): everything that needs both the stored records and the
 * pure judgement of libs/compliance/pyrometry. Used by the worker's recompute (corrected channels,
 * equipment compliance at the start of a batch, sensor uses, found-overdue look-backs) and by the API
 * (due lists, equipment status, suspect product after a failed test).
 *
 * Equipment without an EquipmentRecord is not enrolled: its batches get no compliance findings and no
 * look-backs, so plants (and tests) that keep no pyrometry records see nothing. A sensor or instrument
 * certificate on a channel corrects its readings whether or not the equipment is enrolled.
 */

// ---------------------------------------------------------------------------------------------
// Stored JSON shapes (validated on write by the API, re-read defensively here)
// ---------------------------------------------------------------------------------------------

export const CalibrationPointsJson = z
  .array(z.strictObject({ atC: z.number(), correctionC: z.number() }))
  .max(200)
  .superRefine((points, ctx) => {
    const seen = new Map<number, number>();
    points.forEach((p, i) => {
      const first = seen.get(p.atC);
      if (first !== undefined) ctx.addIssue({ code: 'custom', path: [i, 'atC'], message: `duplicates the temperature of point ${first} (${p.atC} °C)` });
      else seen.set(p.atC, i);
    });
  });

const Interval = z.strictObject({ unit: z.enum(['day', 'month']), count: z.number().int().min(1).max(120) });
const OverlayLimit = z.strictObject({
  plusMinusC: z.number().positive(),
  plusMinusF: z.number().positive().optional(),
  pctOfReading: z.number().positive().nullable().optional(),
});
const Selectors = {
  furnaceClass: z.number().int().min(1).max(6).optional(),
  instrumentationType: z.enum(INSTRUMENTATION_TYPES as unknown as [string, ...string[]]).optional(),
  satMethod: z.enum(SAT_METHODS as unknown as [string, ...string[]]).optional(),
};
const SensorUseEnum = z.enum(SENSOR_USES as unknown as [string, ...string[]]);
const InstrumentUseEnum = z.enum(INSTRUMENT_USES as unknown as [string, ...string[]]);
const Metal = z.enum(['base-metal', 'noble-metal']);

/** A customer's stricter limits, in the entry shapes of libs/compliance applyReferenceOverlay. */
export const ReferenceOverlayJson = z.strictObject({
  source: z.string().trim().min(1).max(300),
  entries: z
    .array(
      z.discriminatedUnion('item', [
        z.strictObject({ item: z.literal('uniformityTolerance'), value: z.strictObject({ plusMinusC: z.number().positive(), plusMinusF: z.number().positive().optional() }), ...Selectors }),
        z.strictObject({ item: z.literal('satDifferenceLimit'), value: OverlayLimit, ...Selectors }),
        z.strictObject({ item: z.literal('satInterval'), value: Interval, ...Selectors }),
        z.strictObject({ item: z.literal('tusInterval'), value: Interval, ...Selectors }),
        z.strictObject({ item: z.literal('sensorAccuracy'), sensorUse: SensorUseEnum, value: OverlayLimit }),
        z.strictObject({ item: z.literal('instrumentAccuracy'), instrumentUse: InstrumentUseEnum, value: OverlayLimit }),
        z.strictObject({ item: z.literal('sensorCalibrationInterval'), sensorUse: SensorUseEnum, metal: Metal.optional(), value: Interval }),
        z.strictObject({ item: z.literal('instrumentCalibrationInterval'), instrumentUse: InstrumentUseEnum, value: Interval }),
        z.strictObject({
          item: z.literal('sensorReplacement'),
          upToC: z.number().nullable(),
          metal: Metal.optional(),
          expendable: z.boolean().optional(),
          maxUses: z.number().int().min(1).optional(),
          maxAge: Interval.optional(),
        }),
        z.strictObject({ item: z.literal('satProbeTipDistanceMaxMm'), value: z.number().positive() }),
      ]),
    )
    .max(500),
});

// ---------------------------------------------------------------------------------------------
// Rules and severities of the deviations raised here
// ---------------------------------------------------------------------------------------------

/** Rules a batch recompute evaluates for every batch (and so clears when no longer found). */
export const PYROMETRY_BATCH_RULES = ['equipment-overdue', 'sensor-expired', 'sensor-use-limit', 'equipment-record-incomplete'] as const;
export type PyrometryBatchRule = (typeof PYROMETRY_BATCH_RULES)[number];

/**
 * Suspect product: opened by a failed or overdue test and never cleared by a recompute (it is not in
 * PYROMETRY_BATCH_RULES); quality dispositions it through the normal deviation flow.
 */
export const SUSPECT_PRODUCT_RULE = 'suspect-product';

const FINDING_RULE: Record<FindingKind, { rule: PyrometryBatchRule; severity: 'MINOR' | 'MAJOR' }> = {
  overdue: { rule: 'equipment-overdue', severity: 'MAJOR' },
  failed: { rule: 'equipment-overdue', severity: 'MAJOR' },
  'never-passed': { rule: 'equipment-overdue', severity: 'MAJOR' },
  'sensor-age-limit': { rule: 'sensor-expired', severity: 'MAJOR' },
  'sensor-expired': { rule: 'sensor-expired', severity: 'MAJOR' },
  'sensor-use-limit': { rule: 'sensor-use-limit', severity: 'MAJOR' },
  // "We cannot show compliance" (a rule or a record is missing) is worth a look, not a hold.
  'record-incomplete': { rule: 'equipment-record-incomplete', severity: 'MINOR' },
  'no-rule': { rule: 'equipment-record-incomplete', severity: 'MINOR' },
};

const RULE_TEXT: Record<PyrometryBatchRule, string> = {
  'equipment-overdue': 'pyrometry overdue or failed',
  'sensor-expired': 'sensor past its age limit or expiry',
  'sensor-use-limit': 'sensor past its use limit',
  'equipment-record-incomplete': 'pyrometry compliance cannot be shown (rule or record missing)',
};

/** Items whose failure or lateness puts earlier product in doubt (practice.md §0 item 2). */
export type SuspectItemKind = 'tus' | 'sat' | 'sensor-calibration' | 'instrument-calibration';
const SUSPECT_ITEM_KINDS: ReadonlySet<string> = new Set<SuspectItemKind>(['tus', 'sat', 'sensor-calibration', 'instrument-calibration']);

// ---------------------------------------------------------------------------------------------
// Public result shapes
// ---------------------------------------------------------------------------------------------

export type ReferenceResolution = { ok: true; reference: PyrometryReference } | { ok: false; errors: OverlayError[] };

export interface ChannelCorrectionSummary {
  channelId: string;
  sensorIds: string[];
  instrumentIds: string[];
  samples: number;
  corrected: number;
  /** Samples left uncorrected because their value lies outside the calibrated points (never extrapolated). */
  outsideCalibratedRange: number;
  /** Samples with no certificate in force at their time. */
  withoutCertificate: number;
  maxAbsCorrectionC: number;
}

export interface PyrometryRecomputeResult {
  /** The input channels with corrected values (raw samples in the database are untouched). */
  channels: RecomputeChannel[];
  /** Findings for this batch: equipment compliance at its start, and suspect product. */
  findings: DeviationFindingInput[];
  /** Rules this result owns for the batch (their vanished deviations may be cleared). */
  rules: string[];
  /** Suspect-product deviations opened or refreshed on other batches (found-overdue look-backs). */
  changes: DeviationChange[];
  corrections: ChannelCorrectionSummary[];
}

export interface EquipmentPyrometryState {
  equipment: { id: string; code: string; name: string; kind: string; lineId: string };
  timeZone: string;
  record: EquipmentRecord;
  reference: PyrometryReference;
  pyrometryRecord: PyrometryEquipmentRecord;
  history: PyrometryHistory;
  sensors: Sensor[];
  instruments: Instrument[];
}

export interface SuspectRaise {
  trigger: SuspectTrigger;
  /** False when the same condition had already raised its trigger (nothing new was opened). */
  created: boolean;
  batches: SuspectBatch[];
  changes: DeviationChange[];
}

export interface FailedTestTrigger {
  equipmentId: string;
  itemKind: SuspectItemKind;
  subjectId: string;
  /** When the failure was established (test time, end of survey, calibration date). */
  at: Date;
  /** The failed test, survey or calibration. */
  sourceId: string;
  evidence: Record<string, unknown>;
}

export interface LineDueList {
  lineId: string;
  lineCode: string;
  timeZone: string;
  at: Date;
  equipment: Array<{
    equipmentId: string;
    equipmentCode: string;
    kind: string;
    referenceId: string;
    worstStatus: DueStatus;
    items: DueItem[];
  }>;
  /** Test sensors and field test instruments not attached to equipment, due by the strictest reference in use. */
  testKit: Array<DueItem & { referenceIds: string[] }>;
  /** Equipment of the line without a pyrometry record. */
  notEnrolled: Array<{ equipmentId: string; equipmentCode: string }>;
}

type Db = PrismaClient | Prisma.TransactionClient;

const STATUS_RANK: Record<DueStatus, number> = { ok: 0, 'due-soon': 1, 'no-rule': 2, overdue: 3 };

// ---------------------------------------------------------------------------------------------
// Pure helpers (exported for the API and for tests)
// ---------------------------------------------------------------------------------------------

/** The reference set an equipment record names, with its customer overlay merged. */
export function resolveReference(record: Pick<EquipmentRecord, 'standard' | 'revision' | 'customerOverlay'>): ReferenceResolution {
  const base = findPyrometryReference(record.standard as PyrometryReference['standard'], record.revision);
  if (!base) {
    return { ok: false, errors: [{ path: 'revision', message: `no reference set for ${record.standard} revision ${record.revision}` }] };
  }
  if (record.customerOverlay === null || record.customerOverlay === undefined) return { ok: true, reference: base };
  const overlay = ReferenceOverlayJson.safeParse(record.customerOverlay);
  if (!overlay.success) {
    return {
      ok: false,
      errors: overlay.error.issues.map((i) => ({ path: ['customerOverlay', ...i.path.map(String)].join('.'), message: i.message })),
    };
  }
  const merged = applyReferenceOverlay(base, overlay.data as ReferenceOverlay);
  // Paths in the API's dotted form (customerOverlay.entries.0.value), like every other 4xx.
  if (!merged.ok) return { ok: false, errors: merged.errors.map((e) => ({ path: `customerOverlay.${e.path.replace(/\[(\d+)\]/g, '.$1')}`, message: e.message })) };
  return { ok: true, reference: merged.reference };
}

export function calibrationPointsOf(json: unknown): CalibrationPoint[] {
  const parsed = CalibrationPointsJson.safeParse(json);
  return parsed.success ? parsed.data : [];
}

/** The plant-local midnight that starts `date` in `timeZone`, as an instant. */
export function startOfLocalDay(date: string, timeZone: string): Date {
  const [y, m, d] = date.split('-').map(Number) as [number, number, number];
  const wallClock = Date.UTC(y, m - 1, d);
  let guess = wallClock;
  // The offset at the guess moves the guess; two rounds settle it even across a DST change.
  for (let i = 0; i < 3; i += 1) {
    const next = wallClock - zoneOffsetMs(new Date(guess), timeZone);
    if (next === guess) break;
    guess = next;
  }
  // A zone that skips midnight (DST at 00:00) starts the day at the first instant that is on it.
  while (localDateOf(new Date(guess), timeZone) < date) guess += 15 * 60_000;
  return new Date(guess);
}

function zoneOffsetMs(instant: Date, timeZone: string): number {
  const parts = new Intl.DateTimeFormat('en-US', {
    timeZone,
    hourCycle: 'h23',
    year: 'numeric',
    month: '2-digit',
    day: '2-digit',
    hour: '2-digit',
    minute: '2-digit',
    second: '2-digit',
  }).formatToParts(instant);
  const get = (type: string) => Number(parts.find((p) => p.type === type)?.value);
  const asUtc = Date.UTC(get('year'), get('month') - 1, get('day'), get('hour'), get('minute'), get('second'));
  return asUtc - Math.floor(instant.getTime() / 1000) * 1000;
}

function inServiceAt(row: { installedAt: Date; retiredAt: Date | null }, tMs: number): boolean {
  return row.installedAt.getTime() <= tMs && (row.retiredAt === null || tMs < row.retiredAt.getTime());
}

/** The libs/compliance view of an equipment record with its sensors and instruments. */
export function toPyrometryRecord(record: EquipmentRecord, sensors: readonly Sensor[], instruments: readonly Instrument[]): PyrometryEquipmentRecord {
  return {
    equipmentId: record.equipmentId,
    furnaceClass: record.furnaceClass as PyrometryEquipmentRecord['furnaceClass'],
    instrumentationType: record.instrumentationType as PyrometryEquipmentRecord['instrumentationType'],
    ...(record.satMethod ? { satMethod: record.satMethod as PyrometryEquipmentRecord['satMethod'] & string } : {}),
    tusRequired: record.tusRequired,
    sensors: sensors.map(toSensorRecord),
    instruments: instruments.map(toInstrumentRecord),
  };
}

function toSensorRecord(s: Sensor): SensorRecord {
  return {
    sensorId: s.id,
    use: s.use as SensorUseKind,
    thermocoupleType: s.thermocoupleType as ThermocoupleType,
    expendable: s.expendable,
    installedAt: s.installedAt,
    retiredAt: s.retiredAt,
    expiresOn: s.expiresOn,
  };
}

function toInstrumentRecord(i: Instrument): InstrumentRecord {
  return { instrumentId: i.id, use: i.use as InstrumentUse, retiredAt: i.retiredAt };
}

/** Uses before the service counted them: one use each at the install date, at the stated hottest temperature. */
function priorUsesOf(s: Sensor): PyrometryHistory['sensorUses'] {
  return Array.from({ length: s.priorUses }, () => ({ sensorId: s.id, at: s.installedAt, maxTempC: s.priorMaxTempC ?? 0 }));
}

/**
 * The finding of one suspect batch, built the same way whether the API opens it (a failed test) or the
 * worker re-derives it on the batch's recompute, so the second never rewrites the first.
 */
export function suspectFinding(trigger: SuspectTrigger, batch: SuspectBatch, equipmentCode: string): DeviationFindingInput {
  const evidence = (trigger.evidence ?? {}) as Record<string, unknown>;
  const what = typeof evidence.summary === 'string' ? evidence.summary : `${trigger.itemKind} ${trigger.kind}`;
  const since = trigger.lastPassAt ? `since the last passing result at ${trigger.lastPassAt.toISOString()}` : 'with no passing result on record';
  return {
    rule: SUSPECT_PRODUCT_RULE,
    severity: 'MAJOR',
    dedupKey: `${batch.batchId}:${SUSPECT_PRODUCT_RULE}:${trigger.id}`,
    channelId: null,
    message: `Suspect product: processed on ${equipmentCode} ${since}; ${what}`,
    details: {
      triggerId: trigger.id,
      trigger: trigger.kind,
      itemKind: trigger.itemKind,
      equipmentId: trigger.equipmentId,
      equipmentCode,
      subjectId: trigger.subjectId,
      sourceId: trigger.sourceId,
      window: { afterExclusive: trigger.lastPassAt?.toISOString() ?? null, untilInclusive: trigger.at.toISOString() },
      batch: {
        startedAt: batch.startedAt.toISOString(),
        endedAt: batch.endedAt?.toISOString() ?? null,
        straddlesLastPass: batch.straddlesLastPass,
        straddlesEvent: batch.straddlesEvent,
      },
      evidence,
    },
  };
}

/** Per-equipment compliance findings grouped into one deviation per rule. */
export function complianceFindings(
  batchId: string,
  equipment: { id: string; code: string },
  startedAt: Date,
  result: ComplianceResult,
  referenceId: string,
): DeviationFindingInput[] {
  const byRule = new Map<PyrometryBatchRule, ComplianceFinding[]>();
  for (const f of result.findings) {
    const { rule } = FINDING_RULE[f.kind];
    byRule.set(rule, [...(byRule.get(rule) ?? []), f]);
  }
  const out: DeviationFindingInput[] = [];
  for (const rule of PYROMETRY_BATCH_RULES) {
    const found = byRule.get(rule);
    if (!found) continue;
    const severity = found.some((f) => FINDING_RULE[f.kind].severity === 'MAJOR') ? 'MAJOR' : 'MINOR';
    const more = found.length > 1 ? ` (+${found.length - 1} more)` : '';
    out.push({
      rule,
      severity,
      dedupKey: `${batchId}:${rule}:${equipment.id}`,
      channelId: null,
      message: `${equipment.code}: ${RULE_TEXT[rule]} when the batch started at ${startedAt.toISOString()}: ${found[0]!.reason}${more}`,
      details: {
        equipmentId: equipment.id,
        equipmentCode: equipment.code,
        startedAt: startedAt.toISOString(),
        referenceId,
        findings: found.map((f) => ({ kind: f.kind, itemKind: f.itemKind, subjectId: f.subjectId, reason: f.reason, rules: f.rules })),
      },
    });
  }
  return out;
}

// ---------------------------------------------------------------------------------------------
// Repository
// ---------------------------------------------------------------------------------------------

interface CertificateInForce {
  fromMs: number;
  points: CalibrationPoint[];
  method: CorrectionMethod;
}

interface TriggerInput {
  equipmentId: string;
  kind: 'failed-test' | 'found-overdue';
  itemKind: SuspectItemKind;
  subjectId: string;
  at: Date;
  lastPassAt: Date | null;
  sourceId: string | null;
  evidence: Record<string, unknown>;
  dedupKey: string;
}

interface BatchSpan {
  equipmentId: string;
  startedAt: Date;
  endedAt: Date | null;
}

export class PyrometryRepository {
  private readonly deviations: DeviationRepository;

  constructor(private readonly prisma: PrismaClient) {
    this.deviations = new DeviationRepository(prisma);
  }

  /** Everything libs/compliance needs about one enrolled piece of equipment, or null when not enrolled. */
  async equipmentState(equipmentId: string, db: Db = this.prisma): Promise<EquipmentPyrometryState | null> {
    const record = await db.equipmentRecord.findUnique({ where: { equipmentId }, include: { equipment: { include: { line: true } } } });
    if (!record) return null;
    const resolved = resolveReference(record);
    // Records are validated on write; a set that no longer resolves (e.g. a revision withdrawn from the
    // built-in list) is a programming or data error worth failing loudly on.
    if (!resolved.ok) throw new Error(`pyrometry record of equipment ${equipmentId} does not resolve: ${resolved.errors.map((e) => `${e.path}: ${e.message}`).join('; ')}`);
    // One query at a time: `db` is often an interactive transaction, which has a single connection.
    const sensors = await db.sensor.findMany({ where: { equipmentId }, orderBy: { serial: 'asc' } });
    const instruments = await db.instrument.findMany({ where: { equipmentId }, orderBy: { serial: 'asc' } });
    const history = await this.history(equipmentId, sensors, instruments, db);
    const { equipment } = record;
    return {
      equipment: { id: equipment.id, code: equipment.code, name: equipment.name, kind: equipment.kind, lineId: equipment.lineId },
      timeZone: equipment.line.timeZone,
      record,
      reference: resolved.reference,
      pyrometryRecord: toPyrometryRecord(record, sensors, instruments),
      history,
      sensors,
      instruments,
    };
  }

  /** Tests (invalid ones do not count), calibrations and sensor uses of one piece of equipment. */
  async history(equipmentId: string, sensors: readonly Sensor[], instruments: readonly Instrument[], db: Db = this.prisma): Promise<PyrometryHistory> {
    const sensorIds = sensors.map((s) => s.id);
    const instrumentIds = instruments.map((i) => i.id);
    const sats = await db.accuracyTest.findMany({ where: { equipmentId, verdict: { in: ['pass', 'fail'] } }, select: { id: true, sensorId: true, testedAt: true, passed: true } });
    const surveys = await db.uniformitySurvey.findMany({ where: { equipmentId, verdict: { in: ['pass', 'fail'] } }, select: { id: true, endedAt: true, passed: true } });
    const calibrations = await db.calibration.findMany({
      where: { OR: [{ sensorId: { in: sensorIds } }, { instrumentId: { in: instrumentIds } }] },
      select: { id: true, sensorId: true, instrumentId: true, calibratedAt: true, passed: true, certificateRef: true },
    });
    const uses = await db.sensorUse.findMany({ where: { sensorId: { in: sensorIds } } });
    return {
      tests: [
        ...sats.map((t) => ({ kind: 'sat' as const, equipmentId, sensorId: t.sensorId, at: t.testedAt, passed: t.passed, testId: t.id })),
        ...surveys.map((s) => ({ kind: 'tus' as const, equipmentId, at: s.endedAt, passed: s.passed, testId: s.id })),
      ],
      calibrations: calibrations.map((c) => ({
        subject: c.sensorId ? ('sensor' as const) : ('instrument' as const),
        subjectId: (c.sensorId ?? c.instrumentId)!,
        at: c.calibratedAt,
        passed: c.passed,
        certificateId: c.certificateRef,
      })),
      sensorUses: [
        ...sensors.flatMap(priorUsesOf),
        ...uses.map((u) => ({ sensorId: u.sensorId, at: u.at, maxTempC: u.maxTempC ?? 0, batchId: u.batchId })),
      ],
    };
  }

  /** When each load was on the equipment: from CHARGED / INTO_BATH to OUT_OF_FURNACE / OUT_OF_BATH (null = still there). */
  async batchesOnEquipment(
    equipmentId: string,
    window: { afterExclusive: Date | null; untilInclusive: Date },
    db: Db = this.prisma,
  ): Promise<Array<{ batchId: string; equipmentId: string; startedAt: Date; endedAt: Date | null }>> {
    const after = window.afterExclusive;
    const rows = await db.$queryRaw<{ batchId: string; startedAt: Date; endedAt: Date | null }[]>`
      SELECT s."batchId", s."at" AS "startedAt", e."at" AS "endedAt"
      FROM "LoadEvent" s
      LEFT JOIN "LoadEvent" e ON e."batchId" = s."batchId" AND e."equipmentId" = s."equipmentId"
        AND e."kind" IN ('OUT_OF_FURNACE'::"LoadEventKind", 'OUT_OF_BATH'::"LoadEventKind")
      WHERE s."equipmentId" = ${equipmentId}::uuid
        AND s."kind" IN ('CHARGED'::"LoadEventKind", 'INTO_BATH'::"LoadEventKind")
        AND s."at" <= ${window.untilInclusive}
        AND (${after}::timestamptz IS NULL OR e."at" IS NULL OR e."at" > ${after}::timestamptz)
      ORDER BY s."at", s."batchId"`;
    return rows.map((r) => ({ batchId: r.batchId, equipmentId, startedAt: r.startedAt, endedAt: r.endedAt }));
  }

  /**
   * A failed test, survey or calibration: records its trigger and opens a suspect-product deviation on
   * every batch processed on the equipment since the last passing result of the same item (libs/compliance
   * selectSuspectBatches). Idempotent: the trigger is keyed by the failed record.
   */
  async raiseForFailure(input: FailedTestTrigger, tx: Prisma.TransactionClient): Promise<SuspectRaise> {
    const lastPassAt = await this.lastPassBefore(input.equipmentId, input.itemKind, input.subjectId, input.at, tx);
    return this.raise(
      {
        equipmentId: input.equipmentId,
        kind: 'failed-test',
        itemKind: input.itemKind,
        subjectId: input.subjectId,
        at: input.at,
        lastPassAt,
        sourceId: input.sourceId,
        evidence: input.evidence,
        dedupKey: `failed:${input.sourceId}`,
      },
      tx,
    );
  }

  private async lastPassBefore(equipmentId: string, itemKind: SuspectItemKind, subjectId: string, at: Date, db: Db): Promise<Date | null> {
    switch (itemKind) {
      case 'tus': {
        const r = await db.uniformitySurvey.findFirst({ where: { equipmentId, passed: true, endedAt: { lt: at } }, orderBy: { endedAt: 'desc' } });
        return r?.endedAt ?? null;
      }
      case 'sat': {
        const r = await db.accuracyTest.findFirst({ where: { equipmentId, sensorId: subjectId, passed: true, testedAt: { lt: at } }, orderBy: { testedAt: 'desc' } });
        return r?.testedAt ?? null;
      }
      case 'sensor-calibration':
      case 'instrument-calibration': {
        const where = itemKind === 'sensor-calibration' ? { sensorId: subjectId } : { instrumentId: subjectId };
        const r = await db.calibration.findFirst({ where: { ...where, passed: true, calibratedAt: { lt: at } }, orderBy: { calibratedAt: 'desc' } });
        return r?.calibratedAt ?? null;
      }
    }
  }

  private async raise(data: TriggerInput, tx: Prisma.TransactionClient): Promise<SuspectRaise> {
    const inserted = await tx.$queryRaw<{ id: string }[]>`
      INSERT INTO "SuspectTrigger" ("equipmentId", "kind", "itemKind", "subjectId", "at", "lastPassAt", "sourceId", "evidence", "dedupKey")
      VALUES (${data.equipmentId}::uuid, ${data.kind}, ${data.itemKind}, ${data.subjectId}::uuid, ${data.at}, ${data.lastPassAt},
              ${data.sourceId}::uuid, ${JSON.stringify(data.evidence)}::jsonb, ${data.dedupKey})
      ON CONFLICT ("dedupKey") DO NOTHING
      RETURNING "id"`;
    const trigger = await tx.suspectTrigger.findUniqueOrThrow({ where: { dedupKey: data.dedupKey } });
    const { batches, changes } = await this.openSuspectDeviations(trigger, tx);
    return { trigger, created: inserted.length > 0, batches, changes };
  }

  /** Opens (or refreshes) the suspect-product deviation of every batch a trigger's window selects. */
  async openSuspectDeviations(trigger: SuspectTrigger, tx: Prisma.TransactionClient): Promise<{ batches: SuspectBatch[]; changes: DeviationChange[] }> {
    const candidates = await this.batchesOnEquipment(trigger.equipmentId, { afterExclusive: trigger.lastPassAt, untilInclusive: trigger.at }, tx);
    const selection = selectSuspectBatches(
      { equipmentId: trigger.equipmentId, kind: trigger.kind as 'failed-test' | 'found-overdue', subject: trigger.itemKind, at: trigger.at },
      candidates,
      trigger.lastPassAt,
    );
    if (selection.batches.length === 0) return { batches: [], changes: [] };
    const equipment = await tx.equipment.findUniqueOrThrow({ where: { id: trigger.equipmentId }, select: { code: true } });
    const refs = await tx.batch.findMany({
      where: { id: { in: selection.batches.map((b) => b.batchId) } },
      select: { id: true, lineId: true, specVersion: { select: { specId: true } } },
    });
    const refById = new Map(refs.map((r) => [r.id, { batchId: r.id, lineId: r.lineId, productSpecId: r.specVersion.specId } satisfies DeviationBatchRef]));
    const changes: DeviationChange[] = [];
    // In dedupKey order, like DeviationRepository.syncFindings, so concurrent writers lock rows alike.
    const ordered = [...selection.batches].sort((a, b) => (a.batchId < b.batchId ? -1 : 1));
    for (const b of ordered) {
      const change = await this.deviations.openOrRefresh(suspectFinding(trigger, b, equipment.code), refById.get(b.batchId)!, tx);
      if (change) changes.push(change);
    }
    return { batches: [...selection.batches], changes };
  }

  /**
   * Finds every test or calibration of the equipment that is past its due date at `now`, or was just
   * before each instant in `passedAt` (a pass recorded late does not undo the lateness: the API passes
   * the time of a newly recorded result here), and raises its suspect-product look-back once. The
   * look-back closes at the last instant the item was still within its interval (the end of its due
   * date, plant time): batches started later are caught by their own compliance check at their start.
   */
  async sweepOverdue(
    equipmentId: string,
    now: Date,
    tx: Prisma.TransactionClient,
    options: { state?: EquipmentPyrometryState | null; passedAt?: readonly Date[] } = {},
  ): Promise<SuspectRaise[]> {
    const s = options.state === undefined ? await this.equipmentState(equipmentId, tx) : options.state;
    if (!s) return [];
    const nowMs = now.getTime();
    const before = (options.passedAt ?? []).map((d) => d.getTime() - 1).filter((ms) => ms < nowMs);
    const instants = [...new Set([nowMs, ...before])].sort((a, b) => a - b);
    const found = new Map<string, { item: DueItem; at: Date; lastPassAt: Date }>();
    for (const ms of instants) {
      for (const item of computeDueItems(s.pyrometryRecord, s.history, new Date(ms), s.reference, { timeZone: s.timeZone })) {
        if (!SUSPECT_ITEM_KINDS.has(item.kind) || !item.causes.includes('past-due-date') || !item.lastPassAt || !item.dueDate) continue;
        const key = `overdue:${item.kind}:${item.subjectId}:${item.lastPassAt.toISOString()}`;
        if (found.has(key)) continue;
        const at = new Date(startOfLocalDay(addDays(item.dueDate, 1), s.timeZone).getTime() - 1);
        found.set(key, { item, at, lastPassAt: item.lastPassAt });
      }
    }
    const raised: SuspectRaise[] = [];
    for (const [dedupKey, { item, at, lastPassAt }] of [...found].sort(([a], [b]) => (a < b ? -1 : 1))) {
      raised.push(
        await this.raise(
          {
            equipmentId,
            kind: 'found-overdue',
            itemKind: item.kind as SuspectItemKind,
            subjectId: item.subjectId,
            at,
            lastPassAt,
            sourceId: null,
            evidence: {
              summary: `${item.reason} (look-back closes at the end of the due date, ${at.toISOString()})`,
              dueDate: item.dueDate,
              foundAt: now.toISOString(),
              referenceId: s.reference.id,
              rules: item.rules,
            },
            dedupKey,
          },
          tx,
        ),
      );
    }
    return raised;
  }

  /**
   * The pyrometry part of one batch's recompute, inside its transaction:
   *  1. channels corrected by the certificates in force at each reading (sensor + instrument, linear or
   *     nearest between calibration points, never extrapolated); raw samples in the database stay as posted;
   *  2. for each enrolled piece of equipment the batch ran on: compliance at the batch's start there
   *     (isEquipmentCompliantAt), one use per sensor in service, the found-overdue sweep, and the
   *     suspect-product deviations this batch falls under.
   */
  async forRecompute(inputs: RecomputeInputs, now: Date, tx: Prisma.TransactionClient): Promise<PyrometryRecomputeResult> {
    const batchId = inputs.batch.id;
    const channelIds = inputs.channels.map((c) => c.channelId);
    const sensors = await tx.sensor.findMany({ where: { channelId: { in: channelIds } }, include: { calibrations: true } });
    const instruments = await tx.instrument.findMany({ where: { channelId: { in: channelIds } }, include: { calibrations: true } });
    const events = await tx.loadEvent.findMany({ where: { batchId }, include: { equipment: { select: { id: true, code: true } } } });
    const { channels, corrections } = correctChannels(inputs.channels, sensors, instruments);

    // Where and when the batch ran.
    const spans = new Map<string, BatchSpan & { code: string }>();
    for (const e of events) {
      if (e.kind === 'CHARGED' || e.kind === 'INTO_BATH') {
        const span = spans.get(e.equipmentId) ?? { equipmentId: e.equipmentId, code: e.equipment.code, startedAt: e.at, endedAt: null };
        spans.set(e.equipmentId, { ...span, startedAt: e.at });
      }
    }
    for (const e of events) {
      const span = spans.get(e.equipmentId);
      if (span && (e.kind === 'OUT_OF_FURNACE' || e.kind === 'OUT_OF_BATH')) span.endedAt = e.at;
    }

    const findings: DeviationFindingInput[] = [];
    const changes: DeviationChange[] = [];
    for (const span of [...spans.values()].sort((a, b) => a.startedAt.getTime() - b.startedAt.getTime())) {
      const state = await this.equipmentState(span.equipmentId, tx);
      if (!state) continue;

      await this.recordSensorUses(batchId, span, state.sensors, channels, tx);
      // The use just recorded is at exactly the start, which isEquipmentCompliantAt counts as the batch itself.
      state.history = await this.history(span.equipmentId, state.sensors, state.instruments, tx);
      const compliance = isEquipmentCompliantAt(state.pyrometryRecord, state.history, span.startedAt, state.reference, { timeZone: state.timeZone });
      findings.push(...complianceFindings(batchId, { id: span.equipmentId, code: span.code }, span.startedAt, compliance, state.reference.id));

      for (const raised of await this.sweepOverdue(span.equipmentId, now, tx, { state })) changes.push(...raised.changes);

      // A trigger can only select a batch that started at or before its instant.
      const triggers = await tx.suspectTrigger.findMany({ where: { equipmentId: span.equipmentId, at: { gte: span.startedAt } }, orderBy: { id: 'asc' } });
      for (const trigger of triggers) {
        const selection = selectSuspectBatches(
          { equipmentId: trigger.equipmentId, kind: trigger.kind as 'failed-test' | 'found-overdue', subject: trigger.itemKind, at: trigger.at },
          [{ batchId, equipmentId: span.equipmentId, startedAt: span.startedAt, endedAt: span.endedAt }],
          trigger.lastPassAt,
        );
        for (const b of selection.batches) findings.push(suspectFinding(trigger, b, span.code));
      }
    }
    // Suspect-product deviations of this batch are stored with its findings; the sweep may have opened
    // them already in this transaction, in which case storing them again is a no-op refresh.
    return { channels, findings, rules: [...PYROMETRY_BATCH_RULES], changes, corrections };
  }

  private async recordSensorUses(batchId: string, span: BatchSpan, sensors: readonly Sensor[], channels: readonly RecomputeChannel[], tx: Prisma.TransactionClient): Promise<void> {
    const startMs = span.startedAt.getTime();
    const endMs = span.endedAt?.getTime() ?? Number.POSITIVE_INFINITY;
    const maxOf = (c: RecomputeChannel | undefined): number | null => {
      let max: number | null = null;
      for (const s of c?.samples ?? []) if (s.tMs >= startMs && s.tMs <= endMs && (max === null || s.valueC > max)) max = s.valueC;
      return max;
    };
    // A sensor without a loaded channel sits in the same furnace or bath as the loaded ones: their hottest reading stands in.
    const equipmentChannelIds = new Set(sensors.map((s) => s.channelId).filter((id): id is string => id !== null));
    const equipmentMax = channels
      .filter((c) => equipmentChannelIds.has(c.channelId))
      .map(maxOf)
      .reduce<number | null>((m, v) => (v === null ? m : m === null || v > m ? v : m), null);
    for (const sensor of sensors) {
      if (!inServiceAt(sensor, startMs)) continue;
      const own = sensor.channelId ? maxOf(channels.find((c) => c.channelId === sensor.channelId)) : null;
      const maxTempC = own ?? equipmentMax;
      await tx.$executeRaw`
        INSERT INTO "SensorUse" ("sensorId", "batchId", "at", "maxTempC")
        VALUES (${sensor.id}::uuid, ${batchId}::uuid, ${span.startedAt}, ${maxTempC})
        ON CONFLICT ("sensorId", "batchId") DO UPDATE SET "at" = EXCLUDED."at", "maxTempC" = EXCLUDED."maxTempC"
        WHERE "SensorUse"."at" IS DISTINCT FROM EXCLUDED."at" OR "SensorUse"."maxTempC" IS DISTINCT FROM EXCLUDED."maxTempC"`;
    }
  }

  /**
   * What is due or overdue on a line at `now`: every enrolled piece of equipment, and the test kit (test
   * sensors and field test instruments attached to no equipment) against every reference set in use on
   * the line, keeping for each item the strictest answer.
   */
  async lineDueList(lineId: string, now: Date, options: { dueSoonDays?: number } = {}, db: Db = this.prisma): Promise<LineDueList | null> {
    const line = await db.line.findUnique({ where: { id: lineId }, include: { equipment: { orderBy: { code: 'asc' } } } });
    if (!line) return null;
    const due = { timeZone: line.timeZone, ...(options.dueSoonDays !== undefined ? { dueSoonDays: options.dueSoonDays } : {}) };
    const out: LineDueList = { lineId, lineCode: line.code, timeZone: line.timeZone, at: now, equipment: [], testKit: [], notEnrolled: [] };
    const references = new Map<string, PyrometryReference>();
    for (const e of line.equipment) {
      const state = await this.equipmentState(e.id, db);
      if (!state) {
        out.notEnrolled.push({ equipmentId: e.id, equipmentCode: e.code });
        continue;
      }
      references.set(state.reference.id, state.reference);
      const items = computeDueItems(state.pyrometryRecord, state.history, now, state.reference, due);
      out.equipment.push({
        equipmentId: e.id,
        equipmentCode: e.code,
        kind: e.kind,
        referenceId: state.reference.id,
        worstStatus: worstStatus(items),
        items,
      });
    }
    const kitSensors = await db.sensor.findMany({ where: { equipmentId: null }, orderBy: { serial: 'asc' } });
    const kitInstruments = await db.instrument.findMany({ where: { equipmentId: null }, orderBy: { serial: 'asc' } });
    if ((kitSensors.length > 0 || kitInstruments.length > 0) && references.size > 0) {
      const history = await this.kitHistory(kitSensors, kitInstruments, db);
      const merged = new Map<string, DueItem & { referenceIds: string[] }>();
      for (const reference of references.values()) {
        const record: PyrometryEquipmentRecord = {
          equipmentId: 'test-kit',
          furnaceClass: 1,
          instrumentationType: 'A',
          tusRequired: false,
          sensors: kitSensors.map(toSensorRecord),
          instruments: kitInstruments.map(toInstrumentRecord),
        };
        for (const item of computeDueItems(record, history, now, reference, due)) {
          const key = `${item.kind}:${item.subjectId}`;
          const prev = merged.get(key);
          if (!prev || stricter(item, prev)) merged.set(key, { ...item, referenceIds: [...(prev?.referenceIds ?? []), reference.id] });
          else prev.referenceIds.push(reference.id);
        }
      }
      out.testKit = [...merged.values()];
    }
    return out;
  }

  async kitHistory(sensors: readonly Sensor[], instruments: readonly Instrument[], db: Db = this.prisma): Promise<PyrometryHistory> {
    const calibrations = await db.calibration.findMany({
      where: { OR: [{ sensorId: { in: sensors.map((s) => s.id) } }, { instrumentId: { in: instruments.map((i) => i.id) } }] },
    });
    return {
      tests: [],
      calibrations: calibrations.map((c: Calibration) => ({
        subject: c.sensorId ? ('sensor' as const) : ('instrument' as const),
        subjectId: (c.sensorId ?? c.instrumentId)!,
        at: c.calibratedAt,
        passed: c.passed,
        certificateId: c.certificateRef,
      })),
      sensorUses: sensors.flatMap(priorUsesOf),
    };
  }
}

function worstStatus(items: readonly DueItem[]): DueStatus {
  return items.reduce<DueStatus>((w, i) => (STATUS_RANK[i.status] > STATUS_RANK[w] ? i.status : w), 'ok');
}

/** Worse status first; on equal status the earlier due date. */
function stricter(a: DueItem, b: DueItem): boolean {
  if (STATUS_RANK[a.status] !== STATUS_RANK[b.status]) return STATUS_RANK[a.status] > STATUS_RANK[b.status];
  if (a.dueDate && b.dueDate) return a.dueDate < b.dueDate;
  return a.dueDate !== null && b.dueDate === null;
}

// ---------------------------------------------------------------------------------------------
// Corrections
// ---------------------------------------------------------------------------------------------

type WithCalibrations<T> = T & { calibrations: Calibration[] };

function certificatesOf(rows: readonly Calibration[]): CertificateInForce[] {
  return rows
    .map((c) => ({ fromMs: c.calibratedAt.getTime(), points: calibrationPointsOf(c.points), method: (c.method === 'nearest' ? 'nearest' : 'linear') as CorrectionMethod }))
    .sort((a, b) => a.fromMs - b.fromMs);
}

function certificateAt(certs: readonly CertificateInForce[], tMs: number): CertificateInForce | null {
  let found: CertificateInForce | null = null;
  for (const c of certs) if (c.fromMs <= tMs) found = c;
  return found;
}

/**
 * Corrected copies of the channels. At each reading, the sensor and instrument serving the channel at
 * that time (installed, not retired) contribute the correction of their certificate in force then (the
 * newest calibration dated at or before the reading), looked up at the reading's own value: production
 * channels carry no setpoint per reading, and in steady state the reading is the setpoint's neighbour.
 * Outside the calibrated points a contribution is 0 (applyCalibrationCorrection never extrapolates).
 */
export function correctChannels(
  channels: readonly RecomputeChannel[],
  sensors: readonly WithCalibrations<Sensor>[],
  instruments: readonly WithCalibrations<Instrument>[],
): { channels: RecomputeChannel[]; corrections: ChannelCorrectionSummary[] } {
  const corrections: ChannelCorrectionSummary[] = [];
  const out = channels.map((channel) => {
    const serving = [
      ...sensors.filter((s) => s.channelId === channel.channelId).map((s) => ({ kind: 'sensor' as const, row: s, certs: certificatesOf(s.calibrations) })),
      ...instruments.filter((i) => i.channelId === channel.channelId).map((i) => ({ kind: 'instrument' as const, row: i, certs: certificatesOf(i.calibrations) })),
    ];
    if (serving.length === 0) return channel;
    const summary: ChannelCorrectionSummary = {
      channelId: channel.channelId,
      sensorIds: serving.filter((s) => s.kind === 'sensor').map((s) => s.row.id),
      instrumentIds: serving.filter((s) => s.kind === 'instrument').map((s) => s.row.id),
      samples: channel.samples.length,
      corrected: 0,
      outsideCalibratedRange: 0,
      withoutCertificate: 0,
      maxAbsCorrectionC: 0,
    };
    // Newest install first: two rows of one kind in service at once is a record error, and the newest serves.
    const byKind = (['sensor', 'instrument'] as const).map((kind) =>
      serving.filter((s) => s.kind === kind).sort((a, b) => b.row.installedAt.getTime() - a.row.installedAt.getTime()),
    );
    const samples = channel.samples.map((sample) => {
      let correctionC = 0;
      let applied = false;
      for (const candidates of byKind) {
        const server = candidates.find((s) => inServiceAt(s.row, sample.tMs));
        if (!server) continue;
        const cert = certificateAt(server.certs, sample.tMs);
        if (!cert || cert.points.length === 0) {
          summary.withoutCertificate += 1;
          continue;
        }
        const r = applyCalibrationCorrection(sample.valueC, cert.points, { method: cert.method });
        if (!r.applied) {
          summary.outsideCalibratedRange += 1;
          continue;
        }
        correctionC += r.correctionC;
        applied = true;
      }
      if (!applied) return sample;
      summary.corrected += 1;
      summary.maxAbsCorrectionC = Math.max(summary.maxAbsCorrectionC, Math.abs(correctionC));
      return { tMs: sample.tMs, valueC: sample.valueC + correctionC };
    });
    corrections.push(summary);
    return { ...channel, samples };
  });
  return { channels: out, corrections };
}

/** The metal of a thermocouple type, for screens ("base-metal K"). */
export function sensorMetalOf(thermocoupleType: string): string | null {
  return (THERMOCOUPLE_METAL as Record<string, string>)[thermocoupleType] ?? null;
}

export type { LimitUnit };
