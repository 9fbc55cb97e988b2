import { z } from 'zod';
import { INSTRUMENTATION_TYPES, INSTRUMENT_USES, SAT_METHODS, SENSOR_USES, PYROMETRY_REFERENCES } from '@ausline/compliance';
import { CalibrationPointsJson, ReferenceOverlayJson } from '@ausline/db';

/**
 * Request bodies of the pyrometry endpoints (issue 8). Strict objects: a misspelt field is an error.
 * Pass or fail is never part of a request: the service computes it with libs/compliance.
 * Sensors, instruments and equipment are named by id or by serial / code, whichever the plant has at
 * hand (test sheets carry serials).
 */

const Instant = z.iso
  .datetime({ offset: true, error: 'expected an ISO 8601 date-time with offset (e.g. 2026-03-01T08:00:00Z)' })
  .transform((s) => new Date(s));
const Ref = z.string().trim().min(1, 'must not be empty').max(100, 'at most 100 characters');
const Serial = z
  .string()
  .trim()
  .min(1, 'must not be empty')
  .max(100, 'at most 100 characters')
  .regex(/^[A-Za-z0-9][A-Za-z0-9._\/-]*$/, "letters, digits, '.', '_', '/' or '-', starting with a letter or digit");
const TempC = z.number().min(-50, 'below -50 °C').max(1800, 'above 1800 °C');
const CalendarDate = z
  .string()
  .regex(/^\d{4}-\d{2}-\d{2}$/, 'expected YYYY-MM-DD')
  .refine((d) => !Number.isNaN(Date.parse(`${d}T00:00:00Z`)) && new Date(`${d}T00:00:00Z`).toISOString().startsWith(d), 'no such calendar date');

const STANDARDS = [...new Set(PYROMETRY_REFERENCES.map((r) => r.standard))] as [string, ...string[]];
const REVISIONS_TEXT = PYROMETRY_REFERENCES.map((r) => `${r.standard} ${r.revision}`).join(', ');

/** A standard and revision we hold reference data for. */
export const ReferenceChoice = z
  .strictObject({ standard: z.enum(STANDARDS), revision: z.string().trim().min(1).max(10) })
  .refine((r) => PYROMETRY_REFERENCES.some((x) => x.standard === r.standard && x.revision === r.revision), {
    path: ['revision'],
    message: `no reference data for that revision; available: ${REVISIONS_TEXT}`,
  });

export const EquipmentRecordInput = z
  .strictObject({
    furnaceClass: z.number().int().min(1).max(6),
    instrumentationType: z.enum(INSTRUMENTATION_TYPES as unknown as [string, ...string[]]),
    satMethod: z.enum(SAT_METHODS as unknown as [string, ...string[]]).nullable().optional(),
    standard: z.enum(STANDARDS),
    revision: z.string().trim().min(1).max(10),
    tusRequired: z.boolean(),
    customerOverlay: ReferenceOverlayJson.nullable().optional(),
    limitUnit: z.enum(['C', 'F']).optional(),
  })
  .refine((r) => PYROMETRY_REFERENCES.some((x) => x.standard === r.standard && x.revision === r.revision), {
    path: ['revision'],
    message: `no reference data for that revision; available: ${REVISIONS_TEXT}`,
  });
export type EquipmentRecordInput = z.infer<typeof EquipmentRecordInput>;

export const CalibrationInput = z.strictObject({
  certificateRef: Ref,
  calibratedAt: Instant,
  points: CalibrationPointsJson.refine((p) => p.length > 0, 'a certificate needs at least one point'),
  method: z.enum(['linear', 'nearest']).optional(),
  /** Only for test-kit sensors and instruments (attached to no equipment): the standard to judge against. */
  reference: ReferenceChoice.optional(),
});
export type CalibrationInput = z.infer<typeof CalibrationInput>;

export const SensorInput = z.strictObject({
  serial: Serial,
  equipmentId: z.uuid('expected a UUID').nullable().optional(),
  channelId: z.uuid('expected a UUID').nullable().optional(),
  use: z.enum(SENSOR_USES as unknown as [string, ...string[]]),
  thermocoupleType: z.enum(['B', 'E', 'J', 'K', 'N', 'R', 'S', 'T']),
  expendable: z.boolean().optional(),
  installedAt: Instant,
  priorUses: z.number().int().min(0).max(100_000).optional(),
  priorMaxTempC: TempC.nullable().optional(),
  expiresOn: CalendarDate.nullable().optional(),
  calibration: CalibrationInput.optional(),
});
export type SensorInput = z.infer<typeof SensorInput>;

export const InstrumentInput = z.strictObject({
  serial: Serial,
  equipmentId: z.uuid('expected a UUID').nullable().optional(),
  channelId: z.uuid('expected a UUID').nullable().optional(),
  use: z.enum(INSTRUMENT_USES as unknown as [string, ...string[]]),
  statedAccuracy: z.strictObject({ plusMinusC: z.number().positive(), pctOfReading: z.number().positive().nullable().optional() }).nullable().optional(),
  installedAt: Instant,
  calibration: CalibrationInput.optional(),
});
export type InstrumentInput = z.infer<typeof InstrumentInput>;

export const RetireInput = z.strictObject({ retiredAt: Instant });

export const AccuracyTestInput = z.strictObject({
  /** The production sensor whose measuring chain is tested: id or serial. */
  sensor: Ref,
  testedAt: Instant,
  setpointC: TempC,
  instrumentReadingC: TempC,
  /** The test sensor: id or serial. */
  testSensor: Ref,
  testSensorReadingC: TempC,
  /** The field test instrument, when its corrections are not already in the reading: id or serial. */
  testInstrument: Ref.nullable().optional(),
  tipDistanceMm: z.number().min(0).max(10_000).nullable().optional(),
});
export type AccuracyTestInput = z.infer<typeof AccuracyTestInput>;

export const UniformitySurveyInput = z
  .strictObject({
    setpointC: TempC,
    testInstrument: Ref.nullable().optional(),
    locations: z
      .array(z.strictObject({ locationId: z.string().trim().min(1).max(64), testSensor: Ref }))
      .min(1, 'a survey needs at least one location')
      .max(200),
    readings: z
      .array(z.strictObject({ locationId: z.string().trim().min(1).max(64), at: Instant, readingC: TempC }))
      .min(1, 'a survey needs readings')
      .max(100_000),
  })
  .superRefine((s, ctx) => {
    const seen = new Map<string, number>();
    s.locations.forEach((l, i) => {
      const first = seen.get(l.locationId);
      if (first !== undefined) ctx.addIssue({ code: 'custom', path: ['locations', i, 'locationId'], message: `duplicates locations.${first}` });
      else seen.set(l.locationId, i);
    });
    s.readings.forEach((r, i) => {
      if (!seen.has(r.locationId)) ctx.addIssue({ code: 'custom', path: ['readings', i, 'locationId'], message: `unknown location ${JSON.stringify(r.locationId)}` });
    });
  });
export type UniformitySurveyInput = z.infer<typeof UniformitySurveyInput>;

export const SurveyCsvQuery = z.strictObject({
  setpointC: z.coerce.number().min(-50).max(1800),
  testInstrument: Ref.optional(),
});

export const SweepInput = z.strictObject({ equipmentId: z.uuid('expected a UUID').optional() });

export const DueQuery = z.strictObject({
  at: Instant.optional(),
  dueSoonDays: z.coerce.number().int().min(0).max(365).optional(),
});

export const SensorListQuery = z.strictObject({
  equipmentId: z.uuid('expected a UUID').optional(),
  testKit: z.enum(['true', 'false']).optional(),
});

export const ReferenceQuery = z.strictObject({
  standard: z.enum(STANDARDS).optional(),
  revision: z.string().trim().min(1).max(10).optional(),
  unconfirmedOnly: z.enum(['true', 'false']).optional(),
});
