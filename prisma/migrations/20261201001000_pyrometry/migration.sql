-- Pyrometry and equipment records (issue 8): the pyrometry record of each furnace and bath, sensors and
-- instruments with their calibration certificates, accuracy tests, uniformity surveys, sensor uses per
-- batch, and the triggers of suspect-product look-backs. Written by hand to match prisma/schema.prisma.
-- The CHECK constraints below are not expressible in schema.prisma; they hold the libs/compliance
-- pyrometry vocabulary (the API validates the same lists first and answers 400).

-- CreateTable
CREATE TABLE "EquipmentRecord" (
    "id" UUID NOT NULL DEFAULT gen_random_uuid(),
    "equipmentId" UUID NOT NULL,
    "furnaceClass" INTEGER NOT NULL,
    "instrumentationType" TEXT NOT NULL,
    "satMethod" TEXT,
    "standard" TEXT NOT NULL,
    "revision" TEXT NOT NULL,
    "tusRequired" BOOLEAN NOT NULL,
    "customerOverlay" JSONB,
    "limitUnit" TEXT NOT NULL DEFAULT 'C',
    "createdAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    "updatedAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,

    CONSTRAINT "EquipmentRecord_pkey" PRIMARY KEY ("id"),
    CONSTRAINT "EquipmentRecord_furnaceClass_check" CHECK ("furnaceClass" BETWEEN 1 AND 6),
    CONSTRAINT "EquipmentRecord_instrumentationType_check" CHECK ("instrumentationType" IN ('A', 'B', 'C', 'D', 'D+', 'E')),
    CONSTRAINT "EquipmentRecord_satMethod_check" CHECK ("satMethod" IS NULL OR "satMethod" IN ('probe', 'comparative')),
    CONSTRAINT "EquipmentRecord_limitUnit_check" CHECK ("limitUnit" IN ('C', 'F'))
);

-- CreateTable
CREATE TABLE "Sensor" (
    "id" UUID NOT NULL DEFAULT gen_random_uuid(),
    "serial" TEXT NOT NULL,
    "equipmentId" UUID,
    "channelId" UUID,
    "use" TEXT NOT NULL,
    "thermocoupleType" TEXT NOT NULL,
    "expendable" BOOLEAN NOT NULL DEFAULT false,
    "calibrationCertificateRef" TEXT,
    "calibrationPoints" JSONB NOT NULL DEFAULT '[]',
    "calibratedAt" TIMESTAMPTZ(3),
    "correctionMethod" TEXT NOT NULL DEFAULT 'linear',
    "installedAt" TIMESTAMPTZ(3) NOT NULL,
    "retiredAt" TIMESTAMPTZ(3),
    "priorUses" INTEGER NOT NULL DEFAULT 0,
    "priorMaxTempC" DOUBLE PRECISION,
    "expiresOn" TEXT,
    "createdAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    "updatedAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,

    CONSTRAINT "Sensor_pkey" PRIMARY KEY ("id"),
    CONSTRAINT "Sensor_use_check" CHECK ("use" IN ('primary-standard', 'secondary-standard', 'sat-test', 'tus-test', 'load', 'control', 'recording', 'monitoring', 'over-temperature')),
    CONSTRAINT "Sensor_thermocoupleType_check" CHECK ("thermocoupleType" IN ('B', 'E', 'J', 'K', 'N', 'R', 'S', 'T')),
    CONSTRAINT "Sensor_correctionMethod_check" CHECK ("correctionMethod" IN ('linear', 'nearest')),
    CONSTRAINT "Sensor_priorUses_check" CHECK ("priorUses" >= 0),
    CONSTRAINT "Sensor_expiresOn_check" CHECK ("expiresOn" IS NULL OR "expiresOn" ~ '^\d{4}-\d{2}-\d{2}$')
);

-- CreateTable
CREATE TABLE "Instrument" (
    "id" UUID NOT NULL DEFAULT gen_random_uuid(),
    "serial" TEXT NOT NULL,
    "equipmentId" UUID,
    "channelId" UUID,
    "use" TEXT NOT NULL,
    "statedAccuracy" JSONB,
    "calibrationCertificateRef" TEXT,
    "calibrationPoints" JSONB NOT NULL DEFAULT '[]',
    "calibratedAt" TIMESTAMPTZ(3),
    "correctionMethod" TEXT NOT NULL DEFAULT 'linear',
    "installedAt" TIMESTAMPTZ(3) NOT NULL,
    "retiredAt" TIMESTAMPTZ(3),
    "createdAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    "updatedAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,

    CONSTRAINT "Instrument_pkey" PRIMARY KEY ("id"),
    CONSTRAINT "Instrument_use_check" CHECK ("use" IN ('field-test', 'control', 'recording', 'over-temperature')),
    CONSTRAINT "Instrument_correctionMethod_check" CHECK ("correctionMethod" IN ('linear', 'nearest'))
);

-- CreateTable
CREATE TABLE "Calibration" (
    "id" UUID NOT NULL DEFAULT gen_random_uuid(),
    "sensorId" UUID,
    "instrumentId" UUID,
    "certificateRef" TEXT NOT NULL,
    "calibratedAt" TIMESTAMPTZ(3) NOT NULL,
    "points" JSONB NOT NULL,
    "method" TEXT NOT NULL DEFAULT 'linear',
    "result" JSONB NOT NULL,
    "passed" BOOLEAN NOT NULL,
    "referenceId" TEXT NOT NULL,
    "recordedBy" TEXT NOT NULL,
    "createdAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,

    CONSTRAINT "Calibration_pkey" PRIMARY KEY ("id"),
    CONSTRAINT "Calibration_subject_check" CHECK (num_nonnulls("sensorId", "instrumentId") = 1),
    CONSTRAINT "Calibration_method_check" CHECK ("method" IN ('linear', 'nearest'))
);

-- CreateTable
CREATE TABLE "AccuracyTest" (
    "id" UUID NOT NULL DEFAULT gen_random_uuid(),
    "equipmentId" UUID NOT NULL,
    "sensorId" UUID NOT NULL,
    "testSensorId" UUID NOT NULL,
    "testInstrumentId" UUID,
    "testedAt" TIMESTAMPTZ(3) NOT NULL,
    "setpointC" DOUBLE PRECISION NOT NULL,
    "instrumentReadingC" DOUBLE PRECISION NOT NULL,
    "testSensorReadingC" DOUBLE PRECISION NOT NULL,
    "tipDistanceMm" DOUBLE PRECISION,
    "input" JSONB NOT NULL,
    "result" JSONB NOT NULL,
    "verdict" TEXT NOT NULL,
    "passed" BOOLEAN NOT NULL,
    "referenceId" TEXT NOT NULL,
    "recordedBy" TEXT NOT NULL,
    "createdAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,

    CONSTRAINT "AccuracyTest_pkey" PRIMARY KEY ("id"),
    CONSTRAINT "AccuracyTest_verdict_check" CHECK ("verdict" IN ('pass', 'fail', 'invalid') AND "passed" = ("verdict" = 'pass'))
);

-- CreateTable
CREATE TABLE "UniformitySurvey" (
    "id" UUID NOT NULL DEFAULT gen_random_uuid(),
    "equipmentId" UUID NOT NULL,
    "setpointC" DOUBLE PRECISION NOT NULL,
    "startedAt" TIMESTAMPTZ(3) NOT NULL,
    "endedAt" TIMESTAMPTZ(3) NOT NULL,
    "testInstrumentId" UUID,
    "input" JSONB NOT NULL,
    "result" JSONB NOT NULL,
    "verdict" TEXT NOT NULL,
    "passed" BOOLEAN NOT NULL,
    "referenceId" TEXT NOT NULL,
    "recordedBy" TEXT NOT NULL,
    "createdAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,

    CONSTRAINT "UniformitySurvey_pkey" PRIMARY KEY ("id"),
    CONSTRAINT "UniformitySurvey_verdict_check" CHECK ("verdict" IN ('pass', 'fail', 'invalid') AND "passed" = ("verdict" = 'pass')),
    CONSTRAINT "UniformitySurvey_window_check" CHECK ("endedAt" >= "startedAt")
);

-- CreateTable
CREATE TABLE "SensorUse" (
    "sensorId" UUID NOT NULL,
    "batchId" UUID NOT NULL,
    "at" TIMESTAMPTZ(3) NOT NULL,
    "maxTempC" DOUBLE PRECISION,

    CONSTRAINT "SensorUse_pkey" PRIMARY KEY ("sensorId","batchId")
);

-- CreateTable
CREATE TABLE "SuspectTrigger" (
    "id" UUID NOT NULL DEFAULT gen_random_uuid(),
    "equipmentId" UUID NOT NULL,
    "kind" TEXT NOT NULL,
    "itemKind" TEXT NOT NULL,
    "subjectId" UUID NOT NULL,
    "at" TIMESTAMPTZ(3) NOT NULL,
    "lastPassAt" TIMESTAMPTZ(3),
    "sourceId" UUID,
    "evidence" JSONB NOT NULL,
    "dedupKey" TEXT NOT NULL,
    "createdAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,

    CONSTRAINT "SuspectTrigger_pkey" PRIMARY KEY ("id"),
    CONSTRAINT "SuspectTrigger_kind_check" CHECK ("kind" IN ('failed-test', 'found-overdue')),
    CONSTRAINT "SuspectTrigger_itemKind_check" CHECK ("itemKind" IN ('tus', 'sat', 'sensor-calibration', 'instrument-calibration'))
);

-- CreateIndex
CREATE UNIQUE INDEX "EquipmentRecord_equipmentId_key" ON "EquipmentRecord"("equipmentId");

-- CreateIndex
CREATE UNIQUE INDEX "Sensor_serial_key" ON "Sensor"("serial");

-- CreateIndex
CREATE INDEX "Sensor_equipmentId_idx" ON "Sensor"("equipmentId");

-- CreateIndex
CREATE INDEX "Sensor_channelId_idx" ON "Sensor"("channelId");

-- CreateIndex
CREATE UNIQUE INDEX "Instrument_serial_key" ON "Instrument"("serial");

-- CreateIndex
CREATE INDEX "Instrument_equipmentId_idx" ON "Instrument"("equipmentId");

-- CreateIndex
CREATE INDEX "Instrument_channelId_idx" ON "Instrument"("channelId");

-- CreateIndex
CREATE UNIQUE INDEX "Calibration_sensorId_certificateRef_key" ON "Calibration"("sensorId", "certificateRef");

-- CreateIndex
CREATE UNIQUE INDEX "Calibration_instrumentId_certificateRef_key" ON "Calibration"("instrumentId", "certificateRef");

-- CreateIndex
CREATE UNIQUE INDEX "AccuracyTest_equipmentId_sensorId_testedAt_key" ON "AccuracyTest"("equipmentId", "sensorId", "testedAt");

-- CreateIndex
CREATE INDEX "AccuracyTest_equipmentId_testedAt_idx" ON "AccuracyTest"("equipmentId", "testedAt");

-- CreateIndex
CREATE UNIQUE INDEX "UniformitySurvey_equipmentId_setpointC_startedAt_key" ON "UniformitySurvey"("equipmentId", "setpointC", "startedAt");

-- CreateIndex
CREATE INDEX "UniformitySurvey_equipmentId_endedAt_idx" ON "UniformitySurvey"("equipmentId", "endedAt");

-- CreateIndex
CREATE UNIQUE INDEX "SuspectTrigger_dedupKey_key" ON "SuspectTrigger"("dedupKey");

-- CreateIndex
CREATE INDEX "SuspectTrigger_equipmentId_at_idx" ON "SuspectTrigger"("equipmentId", "at");

-- AddForeignKey
ALTER TABLE "EquipmentRecord" ADD CONSTRAINT "EquipmentRecord_equipmentId_fkey" FOREIGN KEY ("equipmentId") REFERENCES "Equipment"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "Sensor" ADD CONSTRAINT "Sensor_equipmentId_fkey" FOREIGN KEY ("equipmentId") REFERENCES "Equipment"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "Sensor" ADD CONSTRAINT "Sensor_channelId_fkey" FOREIGN KEY ("channelId") REFERENCES "Channel"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "Instrument" ADD CONSTRAINT "Instrument_equipmentId_fkey" FOREIGN KEY ("equipmentId") REFERENCES "Equipment"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "Instrument" ADD CONSTRAINT "Instrument_channelId_fkey" FOREIGN KEY ("channelId") REFERENCES "Channel"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "Calibration" ADD CONSTRAINT "Calibration_sensorId_fkey" FOREIGN KEY ("sensorId") REFERENCES "Sensor"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "Calibration" ADD CONSTRAINT "Calibration_instrumentId_fkey" FOREIGN KEY ("instrumentId") REFERENCES "Instrument"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "AccuracyTest" ADD CONSTRAINT "AccuracyTest_equipmentId_fkey" FOREIGN KEY ("equipmentId") REFERENCES "Equipment"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "AccuracyTest" ADD CONSTRAINT "AccuracyTest_sensorId_fkey" FOREIGN KEY ("sensorId") REFERENCES "Sensor"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "AccuracyTest" ADD CONSTRAINT "AccuracyTest_testSensorId_fkey" FOREIGN KEY ("testSensorId") REFERENCES "Sensor"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "AccuracyTest" ADD CONSTRAINT "AccuracyTest_testInstrumentId_fkey" FOREIGN KEY ("testInstrumentId") REFERENCES "Instrument"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "UniformitySurvey" ADD CONSTRAINT "UniformitySurvey_equipmentId_fkey" FOREIGN KEY ("equipmentId") REFERENCES "Equipment"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "UniformitySurvey" ADD CONSTRAINT "UniformitySurvey_testInstrumentId_fkey" FOREIGN KEY ("testInstrumentId") REFERENCES "Instrument"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "SensorUse" ADD CONSTRAINT "SensorUse_sensorId_fkey" FOREIGN KEY ("sensorId") REFERENCES "Sensor"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "SensorUse" ADD CONSTRAINT "SensorUse_batchId_fkey" FOREIGN KEY ("batchId") REFERENCES "Batch"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "SuspectTrigger" ADD CONSTRAINT "SuspectTrigger_equipmentId_fkey" FOREIGN KEY ("equipmentId") REFERENCES "Equipment"("id") ON DELETE RESTRICT ON UPDATE CASCADE;
