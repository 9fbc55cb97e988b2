-- Drift across lots and lab calibration (issue 4, items 4 and 5; helper PC2). Written by hand to match
-- prisma/schema.prisma:
--   * ProductSpecVersion.driftCharts: per-spec chart settings (libs/contracts DriftChartsSettings), null = defaults;
--   * DriftValue: one value per batch and drift metric, in production order;
--   * DriftLimits: frozen, versioned limits of each chart (Phase I estimates or specified in the spec);
--   * DriftChart: the last evaluation of each chart (status, episodes) for the sweep and the dashboard;
--   * BatchOutcome: what the worker last saw of a batch's outcome (prediction, lab results, end of hold);
--   * LabComparison: each lab result against the predicted band of its batch;
--   * ProductCalibration: the running calibration per product spec and predicted quantity.

-- AlterTable
ALTER TABLE "ProductSpecVersion" ADD COLUMN "driftCharts" JSONB;

-- CreateTable
CREATE TABLE "DriftValue" (
    "id" UUID NOT NULL DEFAULT gen_random_uuid(),
    "batchId" UUID NOT NULL,
    "productSpecId" UUID NOT NULL,
    "lineId" UUID NOT NULL,
    "metric" TEXT NOT NULL,
    "value" DOUBLE PRECISION NOT NULL,
    "unit" TEXT NOT NULL,
    "orderAt" TIMESTAMPTZ(3) NOT NULL,
    "source" JSONB NOT NULL,
    "createdAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    "updatedAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,

    CONSTRAINT "DriftValue_pkey" PRIMARY KEY ("id")
);

-- CreateTable
CREATE TABLE "DriftLimits" (
    "id" UUID NOT NULL DEFAULT gen_random_uuid(),
    "productSpecId" UUID NOT NULL,
    "lineId" UUID NOT NULL,
    "metric" TEXT NOT NULL,
    "version" INTEGER NOT NULL,
    "source" TEXT NOT NULL,
    "centre" DOUBLE PRECISION NOT NULL,
    "sigma" DOUBLE PRECISION NOT NULL,
    "limits" JSONB NOT NULL,
    "specVersionId" UUID NOT NULL,
    "reason" TEXT NOT NULL,
    "createdAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,

    CONSTRAINT "DriftLimits_pkey" PRIMARY KEY ("id"),
    CONSTRAINT "DriftLimits_source_check" CHECK ("source" IN ('phase-i', 'specified')),
    CONSTRAINT "DriftLimits_sigma_check" CHECK ("sigma" > 0)
);

-- CreateTable
CREATE TABLE "DriftChart" (
    "id" UUID NOT NULL DEFAULT gen_random_uuid(),
    "productSpecId" UUID NOT NULL,
    "lineId" UUID NOT NULL,
    "metric" TEXT NOT NULL,
    "status" TEXT NOT NULL,
    "limitsVersion" INTEGER,
    "lotCount" INTEGER NOT NULL,
    "summary" JSONB NOT NULL,
    "evaluatedAt" TIMESTAMPTZ(3) NOT NULL,

    CONSTRAINT "DriftChart_pkey" PRIMARY KEY ("id")
);

-- CreateTable
CREATE TABLE "BatchOutcome" (
    "batchId" UUID NOT NULL,
    "inputs" JSONB NOT NULL,
    "evaluatedAt" TIMESTAMPTZ(3) NOT NULL,

    CONSTRAINT "BatchOutcome_pkey" PRIMARY KEY ("batchId")
);

-- CreateTable
CREATE TABLE "LabComparison" (
    "id" UUID NOT NULL DEFAULT gen_random_uuid(),
    "labResultId" UUID NOT NULL,
    "batchId" UUID NOT NULL,
    "productSpecId" UUID NOT NULL,
    "quantity" TEXT NOT NULL,
    "measured" DOUBLE PRECISION,
    "measuredDetail" JSONB NOT NULL,
    "predictionId" UUID,
    "predictionVersion" INTEGER,
    "rawP05" DOUBLE PRECISION,
    "rawP50" DOUBLE PRECISION,
    "rawP95" DOUBLE PRECISION,
    "bandP05" DOUBLE PRECISION,
    "bandP50" DOUBLE PRECISION,
    "bandP95" DOUBLE PRECISION,
    "calibrationApplied" BOOLEAN NOT NULL DEFAULT false,
    "calibrationBefore" JSONB,
    "calibrationAfter" JSONB,
    "residual" DOUBLE PRECISION,
    "verdict" TEXT NOT NULL,
    "firstComparedAt" TIMESTAMPTZ(3) NOT NULL,
    "updatedAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,

    CONSTRAINT "LabComparison_pkey" PRIMARY KEY ("id"),
    CONSTRAINT "LabComparison_quantity_check" CHECK ("quantity" IN ('hardnessHV', 'tensileMPa', 'retainedAusteniteFraction')),
    CONSTRAINT "LabComparison_verdict_check" CHECK ("verdict" IN ('inside', 'above', 'below', 'no-prediction', 'not-comparable'))
);

-- CreateTable
CREATE TABLE "ProductCalibration" (
    "id" UUID NOT NULL DEFAULT gen_random_uuid(),
    "productSpecId" UUID NOT NULL,
    "quantity" TEXT NOT NULL,
    "method" TEXT NOT NULL,
    "n" INTEGER NOT NULL,
    "bias" DOUBLE PRECISION NOT NULL,
    "sd" DOUBLE PRECISION NOT NULL,
    "dof" DOUBLE PRECISION NOT NULL,
    "kappa" DOUBLE PRECISION NOT NULL,
    "inForce" BOOLEAN NOT NULL,
    "state" JSONB NOT NULL,
    "createdAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    "updatedAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,

    CONSTRAINT "ProductCalibration_pkey" PRIMARY KEY ("id"),
    CONSTRAINT "ProductCalibration_quantity_check" CHECK ("quantity" IN ('hardnessHV', 'tensileMPa', 'retainedAusteniteFraction'))
);

-- CreateIndex
CREATE UNIQUE INDEX "DriftValue_batchId_metric_key" ON "DriftValue"("batchId", "metric");

-- CreateIndex
CREATE INDEX "DriftValue_productSpecId_lineId_metric_orderAt_idx" ON "DriftValue"("productSpecId", "lineId", "metric", "orderAt");

-- CreateIndex
CREATE UNIQUE INDEX "DriftLimits_productSpecId_lineId_metric_version_key" ON "DriftLimits"("productSpecId", "lineId", "metric", "version");

-- CreateIndex
CREATE UNIQUE INDEX "DriftChart_productSpecId_lineId_metric_key" ON "DriftChart"("productSpecId", "lineId", "metric");

-- CreateIndex
CREATE UNIQUE INDEX "LabComparison_labResultId_quantity_key" ON "LabComparison"("labResultId", "quantity");

-- CreateIndex
CREATE INDEX "LabComparison_productSpecId_quantity_firstComparedAt_idx" ON "LabComparison"("productSpecId", "quantity", "firstComparedAt");

-- CreateIndex
CREATE INDEX "LabComparison_batchId_idx" ON "LabComparison"("batchId");

-- CreateIndex
CREATE UNIQUE INDEX "ProductCalibration_productSpecId_quantity_key" ON "ProductCalibration"("productSpecId", "quantity");

-- AddForeignKey
ALTER TABLE "DriftValue" ADD CONSTRAINT "DriftValue_batchId_fkey" FOREIGN KEY ("batchId") REFERENCES "Batch"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "DriftValue" ADD CONSTRAINT "DriftValue_productSpecId_fkey" FOREIGN KEY ("productSpecId") REFERENCES "ProductSpec"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "DriftValue" ADD CONSTRAINT "DriftValue_lineId_fkey" FOREIGN KEY ("lineId") REFERENCES "Line"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "DriftLimits" ADD CONSTRAINT "DriftLimits_productSpecId_fkey" FOREIGN KEY ("productSpecId") REFERENCES "ProductSpec"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "DriftLimits" ADD CONSTRAINT "DriftLimits_lineId_fkey" FOREIGN KEY ("lineId") REFERENCES "Line"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "DriftChart" ADD CONSTRAINT "DriftChart_productSpecId_fkey" FOREIGN KEY ("productSpecId") REFERENCES "ProductSpec"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "DriftChart" ADD CONSTRAINT "DriftChart_lineId_fkey" FOREIGN KEY ("lineId") REFERENCES "Line"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "BatchOutcome" ADD CONSTRAINT "BatchOutcome_batchId_fkey" FOREIGN KEY ("batchId") REFERENCES "Batch"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "LabComparison" ADD CONSTRAINT "LabComparison_labResultId_fkey" FOREIGN KEY ("labResultId") REFERENCES "LabResult"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "LabComparison" ADD CONSTRAINT "LabComparison_batchId_fkey" FOREIGN KEY ("batchId") REFERENCES "Batch"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "LabComparison" ADD CONSTRAINT "LabComparison_productSpecId_fkey" FOREIGN KEY ("productSpecId") REFERENCES "ProductSpec"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "ProductCalibration" ADD CONSTRAINT "ProductCalibration_productSpecId_fkey" FOREIGN KEY ("productSpecId") REFERENCES "ProductSpec"("id") ON DELETE RESTRICT ON UPDATE CASCADE;
