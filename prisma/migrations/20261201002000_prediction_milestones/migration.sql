-- Predictions without flooding (issue 4, PC1): per batch the rolling latest row is updated in place, and a row is
-- kept at each milestone (into bath, ceiling reached, out of bath, verdict change). `milestone` says why a row is
-- kept (NULL on the rolling latest), `updatedAt` when it last changed; only the latest row keeps the engine state,
-- so `state` becomes nullable (older rows are pruned to NULL).

-- AlterTable
ALTER TABLE "Prediction" ADD COLUMN     "milestone" TEXT,
ADD COLUMN     "updatedAt" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
ALTER COLUMN "state" DROP NOT NULL;
