import { CALIBRATED_QUANTITIES, isCalibrationState, type CalibratedQuantity, type ProductCalibrations } from '@ausline/compliance';
import type { Prisma, PrismaClient } from '../generated/prisma/client.js';

/**
 * The running lab calibrations of a product spec that correct bands now (ProductCalibration rows with inForce), by
 * quantity: the worker's prediction step and the api's heat advice pass them to libs/compliance (labCalibration),
 * which corrects every evaluated band by them. A row whose stored state does not parse is left out (raw bands).
 */
export async function loadProductCalibrations(db: PrismaClient | Prisma.TransactionClient, productSpecId: string): Promise<ProductCalibrations> {
  const rows = await db.productCalibration.findMany({ where: { productSpecId, inForce: true } });
  const out: ProductCalibrations = {};
  for (const r of rows) {
    if ((CALIBRATED_QUANTITIES as readonly string[]).includes(r.quantity) && isCalibrationState(r.state)) out[r.quantity as CalibratedQuantity] = r.state;
  }
  return out;
}
