import { computeDueItems, type CalibrationPoint, type CorrectionMethod, type PyrometryReference } from '@ausline/compliance';
import { calibrationPointsOf, PyrometryRepository, type Calibration, type Instrument, type Prisma, type Sensor } from '@ausline/db';
import type { DeviationChange } from '@ausline/db';
import type { LiveEventsPublisher } from '../stream/live-events.publisher.js';

/** Helpers shared by the pyrometry services. */

export type Tx = Prisma.TransactionClient;

const UUID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;

export function isUuid(text: string): boolean {
  return UUID.test(text);
}

export function findSensor(tx: Tx, ref: string): Promise<Sensor | null> {
  return isUuid(ref) ? tx.sensor.findUnique({ where: { id: ref } }) : tx.sensor.findUnique({ where: { serial: ref } });
}

export function findInstrument(tx: Tx, ref: string): Promise<Instrument | null> {
  return isUuid(ref) ? tx.instrument.findUnique({ where: { id: ref } }) : tx.instrument.findUnique({ where: { serial: ref } });
}

export interface CertificateUsed {
  calibrationId: string;
  certificateRef: string;
  calibratedAt: string;
  points: CalibrationPoint[];
  method: CorrectionMethod;
}

/** The certificate in force at `at`: the newest calibration dated at or before it. */
export async function certificateAt(tx: Tx, subject: { sensorId: string } | { instrumentId: string }, at: Date): Promise<CertificateUsed | null> {
  const row: Calibration | null = await tx.calibration.findFirst({
    where: { ...subject, calibratedAt: { lte: at } },
    orderBy: [{ calibratedAt: 'desc' }, { createdAt: 'desc' }],
  });
  if (!row) return null;
  return {
    calibrationId: row.id,
    certificateRef: row.certificateRef,
    calibratedAt: row.calibratedAt.toISOString(),
    points: calibrationPointsOf(row.points),
    method: row.method === 'nearest' ? 'nearest' : 'linear',
  };
}

/**
 * Whether the test sensors and test instrument were themselves within their calibration interval at
 * the time of the test. A test made with equipment whose own calibration had lapsed proves nothing, so
 * its verdict becomes 'invalid' with these reasons (a missing rule only adds a note).
 */
export async function testKitProblems(
  repository: PyrometryRepository,
  tx: Tx,
  kit: { sensors: Sensor[]; instruments: Instrument[] },
  at: Date,
  reference: PyrometryReference,
  timeZone: string,
): Promise<{ problems: string[]; notes: string[] }> {
  const history = await repository.kitHistory(kit.sensors, kit.instruments, tx);
  const items = computeDueItems(
    {
      equipmentId: 'test-kit',
      furnaceClass: 1,
      instrumentationType: 'A',
      tusRequired: false,
      sensors: kit.sensors.map((s) => ({
        sensorId: s.id,
        use: s.use as never,
        thermocoupleType: s.thermocoupleType as never,
        expendable: s.expendable,
        installedAt: s.installedAt,
        retiredAt: s.retiredAt,
        expiresOn: s.expiresOn,
      })),
      instruments: kit.instruments.map((i) => ({ instrumentId: i.id, use: i.use as never, retiredAt: i.retiredAt })),
    },
    history,
    at,
    reference,
    { timeZone },
  );
  const label = new Map<string, string>([...kit.sensors.map((s) => [s.id, `test sensor ${s.serial}`] as const), ...kit.instruments.map((i) => [i.id, `test instrument ${i.serial}`] as const)]);
  const problems: string[] = [];
  const notes: string[] = [];
  for (const item of items) {
    if (item.kind !== 'sensor-calibration' && item.kind !== 'instrument-calibration' && item.kind !== 'sensor-expiry') continue;
    const who = label.get(item.subjectId) ?? item.subjectId;
    if (item.status === 'overdue') problems.push(`${who} was not within its calibration at the time of the test: ${item.reason}`);
    else if (item.status === 'no-rule') notes.push(`${who}: calibration interval not known (${item.reason})`);
  }
  for (const s of kit.sensors) if (s.retiredAt && s.retiredAt.getTime() <= at.getTime()) problems.push(`test sensor ${s.serial} was retired at ${s.retiredAt.toISOString()}`);
  for (const i of kit.instruments) if (i.retiredAt && i.retiredAt.getTime() <= at.getTime()) problems.push(`test instrument ${i.serial} was retired at ${i.retiredAt.toISOString()}`);
  return { problems, notes };
}

/** JSON with sorted keys, for "is this the same request again" comparisons. */
export function canonicalJson(value: unknown): string {
  return JSON.stringify(sortKeys(value));
}

function sortKeys(value: unknown): unknown {
  if (value instanceof Date) return value.toISOString();
  if (Array.isArray(value)) return value.map(sortKeys);
  if (value && typeof value === 'object') {
    return Object.fromEntries(
      Object.entries(value as Record<string, unknown>)
        .filter(([, v]) => v !== undefined)
        .sort(([a], [b]) => (a < b ? -1 : 1))
        .map(([k, v]) => [k, sortKeys(v)]),
    );
  }
  return value;
}

/** Deviation changes go out as live events after the commit (best effort, like the rest of the API). */
export async function publishChanges(events: LiveEventsPublisher, changes: readonly DeviationChange[]): Promise<void> {
  const at = new Date().toISOString();
  for (const c of changes) {
    await events.publish({ type: 'deviation.changed', deviationId: c.deviationId, batchId: c.batchId, lineId: c.lineId, rule: c.rule, status: c.status, at });
  }
}

/** Prisma JSON input from a plain value (dates become ISO strings). */
export function json(value: unknown): Prisma.InputJsonValue {
  return JSON.parse(JSON.stringify(value)) as Prisma.InputJsonValue;
}
