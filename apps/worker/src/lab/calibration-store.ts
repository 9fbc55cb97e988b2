import { CALIBRATED_QUANTITIES, isCalibrationState, type CalibratedQuantity, type ProductCalibrations } from '@ausline/compliance';
import type { Prisma, PrismaClient } from '@ausline/db';

/**
 * The running calibrations of a product spec that correct bands now (ProductCalibration rows with inForce),
 * by quantity. For the prediction step (PC1): pass them with the prediction's raw result to libs/compliance
 * calibratedPredictionBands(result, calibrations) for calibrated bands beside the raw ones, or its `.engine`
 * entries to the engine's calibration hook (finalizeBatch(state, { calibration: { bands } })), which can shift
 * and widen a band but not narrow it.
 */
export async function loadProductCalibrations(db: PrismaClient | Prisma.TransactionClient, productSpecId: string): Promise<ProductCalibrations> {
  const rows = await db.productCalibration.findMany({ where: { productSpecId, inForce: true } });
  const out: ProductCalibrations = {};
  for (const r of rows) {
    if ((CALIBRATED_QUANTITIES as readonly string[]).includes(r.quantity) && isCalibrationState(r.state)) out[r.quantity as CalibratedQuantity] = r.state;
  }
  return out;
}
