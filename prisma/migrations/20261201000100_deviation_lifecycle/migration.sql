-- Deviation lifecycle fields the worker and the API need (requested by F3): the channel that broke the
-- rule, a one-line message, whether the condition is still present, who acknowledged / dispositioned /
-- closed and when, the concession permit number, an optimistic version; the audit trail gets the action,
-- the kind of actor and the disposition. Severity enum renamed to DeviationSeverity.
-- NOT NULL columns without defaults are added here because no database holds deviations yet.

-- AlterEnum
ALTER TYPE "Severity" RENAME TO "DeviationSeverity";

-- CreateEnum
CREATE TYPE "ActorKind" AS ENUM ('USER', 'SYSTEM');

-- AlterTable
ALTER TABLE "Deviation" ADD COLUMN     "acknowledgedAt" TIMESTAMPTZ(3),
ADD COLUMN     "acknowledgedById" UUID,
ADD COLUMN     "channelId" UUID,
ADD COLUMN     "clearedAt" TIMESTAMPTZ(3),
ADD COLUMN     "closedAt" TIMESTAMPTZ(3),
ADD COLUMN     "closedById" UUID,
ADD COLUMN     "conditionPresent" BOOLEAN NOT NULL DEFAULT true,
ADD COLUMN     "dispositionRef" TEXT,
ADD COLUMN     "dispositionedAt" TIMESTAMPTZ(3),
ADD COLUMN     "dispositionedById" UUID,
ADD COLUMN     "lastEvaluatedAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
ADD COLUMN     "message" TEXT NOT NULL,
ADD COLUMN     "version" INTEGER NOT NULL DEFAULT 0;

-- AlterTable
ALTER TABLE "DeviationAudit" ADD COLUMN     "action" TEXT NOT NULL,
ADD COLUMN     "actorKind" "ActorKind" NOT NULL,
ADD COLUMN     "actorUserId" UUID,
ADD COLUMN     "details" JSONB,
ADD COLUMN     "disposition" "Disposition";

-- CreateIndex
CREATE INDEX "Deviation_rule_idx" ON "Deviation"("rule");

-- CreateIndex
CREATE INDEX "Deviation_severity_idx" ON "Deviation"("severity");

-- AddForeignKey
ALTER TABLE "Deviation" ADD CONSTRAINT "Deviation_channelId_fkey" FOREIGN KEY ("channelId") REFERENCES "Channel"("id") ON DELETE SET NULL ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "Deviation" ADD CONSTRAINT "Deviation_dispositionedById_fkey" FOREIGN KEY ("dispositionedById") REFERENCES "User"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "Deviation" ADD CONSTRAINT "Deviation_acknowledgedById_fkey" FOREIGN KEY ("acknowledgedById") REFERENCES "User"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "Deviation" ADD CONSTRAINT "Deviation_closedById_fkey" FOREIGN KEY ("closedById") REFERENCES "User"("id") ON DELETE RESTRICT ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "DeviationAudit" ADD CONSTRAINT "DeviationAudit_actorUserId_fkey" FOREIGN KEY ("actorUserId") REFERENCES "User"("id") ON DELETE RESTRICT ON UPDATE CASCADE;
