import { Injectable } from '@nestjs/common';
import {
  CALIBRATED_QUANTITIES,
  CALIBRATION_METHOD,
  DEFAULT_DISCOUNT,
  DEFAULT_MIN_RESULTS,
  PRIOR_SPREAD_WEIGHT,
  PRIOR_WEIGHT,
  QUANTITY_UNIT,
  calibrateBand,
  isCalibrationState,
  rawPredictedBand,
  summarizeExclusions,
  type Band,
  type CalibrationExclusion,
  type CalibratedQuantity,
} from '@ausline/compliance';
import type { PrismaClient } from '@ausline/db';
import { notFound } from '../http/errors.js';
import { InjectPrisma } from '../prisma.provider.js';

/** How many of the product's most recent predicted batches show the calibration's effect. */
const EFFECT_BATCHES = 20;

const r = (x: number, digits = 4) => Math.round(x * 10 ** digits) / 10 ** digits;
const width = (b: Band) => b.p95 - b.p05;

/**
 * GET /v1/specs/:id/calibration: the running calibration of each predicted quantity of a product (bias and
 * spread of measured − predicted p50), every lab comparison in calibration order with the band it was judged
 * by, and the calibration's effect on the product's latest predictions: raw ensemble band against the
 * calibrated band (how much narrower, how far moved).
 */
@Injectable()
export class CalibrationQueryService {
  constructor(@InjectPrisma() private readonly prisma: PrismaClient) {}

  async forSpec(specId: string) {
    const spec = await this.prisma.productSpec.findUnique({ where: { id: specId }, select: { id: true, code: true, name: true } });
    if (!spec) throw notFound(`Product spec ${specId} does not exist`);
    const calibrations = await this.prisma.productCalibration.findMany({ where: { productSpecId: specId } });
    const comparisons = await this.prisma.labComparison.findMany({
      where: { productSpecId: specId },
      include: { labResult: { select: { externalRef: true, kind: true, measuredAt: true, postedAt: true } }, batch: { select: { code: true } } },
    });
    const latest = await this.prisma.$queryRaw<{ batchId: string; code: string; version: number; predictionId: string; bands: unknown; properties: unknown }[]>`
      SELECT * FROM (
        SELECT DISTINCT ON (p."batchId") p."batchId", b."code", p."version", p."id" AS "predictionId", p."result"->'bands' AS "bands",
               p."result"->'properties' AS "properties", b."createdAt"
        FROM "Prediction" p
        JOIN "Batch" b ON b."id" = p."batchId"
        JOIN "ProductSpecVersion" sv ON sv."id" = b."specVersionId"
        WHERE sv."specId" = ${specId}::uuid
        ORDER BY p."batchId", p."version" DESC
      ) x
      ORDER BY x."createdAt" DESC, x."code" DESC
      LIMIT ${EFFECT_BATCHES}`;

    const quantities = CALIBRATED_QUANTITIES.map((quantity) => {
      const cal = calibrations.find((c) => c.quantity === quantity) ?? null;
      const state = cal && isCalibrationState(cal.state) ? cal.state : null;
      const rows = comparisons
        .filter((c) => c.quantity === quantity)
        .sort((a, b) => {
          const ta = (a.labResult.measuredAt ?? a.labResult.postedAt).getTime();
          const tb = (b.labResult.measuredAt ?? b.labResult.postedAt).getTime();
          return a.firstComparedAt.getTime() - b.firstComparedAt.getTime() || ta - tb || (a.labResultId < b.labResultId ? -1 : 1);
        });
      const effect = latest
        .map((p) => {
          const raw = rawPredictedBand({ bands: p.bands, properties: p.properties }, quantity);
          if (!raw) return null;
          const c = calibrateBand(raw.band, state, { quantity });
          return {
            batchId: p.batchId,
            batchCode: p.code,
            predictionId: p.predictionId,
            predictionVersion: p.version,
            raw: raw.band,
            calibrated: c.band,
            applied: c.applied,
            rawWidth: r(width(raw.band)),
            calibratedWidth: r(width(c.band)),
            /** Percent narrower (negative: wider). */
            narrowedPct: width(raw.band) > 0 ? r((100 * (width(raw.band) - width(c.band))) / width(raw.band), 2) : null,
            /** Calibrated p50 − raw p50. */
            shift: r(c.band.p50 - raw.band.p50),
          };
        })
        .filter((x): x is NonNullable<typeof x> => x !== null);
      const mean = (xs: number[]) => (xs.length ? r(xs.reduce((a, b) => a + b, 0) / xs.length, 3) : null);
      return {
        quantity,
        unit: QUANTITY_UNIT[quantity as CalibratedQuantity],
        calibration: cal ? { n: cal.n, bias: cal.bias, sd: cal.sd, dof: cal.dof, kappa: cal.kappa, inForce: cal.inForce, updatedAt: cal.updatedAt } : null,
        /** Results judged but left out of the calibration for an assignable cause, in all and by rule. */
        excluded: summarizeExclusions(rows.map((c) => c.excludedBy as CalibrationExclusion | null)),
        history: rows.map((c) => ({
          labResultId: c.labResultId,
          externalRef: c.labResult.externalRef,
          labKind: c.labResult.kind,
          batchId: c.batchId,
          batchCode: c.batch.code,
          measured: c.measured,
          measuredDetail: c.measuredDetail,
          predictionVersion: c.predictionVersion,
          raw: c.rawP05 === null ? null : { p05: c.rawP05, p50: c.rawP50, p95: c.rawP95 },
          band: c.bandP05 === null ? null : { p05: c.bandP05, p50: c.bandP50, p95: c.bandP95 },
          calibrationApplied: c.calibrationApplied,
          calibrationBefore: c.calibrationBefore,
          calibrationAfter: c.calibrationAfter,
          residual: c.residual,
          verdict: c.verdict,
          excludedBy: c.excludedBy,
          firstComparedAt: c.firstComparedAt,
        })),
        effect: {
          batches: effect,
          meanRawWidth: mean(effect.map((e) => e.rawWidth)),
          meanCalibratedWidth: mean(effect.map((e) => e.calibratedWidth)),
          meanNarrowedPct: mean(effect.map((e) => e.narrowedPct).filter((x): x is number => x !== null)),
          meanShift: mean(effect.map((e) => e.shift)),
        },
      };
    });
    return {
      spec,
      method: {
        name: CALIBRATION_METHOD,
        residual: 'measured − raw predicted p50 of the batch’s latest prediction, in the quantity’s unit (hardness in HV after ASTM E140 conversion)',
        prior: { bias: 0, biasWeight: PRIOR_WEIGHT, spread: 'the first compared prediction’s ensemble spread (p95 − p05)/(2·1.645)', spreadWeight: PRIOR_SPREAD_WEIGHT },
        discountPerResult: DEFAULT_DISCOUNT,
        effectiveMemoryResults: Math.round(1 / (1 - DEFAULT_DISCOUNT)),
        minResults: DEFAULT_MIN_RESULTS,
        band: 'p50 + bias ± t(0.95, ν)·s·√(1 + 1/κ) (Student-t predictive); the raw ensemble band until minResults results',
        exclusions:
          'a result of a load with a MAJOR or CRITICAL process-window deviation still present (an assignable cause; Montgomery, Introduction to Statistical Quality Control, on revising control limits) is judged by its band but left out of the calibration',
      },
      quantities,
    };
  }
}
