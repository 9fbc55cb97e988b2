-- Ausline initial schema. Written by hand to match prisma/schema.prisma exactly (Prisma's naming:
-- quoted PascalCase tables, "Model_pkey", "Model_field_key", "Model_field_idx", "Model_field_fkey").
-- Applied by `npm run db:migrate` (libs/db runMigrations) or `prisma migrate deploy`.

-- CreateEnum
CREATE TYPE "EquipmentKind" AS ENUM ('FURNACE', 'BATH');

-- CreateEnum
CREATE TYPE "ChannelQuantity" AS ENUM ('TEMPERATURE_C', 'AGITATION_RPM', 'LEVEL_MM', 'WATER_CONTENT_PCT', 'CARBON_POTENTIAL_PCT');

-- CreateEnum
CREATE TYPE "ChannelRole" AS ENUM ('FURNACE_ZONE', 'LOAD_TC', 'BATH_TC', 'BATH_AGITATION', 'BATH_LEVEL', 'BATH_WATER', 'FURNACE_ATMOSPHERE', 'OTHER');

-- CreateEnum
CREATE TYPE "Material" AS ENUM ('STEEL', 'DUCTILE_IRON');

-- CreateEnum
CREATE TYPE "SpecStatus" AS ENUM ('DRAFT', 'APPROVED', 'SUPERSEDED');

-- CreateEnum
CREATE TYPE "SectionShape" AS ENUM ('PLATE', 'CYLINDER', 'SQUARE_BAR');

-- CreateEnum
CREATE TYPE "BatchStatus" AS ENUM ('PLANNED', 'IN_FURNACE', 'IN_TRANSFER', 'IN_BATH', 'DONE');

-- CreateEnum
CREATE TYPE "LoadEventKind" AS ENUM ('CHARGED', 'OUT_OF_FURNACE', 'INTO_BATH', 'OUT_OF_BATH');

-- CreateEnum
CREATE TYPE "LabResultKind" AS ENUM ('HARDNESS', 'RETAINED_AUSTENITE', 'TENSILE', 'IMPACT');

-- CreateEnum
CREATE TYPE "Severity" AS ENUM ('MINOR', 'MAJOR', 'CRITICAL');

-- CreateEnum
CREATE TYPE "DeviationStatus" AS ENUM ('OPEN', 'ACKNOWLEDGED', 'DISPOSITIONED', 'CLOSED', 'CLEARED');

-- CreateEnum
CREATE TYPE "Disposition" AS ENUM ('USE_AS_IS', 'RETREAT', 'SCRAP', 'CONCESSION');

-- CreateEnum
CREATE TYPE "Role" AS ENUM ('METALLURGIST', 'QUALITY', 'ADMIN');

-- CreateEnum
CREATE TYPE "ApiKeyScope" AS ENUM ('EQUIPMENT', 'LAB');

-- CreateTable
CREATE TABLE "Line" (
    "id" UUID NOT NULL DEFAULT gen_random_uuid(),
    "code" TEXT NOT NULL,
    "name" TEXT NOT NULL,
    "timeZone" TEXT NOT NULL,
    "hCoefficientByAgitation" JSONB,
    "createdAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    "updatedAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,

    CONSTRAINT "Line_pkey" PRIMARY KEY ("id")
);

-- CreateTable
CREATE TABLE "Equipment" (
    "id" UUID NOT NULL DEFAULT gen_random_uuid(),
    "lineId" UUID NOT NULL,
    "kind" "EquipmentKind" NOT NULL,
    "code" TEXT NOT NULL,
    "name" TEXT NOT NULL,
    "createdAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,

    CONSTRAINT "Equipment_pkey" PRIMARY KEY ("id")
);

-- CreateTable
CREATE TABLE "Channel" (
    "id" UUID NOT NULL DEFAULT gen_random_uuid(),
    "equipmentId" UUID NOT NULL,
    "code" TEXT NOT NULL,
    "quantity" "ChannelQuantity" NOT NULL,
    "role" "ChannelRole" NOT NULL,
    "createdAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,

    CONSTRAINT "Channel_pkey" PRIMARY KEY ("id")
);

-- CreateTable
CREATE TABLE "Sample" (
    "channelId" UUID NOT NULL,
    "t" TIMESTAMPTZ(3) NOT NULL,
    "value" DOUBLE PRECISION NOT NULL,

    CONSTRAINT "Sample_pkey" PRIMARY KEY ("channelId","t")
);

-- CreateTable
CREATE TABLE "Heat" (
    "id" UUID NOT NULL DEFAULT gen_random_uuid(),
    "heatNumber" TEXT NOT NULL,
    "material" "Material" NOT NULL,
    "grade" TEXT,
    "chemistryWtPct" JSONB NOT NULL,
    "source" TEXT NOT NULL,
    "revision" INTEGER NOT NULL DEFAULT 1,
    "createdAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    "updatedAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,

    CONSTRAINT "Heat_pkey" PRIMARY KEY ("id")
);

-- CreateTable
CREATE TABLE "HeatRevision" (
    "id" UUID NOT NULL DEFAULT gen_random_uuid(),
    "heatId" UUID NOT NULL,
    "revision" INTEGER NOT NULL,
    "material" "Material" NOT NULL,
    "grade" TEXT,
    "chemistryWtPct" JSONB NOT NULL,
    "source" TEXT NOT NULL,
    "changedBy" TEXT NOT NULL,
    "changedAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    "reason" TEXT NOT NULL,

    CONSTRAINT "HeatRevision_pkey" PRIMARY KEY ("id")
);

-- CreateTable
CREATE TABLE "ProductSpec" (
    "id" UUID NOT NULL DEFAULT gen_random_uuid(),
    "code" TEXT NOT NULL,
    "name" TEXT NOT NULL,
    "material" "Material" NOT NULL,
    "description" TEXT,
    "createdAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,

    CONSTRAINT "ProductSpec_pkey" PRIMARY KEY ("id")
);

-- CreateTable
CREATE TABLE "ProductSpecVersion" (
    "id" UUID NOT NULL DEFAULT gen_random_uuid(),
    "specId" UUID NOT NULL,
    "version" INTEGER NOT NULL,
    "status" "SpecStatus" NOT NULL DEFAULT 'DRAFT',
    "createdBy" TEXT,
    "approvedBy" TEXT,
    "approvedAt" TIMESTAMPTZ(3),
    "chemistryLimits" JSONB NOT NULL,
    "processWindow" JSONB NOT NULL,
    "acceptanceCriteria" JSONB NOT NULL,
    "createdAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,

    CONSTRAINT "ProductSpecVersion_pkey" PRIMARY KEY ("id")
);

-- CreateTable
CREATE TABLE "Batch" (
    "id" UUID NOT NULL DEFAULT gen_random_uuid(),
    "code" TEXT NOT NULL,
    "lineId" UUID NOT NULL,
    "heatId" UUID NOT NULL,
    "specVersionId" UUID NOT NULL,
    "partCount" INTEGER NOT NULL,
    "weightKg" DOUBLE PRECISION NOT NULL,
    "sectionShape" "SectionShape" NOT NULL,
    "sectionSizeMm" DOUBLE PRECISION NOT NULL,
    "status" "BatchStatus" NOT NULL DEFAULT 'PLANNED',
    "scheduledHoldMin" DOUBLE PRECISION,
    "stale" BOOLEAN NOT NULL DEFAULT false,
    "staleSince" TIMESTAMPTZ(3),
    "createdAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    "updatedAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,

    CONSTRAINT "Batch_pkey" PRIMARY KEY ("id")
);

-- CreateTable
CREATE TABLE "LoadEvent" (
    "id" UUID NOT NULL DEFAULT gen_random_uuid(),
    "batchId" UUID NOT NULL,
    "kind" "LoadEventKind" NOT NULL,
    "at" TIMESTAMPTZ(3) NOT NULL,
    "equipmentId" UUID NOT NULL,
    "receivedAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,

    CONSTRAINT "LoadEvent_pkey" PRIMARY KEY ("id")
);

-- CreateTable
CREATE TABLE "LabResult" (
    "id" UUID NOT NULL DEFAULT gen_random_uuid(),
    "batchId" UUID NOT NULL,
    "kind" "LabResultKind" NOT NULL,
    "values" JSONB NOT NULL,
    "scale" TEXT,
    "testStandard" TEXT,
    "externalRef" TEXT NOT NULL,
    "measuredAt" TIMESTAMPTZ(3),
    "postedAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,

    CONSTRAINT "LabResult_pkey" PRIMARY KEY ("id")
);

-- CreateTable
CREATE TABLE "Prediction" (
    "id" UUID NOT NULL DEFAULT gen_random_uuid(),
    "batchId" UUID NOT NULL,
    "version" INTEGER NOT NULL,
    "modelVersion" TEXT NOT NULL,
    "inputDigest" TEXT NOT NULL,
    "watermark" TIMESTAMPTZ(3),
    "phase" TEXT NOT NULL,
    "result" JSONB NOT NULL,
    "state" JSONB NOT NULL,
    "createdAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,

    CONSTRAINT "Prediction_pkey" PRIMARY KEY ("id")
);

-- CreateTable
CREATE TABLE "Deviation" (
    "id" UUID NOT NULL DEFAULT gen_random_uuid(),
    "batchId" UUID,
    "lineId" UUID NOT NULL,
    "productSpecId" UUID,
    "rule" TEXT NOT NULL,
    "severity" "Severity" NOT NULL,
    "status" "DeviationStatus" NOT NULL DEFAULT 'OPEN',
    "disposition" "Disposition",
    "dispositionReason" TEXT,
    "signer" TEXT,
    "details" JSONB NOT NULL,
    "dedupKey" TEXT NOT NULL,
    "openedAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    "updatedAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,

    CONSTRAINT "Deviation_pkey" PRIMARY KEY ("id")
);

-- CreateTable
CREATE TABLE "DeviationAudit" (
    "id" UUID NOT NULL DEFAULT gen_random_uuid(),
    "deviationId" UUID NOT NULL,
    "at" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    "actor" TEXT NOT NULL,
    "fromStatus" "DeviationStatus",
    "toStatus" "DeviationStatus" NOT NULL,
    "reason" TEXT,

    CONSTRAINT "DeviationAudit_pkey" PRIMARY KEY ("id")
);

-- CreateTable
CREATE TABLE "User" (
    "id" UUID NOT NULL DEFAULT gen_random_uuid(),
    "email" TEXT NOT NULL,
    "displayName" TEXT NOT NULL,
    "passwordHash" TEXT NOT NULL,
    "roles" "Role"[] DEFAULT ARRAY[]::"Role"[],
    "active" BOOLEAN NOT NULL DEFAULT true,
    "createdAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    "updatedAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,

    CONSTRAINT "User_pkey" PRIMARY KEY ("id")
);

-- CreateTable
CREATE TABLE "Session" (
    "id" UUID NOT NULL DEFAULT gen_random_uuid(),
    "userId" UUID NOT NULL,
    "tokenHash" TEXT NOT NULL,
    "expiresAt" TIMESTAMPTZ(3) NOT NULL,
    "createdAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,

    CONSTRAINT "Session_pkey" PRIMARY KEY ("id")
);

-- CreateTable
CREATE TABLE "ApiKey" (
    "id" UUID NOT NULL DEFAULT gen_random_uuid(),
    "prefix" TEXT NOT NULL,
    "secretHash" TEXT NOT NULL,
    "label" TEXT NOT NULL,
    "scope" "ApiKeyScope" NOT NULL,
    "createdAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    "revokedAt" TIMESTAMPTZ(3),

    CONSTRAINT "ApiKey_pkey" PRIMARY KEY ("id")
);

-- CreateTable
CREATE TABLE "ApiKeyEquipment" (
    "apiKeyId" UUID NOT NULL,
    "equipmentId" UUID NOT NULL,

    CONSTRAINT "ApiKeyEquipment_pkey" PRIMARY KEY ("apiKeyId","equipmentId")
);

-- CreateTable
CREATE TABLE "IdempotencyRecord" (
    "id" UUID NOT NULL DEFAULT gen_random_uuid(),
    "principal" TEXT NOT NULL,
    "key" TEXT NOT NULL,
    "requestHash" TEXT NOT NULL,
    "responseStatus" INTEGER,
    "responseBody" JSONB,
    "createdAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    "expiresAt" TIMESTAMPTZ(3) NOT NULL,

    CONSTRAINT "IdempotencyRecord_pkey" PRIMARY KEY ("id")
);

-- CreateIndex
CREATE UNIQUE INDEX "Line_code_key" ON "Line"("code");

-- CreateIndex
CREATE UNIQUE INDEX "Equipment_code_key" ON "Equipment"("code");

-- CreateIndex
CREATE INDEX "Equipment_lineId_idx" ON "Equipment"("lineId");

-- CreateIndex
CREATE UNIQUE INDEX "Channel_equipmentId_code_key" ON "Channel"("equipmentId", "code");

-- CreateIndex
CREATE UNIQUE INDEX "Heat_heatNumber_key" ON "Heat"("heatNumber");

-- CreateIndex
CREATE UNIQUE INDEX "HeatRevision_heatId_revision_key" ON "HeatRevision"("heatId", "revision");

-- CreateIndex
CREATE UNIQUE INDEX "ProductSpec_code_key" ON "ProductSpec"("code");

-- CreateIndex
CREATE UNIQUE INDEX "ProductSpecVersion_specId_version_key" ON "ProductSpecVersion"("specId", "version");

-- CreateIndex
CREATE UNIQUE INDEX "Batch_code_key" ON "Batch"("code");

-- CreateIndex
CREATE INDEX "Batch_lineId_createdAt_idx" ON "Batch"("lineId", "createdAt");

-- CreateIndex
CREATE INDEX "Batch_heatId_idx" ON "Batch"("heatId");

-- CreateIndex
CREATE INDEX "Batch_specVersionId_idx" ON "Batch"("specVersionId");

-- CreateIndex
CREATE INDEX "Batch_status_idx" ON "Batch"("status");

-- CreateIndex
CREATE INDEX "Batch_stale_staleSince_idx" ON "Batch"("stale", "staleSince");

-- CreateIndex
CREATE INDEX "LoadEvent_equipmentId_at_idx" ON "LoadEvent"("equipmentId", "at");

-- CreateIndex
CREATE UNIQUE INDEX "LoadEvent_batchId_kind_key" ON "LoadEvent"("batchId", "kind");

-- CreateIndex
CREATE UNIQUE INDEX "LabResult_batchId_kind_externalRef_key" ON "LabResult"("batchId", "kind", "externalRef");

-- CreateIndex
CREATE UNIQUE INDEX "Prediction_batchId_version_key" ON "Prediction"("batchId", "version");

-- CreateIndex
CREATE UNIQUE INDEX "Deviation_dedupKey_key" ON "Deviation"("dedupKey");

-- CreateIndex
CREATE INDEX "Deviation_openedAt_idx" ON "Deviation"("openedAt");

-- CreateIndex
CREATE INDEX "Deviation_lineId_openedAt_idx" ON "Deviation"("lineId", "openedAt");

-- CreateIndex
CREATE INDEX "Deviation_batchId_idx" ON "Deviation"("batchId");

-- CreateIndex
CREATE INDEX "Deviation_productSpecId_openedAt_idx" ON "Deviation"("productSpecId", "openedAt");

-- CreateIndex
CREATE INDEX "Deviation_status_openedAt_idx" ON "Deviation"("status", "openedAt");

-- CreateIndex
CREATE INDEX "DeviationAudit_deviationId_at_idx" ON "DeviationAudit"("deviationId", "at");

-- CreateIndex
CREATE UNIQUE INDEX "User_email_key" ON "User"("email");

-- CreateIndex
CREATE UNIQUE INDEX "Session_tokenHash_key" ON "Session"("tokenHash");

-- CreateIndex
CREATE INDEX "Session_userId_idx" ON "Session"("userId");

-- CreateIndex
CREATE INDEX "Session_expiresAt_idx" ON "Session"("expiresAt");

-- CreateIndex
CREATE UNIQUE INDEX "ApiKey_prefix_key" ON "ApiKey"("prefix");

-- CreateIndex
CREATE INDEX "ApiKeyEquipment_equipmentId_idx" ON "ApiKeyEquipment"("equipmentId");

-- CreateIndex
CREATE INDEX "IdempotencyRecord_expiresAt_idx" ON "IdempotencyRecord"("expiresAt");

-- CreateIndex
CREATE UNIQUE INDEX "IdempotencyRecord_principal_key_key" ON "IdempotencyRecord"("principal", "key");

-- AddForeignKey
ALTER TABLE "Equipment" ADD CONSTRAINT "Equipment_lineId_fkey" FOREIGN KEY ("lineId") REFERENCES "Line"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "Channel" ADD CONSTRAINT "Channel_equipmentId_fkey" FOREIGN KEY ("equipmentId") REFERENCES "Equipment"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "Sample" ADD CONSTRAINT "Sample_channelId_fkey" FOREIGN KEY ("channelId") REFERENCES "Channel"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "HeatRevision" ADD CONSTRAINT "HeatRevision_heatId_fkey" FOREIGN KEY ("heatId") REFERENCES "Heat"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "ProductSpecVersion" ADD CONSTRAINT "ProductSpecVersion_specId_fkey" FOREIGN KEY ("specId") REFERENCES "ProductSpec"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "Batch" ADD CONSTRAINT "Batch_lineId_fkey" FOREIGN KEY ("lineId") REFERENCES "Line"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "Batch" ADD CONSTRAINT "Batch_heatId_fkey" FOREIGN KEY ("heatId") REFERENCES "Heat"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "Batch" ADD CONSTRAINT "Batch_specVersionId_fkey" FOREIGN KEY ("specVersionId") REFERENCES "ProductSpecVersion"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "LoadEvent" ADD CONSTRAINT "LoadEvent_batchId_fkey" FOREIGN KEY ("batchId") REFERENCES "Batch"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "LoadEvent" ADD CONSTRAINT "LoadEvent_equipmentId_fkey" FOREIGN KEY ("equipmentId") REFERENCES "Equipment"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "LabResult" ADD CONSTRAINT "LabResult_batchId_fkey" FOREIGN KEY ("batchId") REFERENCES "Batch"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "Prediction" ADD CONSTRAINT "Prediction_batchId_fkey" FOREIGN KEY ("batchId") REFERENCES "Batch"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "Deviation" ADD CONSTRAINT "Deviation_batchId_fkey" FOREIGN KEY ("batchId") REFERENCES "Batch"("id") ON DELETE SET NULL ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "Deviation" ADD CONSTRAINT "Deviation_lineId_fkey" FOREIGN KEY ("lineId") REFERENCES "Line"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "Deviation" ADD CONSTRAINT "Deviation_productSpecId_fkey" FOREIGN KEY ("productSpecId") REFERENCES "ProductSpec"("id") ON DELETE SET NULL ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "DeviationAudit" ADD CONSTRAINT "DeviationAudit_deviationId_fkey" FOREIGN KEY ("deviationId") REFERENCES "Deviation"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "Session" ADD CONSTRAINT "Session_userId_fkey" FOREIGN KEY ("userId") REFERENCES "User"("id") ON DELETE CASCADE ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "ApiKeyEquipment" ADD CONSTRAINT "ApiKeyEquipment_apiKeyId_fkey" FOREIGN KEY ("apiKeyId") REFERENCES "ApiKey"("id") ON DELETE CASCADE ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "ApiKeyEquipment" ADD CONSTRAINT "ApiKeyEquipment_equipmentId_fkey" FOREIGN KEY ("equipmentId") REFERENCES "Equipment"("id") ON DELETE CASCADE ON UPDATE CASCADE;

-- Append-only audit trail (not expressible in schema.prisma): every change to a deviation is a new
-- DeviationAudit row; corrections add rows, they never rewrite old ones.
CREATE FUNCTION "DeviationAudit_reject_change"() RETURNS trigger
LANGUAGE plpgsql AS $$
BEGIN
    RAISE EXCEPTION 'DeviationAudit is append-only: % is not allowed', TG_OP
        USING ERRCODE = 'restrict_violation';
END;
$$;

CREATE TRIGGER "DeviationAudit_append_only"
    BEFORE UPDATE OR DELETE ON "DeviationAudit"
    FOR EACH ROW EXECUTE FUNCTION "DeviationAudit_reject_change"();

CREATE TRIGGER "DeviationAudit_no_truncate"
    BEFORE TRUNCATE ON "DeviationAudit"
    FOR EACH STATEMENT EXECUTE FUNCTION "DeviationAudit_reject_change"();
