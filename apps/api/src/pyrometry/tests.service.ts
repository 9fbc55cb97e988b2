import { Injectable } from '@nestjs/common';
import {
  applyCalibrationCorrection,
  judgeAccuracyTest,
  judgeUniformitySurvey,
  parseAccuracyTestCsv,
  parseUniformitySurveyCsv,
  PyrometryInputError,
  type AccuracyTestInput as JudgeAccuracyInput,
  type AccuracyTestResult,
  type CsvError,
  type LimitUnit,
  type UniformitySurveyResult,
} from '@ausline/compliance';
import { PyrometryRepository, type AccuracyTest, type Sensor, type DeviationChange, type EquipmentPyrometryState, type PrismaClient, type UniformitySurvey } from '@ausline/db';
import { ApiError, badRequest, conflict, notFound, unprocessable, type ErrorIssue } from '../http/errors.js';
import { InjectPrisma } from '../prisma.provider.js';
import { LiveEventsPublisher } from '../stream/live-events.publisher.js';
import type { AccuracyTestInput, UniformitySurveyInput } from './pyrometry.schemas.js';
import { canonicalJson, certificateAt, type CertificateUsed, findInstrument, findSensor, isUuid, json, publishChanges, testKitProblems, type Tx } from './lookups.js';
import { summarizeSuspect, type Outcome, type SuspectSummary } from './records.service.js';

const TEST_SENSOR_USES: ReadonlySet<string> = new Set(['sat-test', 'tus-test', 'primary-standard', 'secondary-standard']);

export interface AccuracyTestOutcome {
  outcome: Outcome;
  test: AccuracyTest;
  verdict: string;
  result: unknown;
  suspect: SuspectSummary | null;
}

export interface UniformitySurveyOutcome {
  outcome: Outcome;
  survey: UniformitySurvey;
  verdict: string;
  result: unknown;
  suspect: SuspectSummary | null;
}

/** CSV column of each JSON field of an accuracy test, for error paths rows.<row>.<column>. */
const ACCURACY_CSV_COLUMN: Record<string, string> = {
  equipment: 'equipment_id',
  sensor: 'sensor_id',
  testedAt: 'tested_at',
  setpointC: 'setpoint_c',
  instrumentReadingC: 'instrument_reading_c',
  testSensor: 'test_sensor_id',
  testSensorReadingC: 'test_reading_c',
  testInstrument: 'test_instrument_id',
  tipDistanceMm: 'tip_distance_mm',
};

/**
 * Accuracy tests and uniformity surveys: entered as JSON or uploaded as CSV, judged by libs/compliance
 * against the equipment's reference set with the certificates in force at the time of the test. A
 * failure opens the suspect-product look-back in the same transaction; a pass checks whether the test
 * had run overdue before it (a late pass). Re-posting the same test answers 200 "unchanged".
 */
@Injectable()
export class PyrometryTestsService {
  private readonly repository: PyrometryRepository;

  constructor(
    @InjectPrisma() private readonly prisma: PrismaClient,
    private readonly events: LiveEventsPublisher,
  ) {
    this.repository = new PyrometryRepository(prisma);
  }

  async recordAccuracyTest(equipmentId: string, input: AccuracyTestInput, actor: string): Promise<AccuracyTestOutcome> {
    const { result, changes } = await this.inTx(async (tx, changes) => {
      await requireEquipment(tx, equipmentId);
      return this.accuracyTest(tx, equipmentId, input, actor, changes);
    });
    await publishChanges(this.events, changes);
    return result;
  }

  /** A CSV of accuracy tests (one per row), all or nothing; rows are applied in order of test time. */
  async importAccuracyTests(text: string, actor: string): Promise<{ tests: Array<AccuracyTestOutcome & { row: number }> }> {
    const parsed = parseAccuracyTestCsv(text);
    if (!parsed.ok) throw csvRefusal(parsed.errors);
    const { result, changes } = await this.inTx(async (tx, changes) => {
      const issues: ErrorIssue[] = [];
      const out: Array<AccuracyTestOutcome & { row: number }> = [];
      const rows = [...parsed.value].sort((a, b) => a.testedAt.getTime() - b.testedAt.getTime() || a.row - b.row);
      for (const row of rows) {
        const equipment = isUuid(row.equipmentId)
          ? await tx.equipment.findUnique({ where: { id: row.equipmentId } })
          : await tx.equipment.findUnique({ where: { code: row.equipmentId } });
        if (!equipment) {
          issues.push({ path: `rows.${row.row}.equipment_id`, message: `row ${row.row}: no equipment ${JSON.stringify(row.equipmentId)}` });
          continue;
        }
        try {
          const input: AccuracyTestInput = {
            sensor: row.sensorId,
            testedAt: row.testedAt,
            setpointC: row.setpointC,
            instrumentReadingC: row.instrumentReadingC,
            testSensor: row.testSensorId,
            testSensorReadingC: row.testSensorReadingC,
            testInstrument: row.testInstrumentId,
            tipDistanceMm: row.tipDistanceMm,
          };
          out.push({ row: row.row, ...(await this.accuracyTest(tx, equipment.id, input, actor, changes)) });
        } catch (error) {
          if (!(error instanceof ApiError) || error.getStatus() >= 500) throw error;
          const mapped = error.issues.length > 0 ? error.issues : [{ path: 'body', message: error.message }];
          for (const issue of mapped) {
            const column = ACCURACY_CSV_COLUMN[issue.path.split('.')[0]!] ?? null;
            issues.push({ path: column ? `rows.${row.row}.${column}` : `rows.${row.row}`, message: `row ${row.row}: ${issue.message}` });
          }
        }
      }
      if (issues.length > 0) throw new ApiError(422, `Import refused, nothing stored: ${issues[0]!.message}${issues.length > 1 ? ` (and ${issues.length - 1} more)` : ''}`, issues);
      return { tests: out.sort((a, b) => a.row - b.row) };
    });
    await publishChanges(this.events, changes);
    return result;
  }

  async recordUniformitySurvey(equipmentId: string, input: UniformitySurveyInput, actor: string): Promise<UniformitySurveyOutcome> {
    const { result, changes } = await this.inTx(async (tx, changes) => {
      await requireEquipment(tx, equipmentId);
      return this.uniformitySurvey(tx, equipmentId, input, actor, changes);
    });
    await publishChanges(this.events, changes);
    return result;
  }

  /** One survey from a CSV of readings; the setpoint (and test instrument) come with the request. */
  async importUniformitySurvey(equipmentId: string, text: string, options: { setpointC: number; testInstrument?: string }, actor: string): Promise<UniformitySurveyOutcome> {
    const parsed = parseUniformitySurveyCsv(text);
    if (!parsed.ok) throw csvRefusal(parsed.errors);
    const csv = parsed.value;
    const input: UniformitySurveyInput = {
      setpointC: options.setpointC,
      testInstrument: options.testInstrument ?? null,
      locations: csv.locations.map((l) => ({ locationId: l.locationId, testSensor: l.testSensorId })),
      readings: csv.readings.map((r) => ({ locationId: r.locationId, at: r.at, readingC: r.readingC })),
    };
    try {
      return await this.recordUniformitySurvey(equipmentId, input, actor);
    } catch (error) {
      if (!(error instanceof ApiError) || error.issues.length === 0) throw error;
      // Point location problems at the row that introduced the location.
      const issues = error.issues.map((issue) => {
        const m = /^locations\.(\d+)\.(\w+)$/.exec(issue.path);
        const loc = m ? csv.locations[Number(m[1])] : undefined;
        if (!loc) return issue;
        return { path: `rows.${loc.firstRow}.${m![2] === 'testSensor' ? 'test_sensor_id' : 'location_id'}`, message: `row ${loc.firstRow}: ${issue.message}` };
      });
      throw new ApiError(error.getStatus(), error.message, issues);
    }
  }

  listAccuracyTests(equipmentId: string, limit: number): Promise<AccuracyTest[]> {
    return this.prisma.accuracyTest.findMany({ where: { equipmentId }, orderBy: [{ testedAt: 'desc' }, { id: 'desc' }], take: limit });
  }

  listUniformitySurveys(equipmentId: string, limit: number): Promise<UniformitySurvey[]> {
    return this.prisma.uniformitySurvey.findMany({ where: { equipmentId }, orderBy: [{ endedAt: 'desc' }, { id: 'desc' }], take: limit });
  }

  /** Runs the found-overdue look-back now, for one enrolled piece of equipment or all of them. */
  async sweep(equipmentId: string | undefined): Promise<{ at: Date; raised: Array<SuspectSummary & { equipmentId: string; itemKind: string; created: boolean }> }> {
    const at = new Date();
    const { result, changes } = await this.inTx(async (tx, changes) => {
      const records = await tx.equipmentRecord.findMany({ where: equipmentId ? { equipmentId } : {}, select: { equipmentId: true }, orderBy: { equipmentId: 'asc' } });
      if (equipmentId && records.length === 0) {
        if (!(await tx.equipment.findUnique({ where: { id: equipmentId } }))) throw notFound(`No equipment with id ${equipmentId}`);
        throw unprocessable(`Equipment ${equipmentId} has no pyrometry record`, [{ path: 'equipmentId', message: 'not enrolled' }]);
      }
      const raised = [];
      for (const r of records) {
        for (const x of await this.repository.sweepOverdue(r.equipmentId, at, tx)) {
          changes.push(...x.changes);
          raised.push({ ...summarizeSuspect(x)!, equipmentId: r.equipmentId, itemKind: x.trigger.itemKind, created: x.created });
        }
      }
      return { at, raised };
    });
    await publishChanges(this.events, changes);
    return result;
  }

  async suspectTriggers(equipmentId: string) {
    await requireEquipment(this.prisma as unknown as Tx, equipmentId);
    const triggers = await this.prisma.suspectTrigger.findMany({ where: { equipmentId }, orderBy: [{ at: 'desc' }, { id: 'desc' }], take: 200 });
    const deviations = await this.prisma.deviation.findMany({
      where: { rule: 'suspect-product', OR: triggers.map((t) => ({ dedupKey: { endsWith: `:suspect-product:${t.id}` } })) },
      select: { id: true, batchId: true, status: true, disposition: true, dedupKey: true, batch: { select: { code: true } } },
      orderBy: { dedupKey: 'asc' },
    });
    return triggers.map((t) => ({
      ...t,
      deviations: deviations
        .filter((d) => d.dedupKey.endsWith(`:suspect-product:${t.id}`))
        .map((d) => ({ deviationId: d.id, batchId: d.batchId, batchCode: d.batch?.code ?? null, status: d.status, disposition: d.disposition })),
    }));
  }

  // --- internals ---------------------------------------------------------------------------------

  private async inTx<T>(fn: (tx: Tx, changes: DeviationChange[]) => Promise<T>): Promise<{ result: T; changes: DeviationChange[] }> {
    const changes: DeviationChange[] = [];
    const result = await this.prisma.$transaction((tx) => fn(tx, changes), { timeout: 60_000, maxWait: 10_000 });
    return { result, changes };
  }

  private async enrolled(tx: Tx, equipmentId: string): Promise<EquipmentPyrometryState> {
    const state = await this.repository.equipmentState(equipmentId, tx);
    if (!state) {
      throw unprocessable(`Equipment ${equipmentId} has no pyrometry record; PUT /v1/equipment/${equipmentId}/pyrometry first`, [
        { path: 'equipment', message: 'not enrolled' },
      ]);
    }
    return state;
  }

  private async accuracyTest(tx: Tx, equipmentId: string, input: AccuracyTestInput, actor: string, changes: DeviationChange[]): Promise<AccuracyTestOutcome> {
    const state = await this.enrolled(tx, equipmentId);
    const sensor = await findSensor(tx, input.sensor);
    if (!sensor) throw unprocessable(`No sensor ${input.sensor}`, [{ path: 'sensor', message: 'unknown sensor (id or serial)' }]);
    if (sensor.equipmentId !== equipmentId) {
      throw unprocessable(`Sensor ${sensor.serial} is not on equipment ${state.equipment.code}`, [{ path: 'sensor', message: 'not on this equipment' }]);
    }
    if (TEST_SENSOR_USES.has(sensor.use)) throw unprocessable(`Sensor ${sensor.serial} is a test sensor, not a production sensor`, [{ path: 'sensor', message: `use is ${sensor.use}` }]);
    const testSensor = await findSensor(tx, input.testSensor);
    if (!testSensor) throw unprocessable(`No sensor ${input.testSensor}`, [{ path: 'testSensor', message: 'unknown sensor (id or serial)' }]);
    if (!TEST_SENSOR_USES.has(testSensor.use) || testSensor.channelId !== null) {
      // practice.md §1.1 [S12]: a production channel may not double as the test channel.
      throw unprocessable(`Sensor ${testSensor.serial} (${testSensor.use}) is not a test sensor`, [{ path: 'testSensor', message: 'a production sensor cannot test another' }]);
    }
    const testInstrument = input.testInstrument ? await findInstrument(tx, input.testInstrument) : null;
    if (input.testInstrument && !testInstrument) throw unprocessable(`No instrument ${input.testInstrument}`, [{ path: 'testInstrument', message: 'unknown instrument (id or serial)' }]);
    if (testInstrument && testInstrument.use !== 'field-test') {
      throw unprocessable(`Instrument ${testInstrument.serial} is a ${testInstrument.use} instrument, not a field test instrument`, [{ path: 'testInstrument', message: 'not a field test instrument' }]);
    }

    const at = input.testedAt;
    // Sequential: one transaction, one connection.
    const systemCert = await certificateAt(tx, { sensorId: sensor.id }, at);
    const testSensorCert = await certificateAt(tx, { sensorId: testSensor.id }, at);
    const testInstrumentCert = testInstrument ? await certificateAt(tx, { instrumentId: testInstrument.id }, at) : null;
    // The system's instrument (controller / recorder of the channel) adds its own production correction,
    // as the worker does when rules read the channel ([S13]: offsets used in production are included).
    const channelInstrument = sensor.channelId
      ? await tx.instrument.findFirst({ where: { channelId: sensor.channelId, installedAt: { lte: at }, OR: [{ retiredAt: null }, { retiredAt: { gt: at } }] }, orderBy: { installedAt: 'desc' } })
      : null;
    const channelInstrumentCert = channelInstrument ? await certificateAt(tx, { instrumentId: channelInstrument.id }, at) : null;
    const notes: string[] = [];
    let instrumentCorrectionC = 0;
    if (channelInstrumentCert) {
      const c = applyCalibrationCorrection(input.setpointC, channelInstrumentCert.points, { method: channelInstrumentCert.method });
      if (c.applied) instrumentCorrectionC = c.correctionC;
      else notes.push(`production correction of instrument ${channelInstrument!.serial} not applied: ${input.setpointC} °C is outside its calibrated range`);
    }
    for (const [who, cert] of [['system sensor', systemCert], ['test sensor', testSensorCert], ['test instrument', testInstrumentCert]] as const) {
      if (cert?.method === 'nearest') notes.push(`${who} certificate ${cert.certificateRef} states nearest-point corrections; the accuracy test interpolates linearly`);
    }

    const unit: LimitUnit = state.record.limitUnit === 'F' ? 'F' : 'C';
    const judgeInput: JudgeAccuracyInput = {
      equipmentId,
      sensorId: sensor.id,
      furnaceClass: state.pyrometryRecord.furnaceClass,
      instrumentationType: state.pyrometryRecord.instrumentationType,
      ...(state.pyrometryRecord.satMethod ? { satMethod: state.pyrometryRecord.satMethod } : {}),
      testedAt: at,
      setpointC: input.setpointC,
      instrumentReadingC: input.instrumentReadingC + instrumentCorrectionC,
      systemCalibration: systemCert?.points ?? [],
      testSensorId: testSensor.id,
      testSensorReadingC: input.testSensorReadingC,
      testSensorCalibration: testSensorCert?.points ?? [],
      ...(testInstrumentCert ? { testInstrumentCalibration: testInstrumentCert.points } : {}),
      tipDistanceMm: input.tipDistanceMm ?? null,
      limitUnit: unit,
    };
    let judged: AccuracyTestResult;
    try {
      judged = judgeAccuracyTest(judgeInput, state.reference);
    } catch (error) {
      if (error instanceof PyrometryInputError) throw badRequest(`Accuracy test cannot be judged: ${error.message}`, [{ path: error.path, message: error.problem }]);
      throw error;
    }
    const kit = await testKitProblems(this.repository, tx, { sensors: [testSensor], instruments: testInstrument ? [testInstrument] : [] }, at, state.reference, state.timeZone);
    const problems = [...judged.problems, ...kit.problems];
    const verdict = problems.length > 0 ? 'invalid' : judged.verdict;
    const result = { ...judged, verdict, passed: verdict === 'pass', problems, notes: [...judged.notes, ...notes, ...kit.notes], instrumentCorrectionC, referenceId: state.reference.id };

    const request = { ...input, sensor: sensor.id, testSensor: testSensor.id, testInstrument: testInstrument?.id ?? null };
    const existing = await tx.accuracyTest.findUnique({ where: { equipmentId_sensorId_testedAt: { equipmentId, sensorId: sensor.id, testedAt: at } } });
    if (existing) {
      if (canonicalJson((existing.input as { request?: unknown }).request) !== canonicalJson(request)) {
        throw conflict(`An accuracy test of sensor ${sensor.serial} at ${at.toISOString()} is already stored with other values`, [
          { path: 'testedAt', message: `test ${existing.id} already recorded at this instant` },
        ]);
      }
      return { outcome: 'unchanged', test: existing, verdict: existing.verdict, result: existing.result, suspect: null };
    }
    const test = await tx.accuracyTest.create({
      data: {
        equipmentId,
        sensorId: sensor.id,
        testSensorId: testSensor.id,
        testInstrumentId: testInstrument?.id ?? null,
        testedAt: at,
        setpointC: input.setpointC,
        instrumentReadingC: input.instrumentReadingC,
        testSensorReadingC: input.testSensorReadingC,
        tipDistanceMm: input.tipDistanceMm ?? null,
        input: json({
          request,
          judged: judgeInput,
          certificates: { system: systemCert, channelInstrument: channelInstrumentCert, testSensor: testSensorCert, testInstrument: testInstrumentCert },
        }),
        result: json(result),
        verdict,
        passed: verdict === 'pass',
        referenceId: state.reference.id,
        recordedBy: actor,
      },
    });

    let suspect = null;
    if (verdict === 'fail') {
      const limit = judged.limit!;
      suspect = await this.repository.raiseForFailure(
        {
          equipmentId,
          itemKind: 'sat',
          subjectId: sensor.id,
          at,
          sourceId: test.id,
          evidence: {
            summary: `accuracy test of sensor ${sensor.serial} failed at ${at.toISOString()}: difference ${signed(judged.differenceC)} °C, allowed ${limit.text} (${limit.key}${limit.confirmed ? '' : ', unconfirmed value'})`,
            testId: test.id,
            differenceC: judged.differenceC,
            limit,
          },
        },
        tx,
      );
      changes.push(...suspect.changes);
    }
    for (const raised of await this.repository.sweepOverdue(equipmentId, new Date(), tx, { passedAt: verdict === 'pass' ? [at] : [] })) {
      changes.push(...raised.changes);
    }
    return { outcome: 'created', test, verdict, result, suspect: summarizeSuspect(suspect) };
  }

  private async uniformitySurvey(tx: Tx, equipmentId: string, input: UniformitySurveyInput, actor: string, changes: DeviationChange[]): Promise<UniformitySurveyOutcome> {
    const state = await this.enrolled(tx, equipmentId);
    const startedAt = new Date(Math.min(...input.readings.map((r) => r.at.getTime())));
    const endedAt = new Date(Math.max(...input.readings.map((r) => r.at.getTime())));
    const testInstrument = input.testInstrument ? await findInstrument(tx, input.testInstrument) : null;
    if (input.testInstrument && !testInstrument) throw unprocessable(`No instrument ${input.testInstrument}`, [{ path: 'testInstrument', message: 'unknown instrument (id or serial)' }]);
    if (testInstrument && testInstrument.use !== 'field-test') {
      throw unprocessable(`Instrument ${testInstrument.serial} is not a field test instrument`, [{ path: 'testInstrument', message: 'not a field test instrument' }]);
    }
    const issues: ErrorIssue[] = [];
    const sensors: Array<Sensor | null> = [];
    for (const [i, loc] of input.locations.entries()) {
      const s = await findSensor(tx, loc.testSensor);
      if (!s) issues.push({ path: `locations.${i}.testSensor`, message: `unknown sensor ${JSON.stringify(loc.testSensor)} (id or serial)` });
      else if (!TEST_SENSOR_USES.has(s.use) || s.channelId !== null) issues.push({ path: `locations.${i}.testSensor`, message: `sensor ${s.serial} (${s.use}) is not a test sensor` });
      sensors.push(s);
    }
    if (issues.length > 0) throw unprocessable(`Survey refused: ${issues[0]!.path}: ${issues[0]!.message}`, issues);
    // The certificates in force when the survey began.
    const certs: Array<CertificateUsed | null> = [];
    for (const s of sensors) certs.push(await certificateAt(tx, { sensorId: s!.id }, startedAt));
    const instrumentCert = testInstrument ? await certificateAt(tx, { instrumentId: testInstrument.id }, startedAt) : null;
    const unit: LimitUnit = state.record.limitUnit === 'F' ? 'F' : 'C';
    const judgeInput = {
      equipmentId,
      furnaceClass: state.pyrometryRecord.furnaceClass,
      instrumentationType: state.pyrometryRecord.instrumentationType,
      setpointC: input.setpointC,
      locations: input.locations.map((l, i) => ({ locationId: l.locationId, testSensorId: sensors[i]!.id, calibration: certs[i]?.points ?? [] })),
      readings: input.readings,
      ...(instrumentCert ? { testInstrumentCalibration: instrumentCert.points } : {}),
      limitUnit: unit,
    };
    let judged: UniformitySurveyResult;
    try {
      judged = judgeUniformitySurvey(judgeInput, state.reference);
    } catch (error) {
      if (error instanceof PyrometryInputError) throw badRequest(`Survey cannot be judged: ${error.message}`, [{ path: error.path.replace(/\[(\d+)\]/g, '.$1'), message: error.problem }]);
      throw error;
    }
    const kit = await testKitProblems(
      this.repository,
      tx,
      { sensors: uniqueById(sensors.map((s) => s!)), instruments: testInstrument ? [testInstrument] : [] },
      startedAt,
      state.reference,
      state.timeZone,
    );
    const problems = [...judged.problems, ...kit.problems];
    const verdict = problems.length > 0 ? 'invalid' : judged.verdict;
    const result = { ...judged, verdict, passed: verdict === 'pass', problems, warnings: [...judged.warnings, ...kit.notes], referenceId: state.reference.id };

    const request = { ...input, testInstrument: testInstrument?.id ?? null, locations: input.locations.map((l, i) => ({ ...l, testSensor: sensors[i]!.id })) };
    const existing = await tx.uniformitySurvey.findUnique({ where: { equipmentId_setpointC_startedAt: { equipmentId, setpointC: input.setpointC, startedAt } } });
    if (existing) {
      if (canonicalJson((existing.input as { request?: unknown }).request) !== canonicalJson(request)) {
        throw conflict(`A survey of this equipment at ${input.setpointC} °C starting ${startedAt.toISOString()} is already stored with other readings`, [
          { path: 'readings', message: `survey ${existing.id} already recorded` },
        ]);
      }
      return { outcome: 'unchanged', survey: existing, verdict: existing.verdict, result: existing.result, suspect: null };
    }
    const survey = await tx.uniformitySurvey.create({
      data: {
        equipmentId,
        setpointC: input.setpointC,
        startedAt,
        endedAt,
        testInstrumentId: testInstrument?.id ?? null,
        input: json({ request, certificates: { locations: certs, testInstrument: instrumentCert }, furnaceClass: judgeInput.furnaceClass, instrumentationType: judgeInput.instrumentationType, limitUnit: unit }),
        result: json(result),
        verdict,
        passed: verdict === 'pass',
        referenceId: state.reference.id,
        recordedBy: actor,
      },
    });

    let suspect = null;
    if (verdict === 'fail') {
      const worst = judged.worst!;
      suspect = await this.repository.raiseForFailure(
        {
          equipmentId,
          itemKind: 'tus',
          subjectId: equipmentId,
          at: endedAt,
          sourceId: survey.id,
          evidence: {
            summary: `uniformity survey of ${state.equipment.code} at ${input.setpointC} °C failed (ended ${endedAt.toISOString()}): ${judged.failedReadings.length} reading(s) outside ${judged.tolerance!.text}, worst ${signed(worst.deviationC)} °C at location ${worst.locationId} (${judged.tolerance!.key}${judged.tolerance!.confirmed ? '' : ', unconfirmed value'})`,
            surveyId: survey.id,
            tolerance: judged.tolerance,
            worst,
            failedReadings: judged.failedReadings.length,
          },
        },
        tx,
      );
      changes.push(...suspect.changes);
    }
    for (const raised of await this.repository.sweepOverdue(equipmentId, new Date(), tx, { passedAt: verdict === 'pass' ? [endedAt] : [] })) changes.push(...raised.changes);
    return { outcome: 'created', survey, verdict, result, suspect: summarizeSuspect(suspect) };
  }
}

async function requireEquipment(tx: Tx, equipmentId: string): Promise<void> {
  if (!(await tx.equipment.findUnique({ where: { id: equipmentId }, select: { id: true } }))) throw notFound(`No equipment with id ${equipmentId}`);
}

function csvRefusal(errors: readonly CsvError[]): ApiError {
  const issues = errors.map((e) => ({
    path: e.row === 0 ? 'body' : e.column ? `rows.${e.row}.${e.column}` : `rows.${e.row}`,
    message: e.row === 0 ? e.message : `row ${e.row}${e.column ? `, column ${e.column}` : ''}: ${e.message}`,
  }));
  return badRequest(`Import refused, nothing stored: ${issues[0]!.message}${issues.length > 1 ? ` (and ${issues.length - 1} more)` : ''}`, issues);
}

function signed(n: number): string {
  const r = Math.round(n * 100) / 100;
  return `${r >= 0 ? '+' : ''}${r}`;
}

function uniqueById<T extends { id: string }>(rows: T[]): T[] {
  return [...new Map(rows.map((r) => [r.id, r])).values()];
}
