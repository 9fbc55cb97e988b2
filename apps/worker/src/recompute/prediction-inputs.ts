import { loadProductCalibrations, type Prisma, type PrismaClient, type RecomputeInputs } from '@ausline/db';
import { PREDICTION_STATE_FORMAT, type PredictionState, type ProductCalibrations } from '@ausline/compliance';

/**
 * What the prediction step reads besides the recompute inputs: the batch's section and schedule, its heat, the
 * line's calibrated bath heat transfer, the agitator around the immersion, the product's lab calibrations in force
 * (they correct the predicted bands), and the latest stored prediction (its state is advanced, its
 * digest/phase/verdicts decide what to store).
 */

type Db = PrismaClient | Prisma.TransactionClient;

export interface LatestPrediction {
  id: string;
  version: number;
  modelVersion: string;
  inputDigest: string;
  phase: string;
  milestone: string | null;
  /** criterion:verdict pairs of the stored verdicts (sorted), as predictBatch computes them. */
  verdictSignature: string;
  ceilingReached: boolean;
  /** When the recompute that stored it read its inputs (database clock, epoch ms); null if unknown. */
  readAtMs: number | null;
  state: PredictionState | null;
}

export interface PredictionStepInputs {
  batch: { sectionShape: 'PLATE' | 'CYLINDER' | 'SQUARE_BAR'; sectionSizeMm: number; scheduledHoldMin: number | null };
  heat: { id: string; revision: number; material: 'STEEL' | 'DUCTILE_IRON'; chemistryWtPct: Record<string, number> };
  lineHeatTransfer: Record<string, number> | null;
  agitatorRpm: Array<{ tMs: number; value: number }>;
  latest: LatestPrediction | null;
  uncertainty: { samples: number; seed: number };
  /** INTO_BATH of the next load into the same bath (this load's log cannot run past it); null if none yet. */
  nextLoadIntoBathMs: number | null;
  /** The product spec's running lab calibrations in force, read as of this recompute. */
  labCalibration: ProductCalibrations;
}

/** Agitator readings from this long before INTO_BATH to this long after it decide the agitation of the quench. */
const AGITATOR_WINDOW_MS = { before: 60_000, after: 120_000 };

export async function loadPredictionInputs(db: Db, inputs: RecomputeInputs, uncertainty: { samples: number; seed: number }): Promise<PredictionStepInputs | null> {
  const intoBathMs = inputs.events.intoBathMs;
  if (intoBathMs === undefined) return null;
  const batch = await db.batch.findUnique({
    where: { id: inputs.batch.id },
    select: {
      sectionShape: true,
      sectionSizeMm: true,
      scheduledHoldMin: true,
      heat: { select: { id: true, revision: true, material: true, chemistryWtPct: true } },
      line: { select: { hCoefficientByAgitation: true } },
    },
  });
  if (!batch) return null;
  const agitators = await db.channel.findMany({
    where: { role: 'BATH_AGITATION', equipment: { lineId: inputs.batch.lineId, kind: 'BATH' } },
    select: { id: true },
  });
  const agitatorRpm = agitators.length
    ? (
        await db.sample.findMany({
          where: {
            channelId: { in: agitators.map((a) => a.id) },
            t: { gte: new Date(intoBathMs - AGITATOR_WINDOW_MS.before), lte: new Date(intoBathMs + AGITATOR_WINDOW_MS.after) },
          },
          orderBy: [{ t: 'asc' }, { channelId: 'asc' }],
          select: { t: true, value: true },
        })
      ).map((s) => ({ tMs: s.t.getTime(), value: s.value }))
    : [];
  const row = await db.prediction.findFirst({ where: { batchId: inputs.batch.id }, orderBy: { version: 'desc' } });
  // A load whose OUT_OF_BATH is missing must not take the next load's bath log as its own.
  let nextLoadIntoBathMs: number | null = null;
  if (inputs.events.outOfBathMs === undefined) {
    const into = await db.loadEvent.findUnique({ where: { batchId_kind: { batchId: inputs.batch.id, kind: 'INTO_BATH' } }, select: { equipmentId: true } });
    if (into) {
      const next = await db.loadEvent.findFirst({
        where: { kind: 'INTO_BATH', equipmentId: into.equipmentId, at: { gt: new Date(intoBathMs) }, batchId: { not: inputs.batch.id } },
        orderBy: { at: 'asc' },
        select: { at: true },
      });
      nextLoadIntoBathMs = next ? next.at.getTime() : null;
    }
  }
  return {
    batch: { sectionShape: batch.sectionShape, sectionSizeMm: batch.sectionSizeMm, scheduledHoldMin: batch.scheduledHoldMin },
    heat: { id: batch.heat.id, revision: batch.heat.revision, material: batch.heat.material, chemistryWtPct: numbersOf(batch.heat.chemistryWtPct) },
    lineHeatTransfer: batch.line.hCoefficientByAgitation ? numbersOf(batch.line.hCoefficientByAgitation) : null,
    agitatorRpm,
    latest: row ? latestOf(row) : null,
    uncertainty,
    nextLoadIntoBathMs,
    labCalibration: await loadProductCalibrations(db, inputs.batch.productSpecId),
  };
}

function numbersOf(json: unknown): Record<string, number> {
  const out: Record<string, number> = {};
  if (json && typeof json === 'object' && !Array.isArray(json)) {
    for (const [k, v] of Object.entries(json as Record<string, unknown>)) if (typeof v === 'number' && Number.isFinite(v)) out[k] = v;
  }
  return out;
}

function latestOf(row: { id: string; version: number; modelVersion: string; inputDigest: string; phase: string; milestone: string | null; result: unknown; state: unknown }): LatestPrediction {
  const result = (row.result && typeof row.result === 'object' ? row.result : {}) as { verdicts?: unknown; basis?: { ceilingReachedInLog?: unknown; inputsReadAt?: unknown } };
  const readAt = typeof result.basis?.inputsReadAt === 'string' ? Date.parse(result.basis.inputsReadAt) : Number.NaN;
  const verdicts = Array.isArray(result.verdicts) ? (result.verdicts as Array<{ criterion?: unknown; verdict?: unknown }>) : [];
  const state = row.state && typeof row.state === 'object' && (row.state as { format?: unknown }).format === PREDICTION_STATE_FORMAT ? (row.state as PredictionState) : null;
  return {
    id: row.id,
    version: row.version,
    modelVersion: row.modelVersion,
    inputDigest: row.inputDigest,
    phase: row.phase,
    milestone: row.milestone,
    verdictSignature: verdicts
      .map((v) => `${String(v.criterion)}:${String(v.verdict)}`)
      .sort()
      .join(','),
    ceilingReached: result.basis?.ceilingReachedInLog === true,
    readAtMs: Number.isFinite(readAt) ? readAt : null,
    state,
  };
}
