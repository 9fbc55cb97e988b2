import { convertHardness, isHardnessScale, type ChartLot, type DriftMetric } from '@ausline/compliance';
import type { Prisma, PrismaClient } from '../generated/prisma/client.js';

/**
 * The lots of one drift chart in production order, in the unit the chart is drawn in now (hardness values
 * stored in another scale are converted by the E140 rows; one that cannot be is left out). The worker's
 * drift job charts them and the api redraws the same chart for the dashboard: both read them here.
 */
export async function chartLots(db: PrismaClient | Prisma.TransactionClient, productSpecId: string, lineId: string, metric: DriftMetric, unit: string): Promise<ChartLot[]> {
  const rows = await db.driftValue.findMany({
    where: { productSpecId, lineId, metric },
    select: { batchId: true, value: true, unit: true, orderAt: true, batch: { select: { code: true } } },
    orderBy: [{ orderAt: 'asc' }, { batchId: 'asc' }],
  });
  rows.sort((a, b) => a.orderAt.getTime() - b.orderAt.getTime() || (a.batch.code < b.batch.code ? -1 : a.batch.code > b.batch.code ? 1 : 0));
  const lots: ChartLot[] = [];
  for (const r of rows) {
    let value: number | null = r.value;
    if (r.unit !== unit) value = isHardnessScale(r.unit) && isHardnessScale(unit) ? convertHardness(r.value, r.unit, unit) : null;
    if (value !== null && Number.isFinite(value)) lots.push({ lotId: r.batch.code, batchId: r.batchId, value });
  }
  return lots;
}
