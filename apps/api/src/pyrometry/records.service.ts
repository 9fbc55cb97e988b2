import { Injectable } from '@nestjs/common';
import {
  findPyrometryReference,
  isEquipmentCompliantAt,
  judgeInstrumentCalibration,
  judgeSensorCalibration,
  listReferenceValues,
  PYROMETRY_REFERENCES,
  type CalibrationCheck,
  type InstrumentUse,
  type LimitUnit,
  type PyrometryReference,
  type SensorUse,
} from '@ausline/compliance';
import {
  Prisma,
  PyrometryRepository,
  resolveReference,
  type Calibration,
  type DeviationChange,
  type EquipmentRecord,
  type Instrument,
  type PrismaClient,
  type Sensor,
  type SuspectRaise,
} from '@ausline/db';
import { badRequest, conflict, notFound, unprocessable, type ErrorIssue } from '../http/errors.js';
import { InjectPrisma } from '../prisma.provider.js';
import { LiveEventsPublisher } from '../stream/live-events.publisher.js';
import type { CalibrationInput, EquipmentRecordInput, InstrumentInput, SensorInput } from './pyrometry.schemas.js';
import { canonicalJson, json, publishChanges, type Tx } from './lookups.js';

/** Sensors that test others; they never serve a production channel (practice.md §1.1 [S12]). */
const TEST_SENSOR_USES: ReadonlySet<string> = new Set(['sat-test', 'tus-test', 'primary-standard', 'secondary-standard']);

export type Outcome = 'created' | 'updated' | 'unchanged';

export interface ReferenceSummary {
  id: string;
  standard: string;
  revision: string;
  title: string;
  overlays: readonly string[];
  /** How many values of the set are not confirmed for this revision (to check against the plant's copy). */
  unconfirmedValues: number;
}

export interface CalibrationOutcome {
  outcome: Outcome;
  calibration: Calibration;
  check: CalibrationCheck;
  suspect: SuspectSummary | null;
}

export interface SuspectSummary {
  triggerId: string;
  kind: string;
  window: { afterExclusive: string | null; untilInclusive: string };
  batches: Array<{ batchId: string; startedAt: string; endedAt: string | null }>;
}

export function summarizeReference(reference: PyrometryReference): ReferenceSummary {
  return {
    id: reference.id,
    standard: reference.standard,
    revision: reference.revision,
    title: reference.title,
    overlays: reference.overlays,
    unconfirmedValues: listReferenceValues(reference).filter((v) => !v.confirmed).length,
  };
}

export function summarizeSuspect(raise: SuspectRaise | null): SuspectSummary | null {
  if (!raise) return null;
  return {
    triggerId: raise.trigger.id,
    kind: raise.trigger.kind,
    window: { afterExclusive: raise.trigger.lastPassAt?.toISOString() ?? null, untilInclusive: raise.trigger.at.toISOString() },
    batches: raise.batches.map((b) => ({ batchId: b.batchId, startedAt: b.startedAt.toISOString(), endedAt: b.endedAt?.toISOString() ?? null })),
  };
}

/**
 * Pyrometry records: the record of each furnace and bath, sensors, instruments and their calibration
 * certificates (judged here against the reference set, never typed in as pass or fail). Every write is
 * retry-safe: the same record again answers 200 "unchanged", a different one under the same key 409.
 */
@Injectable()
export class PyrometryRecordsService {
  readonly repository: PyrometryRepository;

  constructor(
    @InjectPrisma() private readonly prisma: PrismaClient,
    private readonly events: LiveEventsPublisher,
  ) {
    this.repository = new PyrometryRepository(prisma);
  }

  // --- equipment records ---------------------------------------------------------------------

  async putEquipmentRecord(equipmentId: string, input: EquipmentRecordInput): Promise<{ outcome: Outcome; record: EquipmentRecord; reference: ReferenceSummary }> {
    const equipment = await this.prisma.equipment.findUnique({ where: { id: equipmentId } });
    if (!equipment) throw notFound(`No equipment with id ${equipmentId}`);
    const data = {
      furnaceClass: input.furnaceClass,
      instrumentationType: input.instrumentationType,
      satMethod: input.satMethod ?? null,
      standard: input.standard,
      revision: input.revision,
      tusRequired: input.tusRequired,
      customerOverlay: input.customerOverlay ?? null,
      limitUnit: input.limitUnit ?? 'C',
    };
    const resolved = resolveReference(data);
    if (!resolved.ok) {
      throw badRequest(`Customer overlay refused, nothing stored: ${resolved.errors[0]!.path}: ${resolved.errors[0]!.message}`, resolved.errors);
    }
    const { outcome, record } = await this.prisma.$transaction(async (tx) => {
      await tx.$executeRaw`SELECT pg_advisory_xact_lock(hashtextextended(${`ausline:pyrometry-record:${equipmentId}`}, 0))`;
      const existing = await tx.equipmentRecord.findUnique({ where: { equipmentId } });
      const row = { ...data, customerOverlay: data.customerOverlay === null ? Prisma.DbNull : json(data.customerOverlay) };
      if (!existing) return { outcome: 'created' as const, record: await tx.equipmentRecord.create({ data: { equipmentId, ...row } }) };
      const same = canonicalJson(pick(existing, Object.keys(data))) === canonicalJson(data);
      if (same) return { outcome: 'unchanged' as const, record: existing };
      return { outcome: 'updated' as const, record: await tx.equipmentRecord.update({ where: { equipmentId }, data: row }) };
    });
    return { outcome, record, reference: summarizeReference(resolved.reference) };
  }

  // --- sensors ---------------------------------------------------------------------------------

  async createSensor(input: SensorInput, actor: string): Promise<{ outcome: Outcome; sensor: Sensor; calibration: CalibrationOutcome | null }> {
    const { result, changes } = await this.inTx(async (tx, changes) => {
      const fields = {
        serial: input.serial,
        equipmentId: input.equipmentId ?? null,
        channelId: input.channelId ?? null,
        use: input.use,
        thermocoupleType: input.thermocoupleType,
        expendable: input.expendable ?? false,
        installedAt: input.installedAt,
        priorUses: input.priorUses ?? 0,
        priorMaxTempC: input.priorMaxTempC ?? null,
        expiresOn: input.expiresOn ?? null,
      };
      const existing = await tx.sensor.findUnique({ where: { serial: input.serial } });
      let sensor: Sensor;
      let outcome: Outcome;
      if (existing) {
        refuseIfDifferent('Sensor', `serial ${input.serial}`, existing, fields);
        sensor = existing;
        outcome = 'unchanged';
      } else {
        await this.checkPlacement(tx, 'sensor', fields, { testUse: TEST_SENSOR_USES.has(input.use) });
        sensor = await tx.sensor.create({ data: fields });
        outcome = 'created';
      }
      const calibration = input.calibration ? await this.addCalibration(tx, { kind: 'sensor', row: sensor }, input.calibration, actor, changes, 'calibration.') : null;
      if (calibration && calibration.outcome !== 'unchanged' && outcome === 'unchanged') outcome = 'updated';
      return { outcome, sensor: await tx.sensor.findUniqueOrThrow({ where: { id: sensor.id } }), calibration };
    });
    await publishChanges(this.events, changes);
    return result;
  }

  async addSensorCalibration(sensorId: string, input: CalibrationInput, actor: string): Promise<CalibrationOutcome> {
    const { result, changes } = await this.inTx(async (tx, changes) => {
      const sensor = await tx.sensor.findUnique({ where: { id: sensorId } });
      if (!sensor) throw notFound(`No sensor with id ${sensorId}`);
      return this.addCalibration(tx, { kind: 'sensor', row: sensor }, input, actor, changes, '');
    });
    await publishChanges(this.events, changes);
    return result;
  }

  async retireSensor(sensorId: string, retiredAt: Date): Promise<{ outcome: Outcome; sensor: Sensor }> {
    return this.prisma.$transaction(async (tx) => {
      const sensor = await tx.sensor.findUnique({ where: { id: sensorId } });
      if (!sensor) throw notFound(`No sensor with id ${sensorId}`);
      return { ...(await retire(tx, 'sensor', sensor, retiredAt)), sensor: (await tx.sensor.findUniqueOrThrow({ where: { id: sensorId } })) };
    });
  }

  async listSensors(filter: { equipmentId?: string; testKit?: boolean }) {
    const sensors = await this.prisma.sensor.findMany({
      where: { ...(filter.equipmentId ? { equipmentId: filter.equipmentId } : {}), ...(filter.testKit ? { equipmentId: null } : {}) },
      orderBy: { serial: 'asc' },
      include: { _count: { select: { uses: true } } },
    });
    return sensors.map(({ _count, ...s }) => ({ ...s, usesSoFar: s.priorUses + _count.uses }));
  }

  async getSensor(id: string) {
    const sensor = await this.prisma.sensor.findUnique({
      where: { id },
      include: { calibrations: { orderBy: { calibratedAt: 'desc' } }, _count: { select: { uses: true } } },
    });
    if (!sensor) throw notFound(`No sensor with id ${id}`);
    const { _count, ...rest } = sensor;
    return { ...rest, usesSoFar: rest.priorUses + _count.uses };
  }

  // --- instruments -----------------------------------------------------------------------------

  async createInstrument(input: InstrumentInput, actor: string): Promise<{ outcome: Outcome; instrument: Instrument; calibration: CalibrationOutcome | null }> {
    const { result, changes } = await this.inTx(async (tx, changes) => {
      const fields = {
        serial: input.serial,
        equipmentId: input.equipmentId ?? null,
        channelId: input.channelId ?? null,
        use: input.use,
        statedAccuracy: input.statedAccuracy ?? null,
        installedAt: input.installedAt,
      };
      const existing = await tx.instrument.findUnique({ where: { serial: input.serial } });
      let instrument: Instrument;
      let outcome: Outcome;
      if (existing) {
        refuseIfDifferent('Instrument', `serial ${input.serial}`, existing, fields);
        instrument = existing;
        outcome = 'unchanged';
      } else {
        await this.checkPlacement(tx, 'instrument', fields, { testUse: input.use === 'field-test' });
        instrument = await tx.instrument.create({ data: { ...fields, statedAccuracy: fields.statedAccuracy === null ? undefined : json(fields.statedAccuracy) } });
        outcome = 'created';
      }
      const calibration = input.calibration
        ? await this.addCalibration(tx, { kind: 'instrument', row: instrument }, input.calibration, actor, changes, 'calibration.')
        : null;
      if (calibration && calibration.outcome !== 'unchanged' && outcome === 'unchanged') outcome = 'updated';
      return { outcome, instrument: await tx.instrument.findUniqueOrThrow({ where: { id: instrument.id } }), calibration };
    });
    await publishChanges(this.events, changes);
    return result;
  }

  async addInstrumentCalibration(instrumentId: string, input: CalibrationInput, actor: string): Promise<CalibrationOutcome> {
    const { result, changes } = await this.inTx(async (tx, changes) => {
      const instrument = await tx.instrument.findUnique({ where: { id: instrumentId } });
      if (!instrument) throw notFound(`No instrument with id ${instrumentId}`);
      return this.addCalibration(tx, { kind: 'instrument', row: instrument }, input, actor, changes, '');
    });
    await publishChanges(this.events, changes);
    return result;
  }

  async retireInstrument(instrumentId: string, retiredAt: Date): Promise<{ outcome: Outcome; instrument: Instrument }> {
    return this.prisma.$transaction(async (tx) => {
      const instrument = await tx.instrument.findUnique({ where: { id: instrumentId } });
      if (!instrument) throw notFound(`No instrument with id ${instrumentId}`);
      return { ...(await retire(tx, 'instrument', instrument, retiredAt)), instrument: await tx.instrument.findUniqueOrThrow({ where: { id: instrumentId } }) };
    });
  }

  listInstruments(filter: { equipmentId?: string; testKit?: boolean }): Promise<Instrument[]> {
    return this.prisma.instrument.findMany({
      where: { ...(filter.equipmentId ? { equipmentId: filter.equipmentId } : {}), ...(filter.testKit ? { equipmentId: null } : {}) },
      orderBy: { serial: 'asc' },
    });
  }

  // --- status, due list, references --------------------------------------------------------------

  async equipmentStatus(equipmentId: string, at: Date) {
    const equipment = await this.prisma.equipment.findUnique({ where: { id: equipmentId } });
    if (!equipment) throw notFound(`No equipment with id ${equipmentId}`);
    const state = await this.repository.equipmentState(equipmentId);
    if (!state) return { enrolled: false as const, equipment, at };
    const compliance = isEquipmentCompliantAt(state.pyrometryRecord, state.history, at, state.reference, { timeZone: state.timeZone });
    const [useCounts, accuracyTests, surveys, triggers] = await Promise.all([
      this.prisma.sensorUse.groupBy({ by: ['sensorId'], where: { sensorId: { in: state.sensors.map((s) => s.id) } }, _count: { _all: true } }),
      this.prisma.accuracyTest.findMany({ where: { equipmentId }, orderBy: { testedAt: 'desc' }, take: 20 }),
      this.prisma.uniformitySurvey.findMany({ where: { equipmentId }, orderBy: { endedAt: 'desc' }, take: 20 }),
      this.prisma.suspectTrigger.findMany({ where: { equipmentId }, orderBy: { at: 'desc' }, take: 20 }),
    ]);
    const uses = new Map(useCounts.map((u) => [u.sensorId, u._count._all]));
    return {
      enrolled: true as const,
      equipment,
      at,
      timeZone: state.timeZone,
      record: state.record,
      reference: summarizeReference(state.reference),
      compliant: compliance.compliant,
      findings: compliance.findings,
      dueItems: compliance.items,
      sensors: state.sensors.map((s) => ({ ...s, usesSoFar: s.priorUses + (uses.get(s.id) ?? 0) })),
      instruments: state.instruments,
      recentAccuracyTests: accuracyTests,
      recentUniformitySurveys: surveys,
      suspectTriggers: triggers,
    };
  }

  async lineDueList(lineId: string, at: Date, dueSoonDays?: number) {
    const list = await this.repository.lineDueList(lineId, at, dueSoonDays === undefined ? {} : { dueSoonDays });
    if (!list) throw notFound(`No line with id ${lineId}`);
    return list;
  }

  references(filter: { standard?: string; revision?: string; unconfirmedOnly?: boolean }) {
    return PYROMETRY_REFERENCES.filter((r) => (!filter.standard || r.standard === filter.standard) && (!filter.revision || r.revision === filter.revision)).map((r) => ({
      ...summarizeReference(r),
      values: listReferenceValues(r).filter((v) => !filter.unconfirmedOnly || !v.confirmed),
    }));
  }

  // --- internals ---------------------------------------------------------------------------------

  /** Runs fn in one transaction; deviation changes collected by fn are published after the commit. */
  private async inTx<T>(fn: (tx: Tx, changes: DeviationChange[]) => Promise<T>): Promise<{ result: T; changes: DeviationChange[] }> {
    const changes: DeviationChange[] = [];
    const result = await this.prisma.$transaction((tx) => fn(tx, changes), { timeout: 30_000, maxWait: 10_000 });
    return { result, changes };
  }

  /** Equipment and channel exist, belong together, and the channel is not already served. */
  private async checkPlacement(
    tx: Tx,
    kind: 'sensor' | 'instrument',
    fields: { equipmentId: string | null; channelId: string | null; installedAt: Date },
    options: { testUse: boolean },
  ): Promise<void> {
    if (fields.channelId && !fields.equipmentId) throw badRequest('A channel needs its equipment', [{ path: 'equipmentId', message: 'required with channelId' }]);
    if (fields.equipmentId && !(await tx.equipment.findUnique({ where: { id: fields.equipmentId } }))) {
      throw unprocessable(`No equipment with id ${fields.equipmentId}`, [{ path: 'equipmentId', message: 'unknown equipment' }]);
    }
    if (!fields.channelId) return;
    if (options.testUse) {
      throw unprocessable(`A test ${kind} serves no production channel: a channel used for production may not also be the test channel`, [
        { path: 'channelId', message: `not allowed for a test ${kind}` },
      ]);
    }
    const channel = await tx.channel.findUnique({ where: { id: fields.channelId } });
    if (!channel || channel.equipmentId !== fields.equipmentId) {
      throw unprocessable(`Channel ${fields.channelId} is not a channel of equipment ${fields.equipmentId}`, [{ path: 'channelId', message: 'not on this equipment' }]);
    }
    if (channel.quantity !== 'TEMPERATURE_C') {
      throw unprocessable(`Channel ${channel.code} measures ${channel.quantity}, not a temperature`, [{ path: 'channelId', message: 'not a temperature channel' }]);
    }
    const where = { channelId: fields.channelId, OR: [{ retiredAt: null }, { retiredAt: { gt: fields.installedAt } }] };
    const serving = kind === 'sensor' ? await tx.sensor.findFirst({ where }) : await tx.instrument.findFirst({ where });
    if (serving) {
      throw conflict(`Channel ${channel.code} is already served by ${kind} ${serving.serial}; retire it first (POST .../${serving.id}/retire)`, [
        { path: 'channelId', message: `served by ${serving.serial}` },
      ]);
    }
  }

  /**
   * Stores one certificate, judged against the accuracy limit for the subject's use in the reference
   * set of its equipment (or the one named, for the test kit). A failed one opens the suspect-product
   * look-back of its equipment; a passing one checks whether the item had run overdue before it.
   */
  private async addCalibration(
    tx: Tx,
    subject: { kind: 'sensor'; row: Sensor } | { kind: 'instrument'; row: Instrument },
    input: CalibrationInput,
    actor: string,
    changes: DeviationChange[],
    pathPrefix: string,
  ): Promise<CalibrationOutcome> {
    const { row } = subject;
    const record = row.equipmentId ? await tx.equipmentRecord.findUnique({ where: { equipmentId: row.equipmentId } }) : null;
    let reference: PyrometryReference;
    let unit: LimitUnit = 'C';
    if (input.reference) {
      const named = findPyrometryReference(input.reference.standard as PyrometryReference['standard'], input.reference.revision)!;
      if (record) {
        throw badRequest(`The ${subject.kind} belongs to enrolled equipment and is judged by its record (${record.standard} ${record.revision}); leave out reference`, [
          { path: `${pathPrefix}reference`, message: 'not allowed for a subject on enrolled equipment' },
        ]);
      }
      reference = named;
    } else if (record) {
      const resolved = resolveReference(record);
      if (!resolved.ok) throw new Error(`stored pyrometry record of ${record.equipmentId} does not resolve`);
      reference = resolved.reference;
      unit = record.limitUnit === 'F' ? 'F' : 'C';
    } else {
      throw badRequest(`Name the standard to judge this certificate against: the ${subject.kind} is on no equipment with a pyrometry record`, [
        { path: `${pathPrefix}reference`, message: 'required for a subject without an enrolled equipment' },
      ]);
    }

    const check =
      subject.kind === 'sensor'
        ? judgeSensorCalibration(subject.row.use as SensorUse, input.points, reference, unit)
        : judgeInstrumentCalibration(subject.row.use as InstrumentUse, input.points, reference, unit);
    if (check.verdict === 'invalid') {
      // A certificate nobody can judge would either pass unjudged or fail for want of a rule; refuse it.
      throw unprocessable(`Certificate cannot be judged: ${check.problems.join('; ')}`, [
        { path: `${pathPrefix}points`, message: `no accuracy limit in ${check.limitKey}; add it to the equipment's customer overlay first` },
      ]);
    }

    const subjectKey = subject.kind === 'sensor' ? { sensorId: row.id } : { instrumentId: row.id };
    const method = input.method ?? 'linear';
    const existing = await tx.calibration.findFirst({ where: { ...subjectKey, certificateRef: input.certificateRef } });
    if (existing) {
      const issues: ErrorIssue[] = [];
      if (existing.calibratedAt.getTime() !== input.calibratedAt.getTime()) issues.push({ path: `${pathPrefix}calibratedAt`, message: `stored ${existing.calibratedAt.toISOString()}` });
      if (canonicalJson(existing.points) !== canonicalJson(input.points)) issues.push({ path: `${pathPrefix}points`, message: 'differ from the stored certificate' });
      if (existing.method !== method) issues.push({ path: `${pathPrefix}method`, message: `stored ${existing.method}` });
      if (issues.length > 0) throw conflict(`Certificate ${input.certificateRef} is already stored for this ${subject.kind} with other values; a new certificate needs a new reference`, issues);
      return { outcome: 'unchanged', calibration: existing, check: existing.result as unknown as CalibrationCheck, suspect: null };
    }
    const calibration = await tx.calibration.create({
      data: {
        ...subjectKey,
        certificateRef: input.certificateRef,
        calibratedAt: input.calibratedAt,
        points: json(input.points),
        method,
        result: json(check),
        passed: check.passed,
        referenceId: reference.id,
        recordedBy: actor,
      },
    });
    // The subject carries the newest certificate for quick reading; the history stays in Calibration.
    if (!row.calibratedAt || row.calibratedAt.getTime() <= input.calibratedAt.getTime()) {
      const mirror = { calibrationCertificateRef: input.certificateRef, calibrationPoints: json(input.points), calibratedAt: input.calibratedAt, correctionMethod: method };
      if (subject.kind === 'sensor') await tx.sensor.update({ where: { id: row.id }, data: mirror });
      else await tx.instrument.update({ where: { id: row.id }, data: mirror });
    }

    let suspect: SuspectRaise | null = null;
    if (record) {
      const itemKind = subject.kind === 'sensor' ? ('sensor-calibration' as const) : ('instrument-calibration' as const);
      if (!check.passed) {
        const failing = check.points.filter((p) => !p.passed).map((p) => `${p.errorC >= 0 ? '+' : ''}${p.errorC} °C at ${p.atC} °C (limit ±${Math.round(p.bandC * 100) / 100})`);
        suspect = await this.repository.raiseForFailure(
          {
            equipmentId: record.equipmentId,
            itemKind,
            subjectId: row.id,
            at: input.calibratedAt,
            sourceId: calibration.id,
            evidence: {
              summary: `calibration of ${subject.kind} ${row.serial} failed (certificate ${input.certificateRef}, ${input.calibratedAt.toISOString()}): ${failing.join(', ')}`,
              calibrationId: calibration.id,
              certificateRef: input.certificateRef,
              limitKey: check.limitKey,
            },
          },
          tx,
        );
        changes.push(...suspect.changes);
      }
      for (const raised of await this.repository.sweepOverdue(record.equipmentId, new Date(), tx, { passedAt: check.passed ? [input.calibratedAt] : [] })) changes.push(...raised.changes);
    }
    return { outcome: 'created', calibration, check, suspect: summarizeSuspect(suspect) };
  }
}

async function retire(tx: Tx, kind: 'sensor' | 'instrument', row: Sensor | Instrument, retiredAt: Date): Promise<{ outcome: Outcome }> {
  if (row.retiredAt) {
    if (row.retiredAt.getTime() === retiredAt.getTime()) return { outcome: 'unchanged' };
    throw conflict(`${kind} ${row.serial} was already retired at ${row.retiredAt.toISOString()}`, [{ path: 'retiredAt', message: `stored ${row.retiredAt.toISOString()}` }]);
  }
  if (retiredAt.getTime() < row.installedAt.getTime()) {
    throw badRequest(`A ${kind} cannot be retired before it was installed (${row.installedAt.toISOString()})`, [{ path: 'retiredAt', message: 'before installedAt' }]);
  }
  if (kind === 'sensor') await tx.sensor.update({ where: { id: row.id }, data: { retiredAt } });
  else await tx.instrument.update({ where: { id: row.id }, data: { retiredAt } });
  return { outcome: 'updated' };
}

function pick(row: object, keys: readonly string[]): Record<string, unknown> {
  return Object.fromEntries(keys.map((k) => [k, (row as Record<string, unknown>)[k]]));
}

/** A create retried with the same key must carry the same values; otherwise 409 naming each field. */
function refuseIfDifferent(what: string, key: string, stored: object, sent: Record<string, unknown>): void {
  const issues: ErrorIssue[] = [];
  for (const [field, value] of Object.entries(sent)) {
    const old = (stored as Record<string, unknown>)[field];
    if (canonicalJson(old ?? null) !== canonicalJson(value ?? null)) issues.push({ path: field, message: `stored ${canonicalJson(old ?? null)}, sent ${canonicalJson(value ?? null)}` });
  }
  if (issues.length > 0) throw conflict(`${what} with ${key} already exists with other values`, issues);
}
