/**
 * schema.prisma and the SQL migrations must describe the same database (the Prisma CLI that would
 * diff them cannot run here). Two independent checks on a freshly migrated database:
 * 1. every model is written (every scalar field set, optional ones too) and read back through the
 *    generated client, and must come back equal;
 * 2. the columns, types, nullability, defaults, indexes and foreign keys that schema.prisma declares are
 *    exactly the ones in Postgres (read from the catalog), under Prisma's naming rules.
 */
import { readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { Prisma, type PrismaClient } from '@ausline/db';
import { createTestDatabase } from '../support/database.js';

const db = await createTestDatabase();
const prisma: PrismaClient = db.prisma;
const SCHEMA = readFileSync(fileURLToPath(new URL('../../prisma/schema.prisma', import.meta.url)), 'utf8');

const t = (iso: string) => new Date(iso);

describe('every model round-trips through the generated client', () => {
  const written = new Map<string, Record<string, unknown>>();
  const readBack = new Map<string, Record<string, unknown>>();
  const record = (model: string, created: object, found: object) => {
    written.set(model, created as Record<string, unknown>);
    readBack.set(model, found as Record<string, unknown>);
  };

  it('writes and reads back a full plant graph', async () => {
    const user = await prisma.user.create({
      data: { email: 'q@plant.example', displayName: 'Q. Inspector', passwordHash: 'scrypt$x', roles: ['QUALITY', 'METALLURGIST'], active: false },
    });
    record('User', user, await prisma.user.findUniqueOrThrow({ where: { email: 'q@plant.example' } }));

    const session = await prisma.session.create({
      data: { userId: user.id, tokenHash: 'a'.repeat(64), expiresAt: t('2026-12-02T06:00:00.123Z') },
    });
    record('Session', session, await prisma.session.findUniqueOrThrow({ where: { tokenHash: 'a'.repeat(64) } }));

    const line = await prisma.line.create({
      data: { code: 'L1', name: 'Line 1', timeZone: 'Europe/Berlin', hCoefficientByAgitation: { none: 900, mild: 1300.5 } },
    });
    record('Line', line, await prisma.line.findUniqueOrThrow({ where: { code: 'L1' } }));

    const furnace = await prisma.equipment.create({ data: { lineId: line.id, kind: 'FURNACE', code: 'F1', name: 'Furnace 1' } });
    const bath = await prisma.equipment.create({ data: { lineId: line.id, kind: 'BATH', code: 'B1', name: 'Salt bath 1' } });
    record('Equipment', bath, await prisma.equipment.findUniqueOrThrow({ where: { code: 'B1' } }));

    const channel = await prisma.channel.create({
      data: { equipmentId: bath.id, code: 'tc1', quantity: 'TEMPERATURE_C', role: 'BATH_TC' },
    });
    record(
      'Channel',
      channel,
      await prisma.channel.findUniqueOrThrow({ where: { equipmentId_code: { equipmentId: bath.id, code: 'tc1' } } }),
    );

    const sample = await prisma.sample.create({ data: { channelId: channel.id, t: t('2026-12-01T10:00:00.125Z'), value: 371.25 } });
    record(
      'Sample',
      sample,
      await prisma.sample.findUniqueOrThrow({ where: { channelId_t: { channelId: channel.id, t: t('2026-12-01T10:00:00.125Z') } } }),
    );

    const heat = await prisma.heat.create({
      data: {
        heatNumber: 'H-1001',
        material: 'STEEL',
        grade: '100CrMnSi6-4',
        chemistryWtPct: { C: 0.98, Si: 1.45, Mn: 1.05, Cr: 1.5 },
        source: 'mill-certificate',
        revision: 2,
      },
    });
    record('Heat', heat, await prisma.heat.findUniqueOrThrow({ where: { heatNumber: 'H-1001' } }));

    const heatRevision = await prisma.heatRevision.create({
      data: {
        heatId: heat.id,
        revision: 2,
        material: 'STEEL',
        grade: '100CrMnSi6-4',
        chemistryWtPct: { C: 0.98, Si: 1.45 },
        source: 'lab',
        changedBy: 'user:q@plant.example',
        changedAt: t('2026-12-01T09:00:00.001Z'),
        reason: 'lab re-analysis',
      },
    });
    record(
      'HeatRevision',
      heatRevision,
      await prisma.heatRevision.findUniqueOrThrow({ where: { heatId_revision: { heatId: heat.id, revision: 2 } } }),
    );

    const spec = await prisma.productSpec.create({
      data: { code: 'P-RACE', name: 'Bearing race', material: 'STEEL', description: 'carbide-free bainite' },
    });
    record('ProductSpec', spec, await prisma.productSpec.findUniqueOrThrow({ where: { code: 'P-RACE' } }));

    const specVersion = await prisma.productSpecVersion.create({
      data: {
        specId: spec.id,
        version: 1,
        status: 'APPROVED',
        createdBy: 'user:m@plant.example',
        approvedBy: 'user:q@plant.example',
        approvedAt: t('2026-12-01T08:00:00.000Z'),
        chemistryLimits: { C: { minWtPct: 0.9, maxWtPct: 1.05 } },
        processWindow: { bath: { minTempC: 250, maxTempC: 270 }, transfer: { maxS: 20 } },
        acceptanceCriteria: { hardness: { scale: 'HRC', min: 58, max: 62 } },
      },
    });
    record(
      'ProductSpecVersion',
      specVersion,
      await prisma.productSpecVersion.findUniqueOrThrow({ where: { specId_version: { specId: spec.id, version: 1 } } }),
    );

    const batch = await prisma.batch.create({
      data: {
        code: 'LOAD-0001',
        lineId: line.id,
        heatId: heat.id,
        specVersionId: specVersion.id,
        partCount: 120,
        weightKg: 480.5,
        sectionShape: 'CYLINDER',
        sectionSizeMm: 42.5,
        status: 'IN_BATH',
        scheduledHoldMin: 90,
        stale: true,
        staleSince: t('2026-12-01T10:01:00.500Z'),
      },
    });
    record('Batch', batch, await prisma.batch.findUniqueOrThrow({ where: { code: 'LOAD-0001' } }));

    const loadEvent = await prisma.loadEvent.create({
      data: { batchId: batch.id, kind: 'INTO_BATH', at: t('2026-12-01T10:00:10.250Z'), equipmentId: bath.id },
    });
    record(
      'LoadEvent',
      loadEvent,
      await prisma.loadEvent.findUniqueOrThrow({ where: { batchId_kind: { batchId: batch.id, kind: 'INTO_BATH' } } }),
    );

    const labResult = await prisma.labResult.create({
      data: {
        batchId: batch.id,
        kind: 'HARDNESS',
        values: { readings: [59.5, 60.1, 60.4], mean: 60 },
        scale: 'HRC',
        testStandard: 'ASTM E18',
        externalRef: 'LAB-77',
        measuredAt: t('2026-12-01T14:00:00.000Z'),
      },
    });
    record(
      'LabResult',
      labResult,
      await prisma.labResult.findUniqueOrThrow({
        where: { batchId_kind_externalRef: { batchId: batch.id, kind: 'HARDNESS', externalRef: 'LAB-77' } },
      }),
    );

    const prediction = await prisma.prediction.create({
      data: {
        batchId: batch.id,
        version: 1,
        modelVersion: 'm-0.1.0',
        inputDigest: 'b'.repeat(64),
        watermark: t('2026-12-01T10:00:00.125Z'),
        phase: 'IN_BATH',
        milestone: 'into-bath',
        result: { bainiteFraction: 0.42 },
        state: { tS: 300, fraction: 0.42 },
        updatedAt: t('2026-12-01T10:00:01.250Z'),
      },
    });
    record(
      'Prediction',
      prediction,
      await prisma.prediction.findUniqueOrThrow({ where: { batchId_version: { batchId: batch.id, version: 1 } } }),
    );

    const deviation = await prisma.deviation.create({
      data: {
        batchId: batch.id,
        lineId: line.id,
        productSpecId: spec.id,
        channelId: channel.id,
        rule: 'bath-band-excursion',
        severity: 'MAJOR',
        status: 'DISPOSITIONED',
        message: 'Bath above band for 95 s',
        details: { limitC: 270, maxC: 274.2, durationS: 95 },
        conditionPresent: false,
        disposition: 'CONCESSION',
        dispositionReason: 'customer accepts',
        dispositionRef: 'CP-2026-17',
        signer: 'Q. Inspector',
        dispositionedById: user.id,
        dispositionedAt: t('2026-12-01T12:00:00.000Z'),
        acknowledgedById: user.id,
        acknowledgedAt: t('2026-12-01T11:00:00.000Z'),
        closedById: user.id,
        closedAt: t('2026-12-01T13:00:00.000Z'),
        clearedAt: t('2026-12-01T10:30:00.000Z'),
        dedupKey: `${batch.id}:bath-band-excursion:${channel.id}`,
        version: 3,
        openedAt: t('2026-12-01T10:05:00.000Z'),
        lastEvaluatedAt: t('2026-12-01T10:20:00.000Z'),
      },
    });
    record(
      'Deviation',
      deviation,
      await prisma.deviation.findUniqueOrThrow({ where: { dedupKey: `${batch.id}:bath-band-excursion:${channel.id}` } }),
    );

    const audit = await prisma.deviationAudit.create({
      data: {
        deviationId: deviation.id,
        action: 'DISPOSITION',
        actorKind: 'USER',
        actorUserId: user.id,
        actor: 'q@plant.example',
        fromStatus: 'ACKNOWLEDGED',
        toStatus: 'DISPOSITIONED',
        reason: 'customer accepts',
        disposition: 'CONCESSION',
        details: { permit: 'CP-2026-17' },
      },
    });
    record('DeviationAudit', audit, await prisma.deviationAudit.findUniqueOrThrow({ where: { id: audit.id } }));

    const apiKey = await prisma.apiKey.create({
      data: { prefix: 'ak_0001', secretHash: 'c'.repeat(64), label: 'bath 1 controller', scope: 'EQUIPMENT', revokedAt: t('2026-12-03T00:00:00.000Z') },
    });
    record('ApiKey', apiKey, await prisma.apiKey.findUniqueOrThrow({ where: { prefix: 'ak_0001' } }));

    const keyEquipment = await prisma.apiKeyEquipment.create({ data: { apiKeyId: apiKey.id, equipmentId: bath.id } });
    record(
      'ApiKeyEquipment',
      keyEquipment,
      await prisma.apiKeyEquipment.findUniqueOrThrow({
        where: { apiKeyId_equipmentId: { apiKeyId: apiKey.id, equipmentId: bath.id } },
      }),
    );

    const idem = await prisma.idempotencyRecord.create({
      data: {
        principal: `apikey:${apiKey.id}`,
        key: 'req-1',
        requestHash: 'd'.repeat(64),
        responseStatus: 201,
        responseBody: { stored: 10, duplicates: 0 },
        expiresAt: t('2026-12-02T10:00:00.000Z'),
      },
    });
    record(
      'IdempotencyRecord',
      idem,
      await prisma.idempotencyRecord.findUniqueOrThrow({
        where: { principal_key: { principal: `apikey:${apiKey.id}`, key: 'req-1' } },
      }),
    );


    // Pyrometry (migration 20261201001000_pyrometry, PW)
    const equipmentRecord = await prisma.equipmentRecord.create({
      data: {
        equipmentId: furnace.id,
        furnaceClass: 2,
        instrumentationType: 'D+',
        satMethod: 'probe',
        standard: 'AMS2750',
        revision: 'G',
        tusRequired: true,
        customerOverlay: { source: 'Customer spec HT-1 rev A', entries: [] },
        limitUnit: 'F',
      },
    });
    record('EquipmentRecord', equipmentRecord, await prisma.equipmentRecord.findUniqueOrThrow({ where: { equipmentId: furnace.id } }));

    const sensor = await prisma.sensor.create({
      data: {
        serial: 'TC-0001',
        equipmentId: bath.id,
        channelId: channel.id,
        use: 'control',
        thermocoupleType: 'K',
        expendable: true,
        calibrationCertificateRef: 'CERT-1',
        calibrationPoints: [{ atC: 300, correctionC: -0.4 }, { atC: 400, correctionC: 0.25 }],
        calibratedAt: t('2026-11-01T08:00:00.001Z'),
        correctionMethod: 'nearest',
        installedAt: t('2026-11-02T08:00:00.002Z'),
        retiredAt: t('2027-02-02T08:00:00.003Z'),
        priorUses: 12,
        priorMaxTempC: 385.5,
        expiresOn: '2027-03-31',
      },
    });
    record('Sensor', sensor, await prisma.sensor.findUniqueOrThrow({ where: { serial: 'TC-0001' } }));

    const instrument = await prisma.instrument.create({
      data: {
        serial: 'REC-01',
        equipmentId: bath.id,
        channelId: channel.id,
        use: 'recording',
        statedAccuracy: { plusMinusC: 0.5, pctOfReading: 0.1 },
        calibrationCertificateRef: 'ICERT-1',
        calibrationPoints: [{ atC: 300, correctionC: 0.1 }],
        calibratedAt: t('2026-11-01T09:00:00.004Z'),
        correctionMethod: 'linear',
        installedAt: t('2026-10-01T09:00:00.005Z'),
        retiredAt: t('2027-10-01T09:00:00.006Z'),
      },
    });
    record('Instrument', instrument, await prisma.instrument.findUniqueOrThrow({ where: { serial: 'REC-01' } }));

    const calibration = await prisma.calibration.create({
      data: {
        sensorId: sensor.id,
        certificateRef: 'CERT-1',
        calibratedAt: t('2026-11-01T08:00:00.001Z'),
        points: [{ atC: 300, correctionC: -0.4 }],
        method: 'nearest',
        result: { verdict: 'pass' },
        passed: true,
        referenceId: 'AMS2750G',
        recordedBy: 'user:q@plant.example',
      },
    });
    // instrumentId stays null by rule (exactly one subject); written on a second row for the round trip.
    const instrumentCalibration = await prisma.calibration.create({
      data: {
        instrumentId: instrument.id,
        certificateRef: 'ICERT-1',
        calibratedAt: t('2026-11-01T09:00:00.004Z'),
        points: [{ atC: 300, correctionC: 0.1 }],
        result: { verdict: 'pass' },
        passed: true,
        referenceId: 'AMS2750G',
        recordedBy: 'user:q@plant.example',
      },
    });
    expect(calibration.instrumentId).toBeNull();
    record('Calibration', { ...instrumentCalibration, sensorId: sensor.id }, { ...(await prisma.calibration.findUniqueOrThrow({ where: { id: instrumentCalibration.id } })), sensorId: sensor.id });

    const accuracyTest = await prisma.accuracyTest.create({
      data: {
        equipmentId: bath.id,
        sensorId: sensor.id,
        testSensorId: sensor.id,
        testInstrumentId: instrument.id,
        testedAt: t('2026-11-15T10:00:00.007Z'),
        setpointC: 370,
        instrumentReadingC: 370.4,
        testSensorReadingC: 369.9,
        tipDistanceMm: 25.5,
        input: { setpointC: 370 },
        result: { verdict: 'pass', differenceC: 0.5 },
        verdict: 'pass',
        passed: true,
        referenceId: 'AMS2750G',
        recordedBy: 'user:q@plant.example',
      },
    });
    record('AccuracyTest', accuracyTest, await prisma.accuracyTest.findUniqueOrThrow({ where: { id: accuracyTest.id } }));

    const survey = await prisma.uniformitySurvey.create({
      data: {
        equipmentId: bath.id,
        setpointC: 370,
        startedAt: t('2026-11-16T10:00:00.008Z'),
        endedAt: t('2026-11-16T11:00:00.009Z'),
        testInstrumentId: instrument.id,
        input: { locations: [] },
        result: { verdict: 'fail' },
        verdict: 'fail',
        passed: false,
        referenceId: 'AMS2750G',
        recordedBy: 'user:q@plant.example',
      },
    });
    record('UniformitySurvey', survey, await prisma.uniformitySurvey.findUniqueOrThrow({ where: { id: survey.id } }));

    const sensorUse = await prisma.sensorUse.create({ data: { sensorId: sensor.id, batchId: batch.id, at: t('2026-12-01T10:00:10.250Z'), maxTempC: 372.5 } });
    record('SensorUse', sensorUse, await prisma.sensorUse.findUniqueOrThrow({ where: { sensorId_batchId: { sensorId: sensor.id, batchId: batch.id } } }));

    const trigger = await prisma.suspectTrigger.create({
      data: {
        equipmentId: bath.id,
        kind: 'failed-test',
        itemKind: 'tus',
        subjectId: bath.id,
        at: t('2026-11-16T11:00:00.009Z'),
        lastPassAt: t('2026-10-16T11:00:00.010Z'),
        sourceId: survey.id,
        evidence: { surveyId: survey.id },
        dedupKey: `failed:${survey.id}`,
      },
    });
    record('SuspectTrigger', trigger, await prisma.suspectTrigger.findUniqueOrThrow({ where: { dedupKey: `failed:${survey.id}` } }));

    // Drift across lots and lab calibration (migration 20261201003000_drift_calibration, PC2)
    await prisma.productSpecVersion.update({ where: { id: specVersion.id }, data: { driftCharts: { phaseILots: 30 } } });
    const specVersionWithDrift = await prisma.productSpecVersion.findUniqueOrThrow({ where: { id: specVersion.id } });
    expect(specVersionWithDrift.driftCharts).toEqual({ phaseILots: 30 });
    record('ProductSpecVersion', specVersionWithDrift, await prisma.productSpecVersion.findUniqueOrThrow({ where: { specId_version: { specId: spec.id, version: 1 } } }));

    const driftValue = await prisma.driftValue.create({
      data: {
        batchId: batch.id,
        productSpecId: spec.id,
        lineId: line.id,
        metric: 'bath-mean-temp-hold',
        value: 371.125,
        unit: '°C',
        orderAt: t('2026-12-01T10:00:10.250Z'),
        source: { readings: 540, coverage: 0.998 },
      },
    });
    record('DriftValue', driftValue, await prisma.driftValue.findUniqueOrThrow({ where: { batchId_metric: { batchId: batch.id, metric: 'bath-mean-temp-hold' } } }));

    const driftLimits = await prisma.driftLimits.create({
      data: {
        productSpecId: spec.id,
        lineId: line.id,
        metric: 'bath-mean-temp-hold',
        version: 1,
        source: 'phase-i',
        centre: 370.5,
        sigma: 1.25,
        limits: { version: 1, centre: 370.5, sigma: 1.25 },
        specVersionId: specVersion.id,
        reason: 'Phase I estimated from the first 25 lots',
      },
    });
    record(
      'DriftLimits',
      driftLimits,
      await prisma.driftLimits.findUniqueOrThrow({ where: { productSpecId_lineId_metric_version: { productSpecId: spec.id, lineId: line.id, metric: 'bath-mean-temp-hold', version: 1 } } }),
    );
    // CHECK constraints (not expressible in schema.prisma): the limits source and the comparison verdict vocabularies.
    await expect(
      db.pool.query(`INSERT INTO "DriftLimits" ("productSpecId","lineId","metric","version","source","centre","sigma","limits","specVersionId","reason")
                     VALUES ($1,$2,'bath-mean-temp-hold',2,'guessed',1,1,'{}',$3,'x')`, [spec.id, line.id, specVersion.id]),
    ).rejects.toThrow(/DriftLimits_source_check/);

    const driftChart = await prisma.driftChart.create({
      data: {
        productSpecId: spec.id,
        lineId: line.id,
        metric: 'bath-mean-temp-hold',
        status: 'monitoring',
        limitsVersion: 1,
        lotCount: 40,
        summary: { episodes: [] },
        evaluatedAt: t('2026-12-01T10:30:00.001Z'),
      },
    });
    record(
      'DriftChart',
      driftChart,
      await prisma.driftChart.findUniqueOrThrow({ where: { productSpecId_lineId_metric: { productSpecId: spec.id, lineId: line.id, metric: 'bath-mean-temp-hold' } } }),
    );

    const outcome = await prisma.batchOutcome.create({ data: { batchId: batch.id, inputs: { predictionId: prediction.id }, evaluatedAt: t('2026-12-01T10:31:00.002Z') } });
    record('BatchOutcome', outcome, await prisma.batchOutcome.findUniqueOrThrow({ where: { batchId: batch.id } }));

    const comparison = await prisma.labComparison.create({
      data: {
        labResultId: labResult.id,
        batchId: batch.id,
        productSpecId: spec.id,
        quantity: 'hardnessHV',
        measured: 712.5,
        measuredDetail: { scale: 'HRC', readings: 3 },
        predictionId: prediction.id,
        predictionVersion: 1,
        rawP05: 650,
        rawP50: 690.5,
        rawP95: 730,
        bandP05: 676,
        bandP50: 690.5,
        bandP95: 705,
        calibrationApplied: true,
        calibrationBefore: { n: 5, bias: 2.5, sd: 8 },
        calibrationAfter: { n: 6, bias: 5, sd: 9.5 },
        residual: 22,
        verdict: 'above',
        excludedBy: { reason: 'assignable-cause', causes: [{ deviationId: 'd-1', rule: 'hold-min', severity: 'CRITICAL' }] },
        firstComparedAt: t('2026-12-01T14:00:01.003Z'),
      },
    });
    record('LabComparison', comparison, await prisma.labComparison.findUniqueOrThrow({ where: { labResultId_quantity: { labResultId: labResult.id, quantity: 'hardnessHV' } } }));
    await expect(
      db.pool.query(`INSERT INTO "LabComparison" ("labResultId","batchId","productSpecId","quantity","measuredDetail","verdict","firstComparedAt")
                     VALUES ($1,$2,$3,'tensileMPa','{}','maybe',now())`, [labResult.id, batch.id, spec.id]),
    ).rejects.toThrow(/LabComparison_verdict_check/);

    const productCalibration = await prisma.productCalibration.create({
      data: { productSpecId: spec.id, quantity: 'hardnessHV', method: 'nig-discounted', n: 6, bias: 5, sd: 9.5, dof: 6.2, kappa: 7.1, inForce: true, state: { n: 6 }, excludedResults: 1, exclusions: { results: 1, byRule: { 'hold-min': 1 } } },
    });
    record(
      'ProductCalibration',
      productCalibration,
      await prisma.productCalibration.findUniqueOrThrow({ where: { productSpecId_quantity: { productSpecId: spec.id, quantity: 'hardnessHV' } } }),
    );

    expect(furnace.kind).toBe('FURNACE');
    for (const [model, created] of written) expect(readBack.get(model), model).toEqual(created);
  });

  it('covered every model of the schema, with every scalar field non-null', () => {
    expect([...written.keys()].sort()).toEqual(Object.values(Prisma.ModelName).sort());
    for (const [model, row] of readBack) {
      const fieldEnum = (Prisma as unknown as Record<string, Record<string, string>>)[`${model}ScalarFieldEnum`];
      expect(fieldEnum, model).toBeDefined();
      expect(Object.keys(row).sort(), model).toEqual(Object.values(fieldEnum!).sort());
      for (const [field, value] of Object.entries(row)) expect(value, `${model}.${field}`).not.toBeNull();
    }
  });

  it('keeps milliseconds, doubles, JSON and enum arrays exactly', () => {
    const sample = readBack.get('Sample')!;
    expect((sample.t as Date).toISOString()).toBe('2026-12-01T10:00:00.125Z');
    expect(sample.value).toBe(371.25);
    expect(readBack.get('User')!.roles).toEqual(['QUALITY', 'METALLURGIST']);
    expect(readBack.get('LabResult')!.values).toEqual({ readings: [59.5, 60.1, 60.4], mean: 60 });
  });
});

describe('database rules the application relies on', () => {
  it('DeviationAudit is append-only: UPDATE, DELETE and TRUNCATE are rejected, INSERT works', async () => {
    const line = await prisma.line.create({ data: { code: 'L-AUDIT', name: 'Audit line', timeZone: 'UTC' } });
    const deviation = await prisma.deviation.create({
      data: { lineId: line.id, rule: 'gap', severity: 'MINOR', message: 'gap', details: {}, dedupKey: 'audit-test' },
    });
    const entry = await prisma.deviationAudit.create({
      data: { deviationId: deviation.id, action: 'OPEN', actorKind: 'SYSTEM', actor: 'worker', toStatus: 'OPEN' },
    });
    await expect(prisma.deviationAudit.update({ where: { id: entry.id }, data: { reason: 'rewrite history' } })).rejects.toThrow(
      /append-only: UPDATE/,
    );
    await expect(prisma.deviationAudit.delete({ where: { id: entry.id } })).rejects.toThrow(/append-only: DELETE/);
    await expect(db.pool.query('TRUNCATE "DeviationAudit"')).rejects.toThrow(/append-only: TRUNCATE/);
    // Nor can the deviation that owns audit entries vanish with them.
    await expect(prisma.deviation.delete({ where: { id: deviation.id } })).rejects.toThrow();

    await prisma.deviationAudit.create({
      data: { deviationId: deviation.id, action: 'NOTE', actorKind: 'SYSTEM', actor: 'worker', fromStatus: 'OPEN', toStatus: 'OPEN', reason: 'correction' },
    });
    const entries = await prisma.deviationAudit.findMany({ where: { deviationId: deviation.id }, orderBy: { at: 'asc' } });
    expect(entries).toHaveLength(2);
    expect(entries[0]!.reason).toBeNull();
  });

  it('a re-sent sample stores nothing (primary key channelId, t) and a re-posted load event is refused', async () => {
    const channel = await prisma.channel.findFirstOrThrow({ where: { code: 'tc1' } });
    const batch = await prisma.batch.findUniqueOrThrow({ where: { code: 'LOAD-0001' } });
    const insert = `INSERT INTO "Sample" ("channelId", "t", "value")
                    SELECT * FROM unnest($1::uuid[], $2::timestamptz[], $3::float8[]) ON CONFLICT DO NOTHING`;
    const ts = ['2026-12-01T11:00:00.000Z', '2026-12-01T11:00:01.000Z'];
    const first = await db.pool.query(insert, [[channel.id, channel.id], ts, [370, 371]]);
    const again = await db.pool.query(insert, [[channel.id, channel.id], ts, [370, 371]]);
    expect(first.rowCount).toBe(2);
    expect(again.rowCount).toBe(0);

    const event = await prisma.loadEvent.findFirstOrThrow({ where: { batchId: batch.id } });
    await expect(
      prisma.loadEvent.create({ data: { batchId: batch.id, kind: event.kind, at: event.at, equipmentId: event.equipmentId } }),
    ).rejects.toMatchObject({ code: 'P2002' });
  });
});

// ---------------------------------------------------------------------------------------------
// Structural comparison: schema.prisma (parsed here) against the Postgres catalog
// ---------------------------------------------------------------------------------------------

interface FieldDecl {
  name: string;
  type: string;
  optional: boolean;
  list: boolean;
  attrs: string;
}
interface ModelDecl {
  name: string;
  fields: FieldDecl[];
  blockAttrs: string[];
}

function parseSchema(text: string): { models: ModelDecl[]; enums: Map<string, string[]> } {
  const clean = text.replace(/\/\/.*$/gm, '');
  const models: ModelDecl[] = [];
  const enums = new Map<string, string[]>();
  for (const match of clean.matchAll(/^(model|enum)\s+(\w+)\s*\{([\s\S]*?)^\}/gm)) {
    const [, kind, name, body] = match as unknown as [string, string, string, string];
    const lines = body.split('\n').map((l) => l.trim()).filter(Boolean);
    if (kind === 'enum') {
      enums.set(name, lines);
      continue;
    }
    const fields: FieldDecl[] = [];
    const blockAttrs: string[] = [];
    for (const line of lines) {
      if (line.startsWith('@@')) {
        blockAttrs.push(line);
        continue;
      }
      const m = /^(\w+)\s+(\w+)(\[\])?(\?)?\s*(.*)$/.exec(line);
      if (m) fields.push({ name: m[1]!, type: m[2]!, list: Boolean(m[3]), optional: Boolean(m[4]), attrs: m[5] ?? '' });
    }
    models.push({ name, fields, blockAttrs });
  }
  return { models, enums };
}

const parsed = parseSchema(SCHEMA);
const modelNames = new Set(parsed.models.map((m) => m.name));
const isColumn = (f: FieldDecl) => !modelNames.has(f.type);
const listArg = (attr: string) => /\[([^\]]*)\]/.exec(attr)?.[1]!.split(',').map((s) => s.trim()) ?? [];

function expectedType(field: FieldDecl): string {
  if (parsed.enums.has(field.type)) return field.list ? `${field.type}[]` : field.type;
  const base: Record<string, string> = {
    Int: 'integer',
    Float: 'double precision',
    Boolean: 'boolean',
    Json: 'jsonb',
    String: /@db\.Uuid/.test(field.attrs) ? 'uuid' : 'text',
    DateTime: /@db\.Timestamptz\(3\)/.test(field.attrs) ? 'timestamp(3) with time zone' : 'timestamp(3) without time zone',
  };
  const type = base[field.type];
  if (!type) throw new Error(`schema-agreement test does not know type ${field.type}`);
  return field.list ? `${type}[]` : type;
}

describe('schema.prisma matches the migrated catalog', () => {
  it('parses the schema (sanity)', () => {
    expect(parsed.models.map((m) => m.name).sort()).toEqual(Object.values(Prisma.ModelName).sort());
  });

  it('has exactly the declared tables, columns, types, nullability and defaults', async () => {
    const { rows } = await db.pool.query<{ table: string; column: string; type: string; nullable: boolean; hasDefault: boolean }>(
      `SELECT c.relname AS "table", a.attname AS "column", format_type(a.atttypid, a.atttypmod) AS "type",
              NOT a.attnotnull AS nullable, a.atthasdef AS "hasDefault"
         FROM pg_attribute a JOIN pg_class c ON c.oid = a.attrelid JOIN pg_namespace n ON n.oid = c.relnamespace
        WHERE n.nspname = 'public' AND c.relkind = 'r' AND a.attnum > 0 AND NOT a.attisdropped
          AND c.relname <> '_prisma_migrations'`,
    );
    const actual = rows.map((r) => `${r.table}.${r.column}: ${r.type}${r.nullable ? ' NULL' : ''}${r.hasDefault ? ' DEFAULT' : ''}`).sort();
    const expected = parsed.models
      .flatMap((model) =>
        model.fields.filter(isColumn).map((f) => {
          // Prisma never puts NOT NULL on a list column.
          const nullable = f.optional || f.list;
          const hasDefault = /@default\(/.test(f.attrs);
          return `${model.name}.${f.name}: ${expectedType(f).replace(/^([A-Z]\w*)/, '"$1"')}${nullable ? ' NULL' : ''}${hasDefault ? ' DEFAULT' : ''}`;
        }),
      )
      .sort();
    expect(actual).toEqual(expected);
  });

  it('has exactly the declared enums and values', async () => {
    const { rows } = await db.pool.query<{ name: string; labels: string[] }>(
      `SELECT t.typname AS name, array_agg(e.enumlabel ORDER BY e.enumsortorder)::text[] AS labels
         FROM pg_type t JOIN pg_enum e ON e.enumtypid = t.oid GROUP BY t.typname`,
    );
    expect(Object.fromEntries(rows.map((r) => [r.name, r.labels]))).toEqual(Object.fromEntries(parsed.enums));
  });

  it('has exactly the declared primary keys, unique and plain indexes under Prisma names', async () => {
    const { rows } = await db.pool.query<{ name: string; def: string }>(
      `SELECT indexname AS name, indexdef AS def FROM pg_indexes
        WHERE schemaname = 'public' AND tablename <> '_prisma_migrations'`,
    );
    const actual = rows
      .map((r) => {
        const unique = /CREATE UNIQUE INDEX/.test(r.def) ? 'unique ' : '';
        const cols = /\(([^)]*)\)\s*$/.exec(r.def)![1]!.replace(/"/g, '').replace(/\s/g, '');
        return `${r.name}: ${unique}(${cols})`;
      })
      .sort();
    const expected: string[] = [];
    for (const model of parsed.models) {
      for (const f of model.fields) {
        if (/@id\b/.test(f.attrs)) expected.push(`${model.name}_pkey: unique (${f.name})`);
        if (/@unique\b/.test(f.attrs)) expected.push(`${model.name}_${f.name}_key: unique (${f.name})`);
      }
      for (const attr of model.blockAttrs) {
        const cols = listArg(attr);
        if (attr.startsWith('@@id')) expected.push(`${model.name}_pkey: unique (${cols.join(',')})`);
        if (attr.startsWith('@@unique')) expected.push(`${model.name}_${cols.join('_')}_key: unique (${cols.join(',')})`);
        if (attr.startsWith('@@index')) expected.push(`${model.name}_${cols.join('_')}_idx: (${cols.join(',')})`);
      }
    }
    expect(actual).toEqual(expected.sort());
  });

  it('has exactly the declared foreign keys with Prisma names and delete rules', async () => {
    const { rows } = await db.pool.query<{ name: string; def: string }>(
      `SELECT conname AS name, pg_get_constraintdef(oid) AS def FROM pg_constraint WHERE contype = 'f'`,
    );
    const actual = rows.map((r) => `${r.name}: ${r.def.replace(/"/g, '')}`).sort();
    const expected: string[] = [];
    for (const model of parsed.models) {
      for (const f of model.fields) {
        const relation = /@relation\(([^)]*fields:[^)]*)\)/.exec(f.attrs)?.[1];
        if (!relation) continue;
        const fields = listArg(/fields:\s*(\[[^\]]*\])/.exec(relation)![1]!);
        const refs = listArg(/references:\s*(\[[^\]]*\])/.exec(relation)![1]!);
        const onDelete = /onDelete:\s*(\w+)/.exec(relation)?.[1] ?? (f.optional ? 'SetNull' : 'Restrict');
        const action = { Restrict: 'RESTRICT', Cascade: 'CASCADE', SetNull: 'SET NULL', NoAction: 'NO ACTION' }[onDelete];
        // pg_get_constraintdef omits the default NO ACTION.
        const deleteClause = action === 'NO ACTION' ? '' : ` ON DELETE ${action}`;
        expected.push(
          `${model.name}_${fields.join('_')}_fkey: FOREIGN KEY (${fields.join(', ')}) REFERENCES ${f.type}(${refs.join(', ')}) ON UPDATE CASCADE${deleteClause}`,
        );
      }
    }
    expect(actual).toEqual(expected.sort());
  });
});
