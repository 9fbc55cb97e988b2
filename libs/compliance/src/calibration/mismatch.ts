// A lab result outside the predicted band of its batch: a model–process mismatch deviation (rule
// 'model-process-mismatch'). It says the record and the model disagree: either the model is off for
// this product (the calibration will learn it if it keeps happening) or the load saw something its logs
// do not show (a thermocouple reading wrong, a mixed-up coupon, a different heat). Classed MAJOR because
// the record itself is in doubt (libs/compliance README: MAJOR where the window or the record is broken).

import type { DeviationSeverity } from '../deviations/deviation-state.js';
import { QUANTITY_UNIT, type Band, type CalibratedQuantity } from './bands.js';
import type { CalibrationSummary } from './running.js';

export const MISMATCH_RULE = 'model-process-mismatch';

export interface MismatchInput {
  batchId: string;
  labResultId: string;
  labKind: string;
  externalRef: string;
  quantity: CalibratedQuantity;
  measured: number;
  measuredDetail: Record<string, unknown>;
  verdict: 'above' | 'below';
  rawBand: Band;
  band: Band;
  calibrationApplied: boolean;
  calibration: CalibrationSummary | null;
  predictionId: string;
  predictionVersion: number;
}

const QUANTITY_LABEL: Readonly<Record<CalibratedQuantity, string>> = {
  hardnessHV: 'Hardness',
  tensileMPa: 'Tensile strength Rm',
  retainedAusteniteFraction: 'Retained austenite',
};

function fmt(q: CalibratedQuantity, x: number): string {
  if (q === 'retainedAusteniteFraction') return `${(x * 100).toFixed(1)} vol%`;
  return `${Math.round(x)} ${QUANTITY_UNIT[q]}`;
}

export function mismatchDedupKey(batchId: string, labResultId: string, quantity: CalibratedQuantity): string {
  return `${batchId}:${MISMATCH_RULE}:${labResultId}:${quantity}`;
}

export function mismatchFinding(m: MismatchInput): { rule: typeof MISMATCH_RULE; severity: DeviationSeverity; dedupKey: string; channelId: null; message: string; details: Record<string, unknown> } {
  const d = m.measuredDetail;
  const how =
    m.quantity === 'hardnessHV' && typeof d.scale === 'string' && d.scale !== 'HV'
      ? ` (mean of ${d.readings} ${d.scale} readings, ${Number(d.meanInScale).toFixed(1)} ${d.scale}, converted by ASTM E140)`
      : m.quantity === 'hardnessHV' && typeof d.readings === 'number'
        ? ` (mean of ${d.readings} readings)`
        : '';
  const by = m.verdict === 'above' ? m.measured - m.band.p95 : m.band.p05 - m.measured;
  const cal =
    m.calibrationApplied && m.calibration
      ? `, calibrated by ${m.calibration.n} earlier results: bias ${m.calibration.bias >= 0 ? '+' : ''}${fmt(m.quantity, m.calibration.bias)}, spread ${fmt(m.quantity, m.calibration.sd)}`
      : ', raw ensemble band (calibration not yet in force)';
  const message =
    `${QUANTITY_LABEL[m.quantity]} ${fmt(m.quantity, m.measured)}${how} from lab result ${m.externalRef} is ${m.verdict} the predicted band ` +
    `${fmt(m.quantity, m.band.p05)}–${fmt(m.quantity, m.band.p95)} (p05–p95 of prediction v${m.predictionVersion}${cal}) by ${fmt(m.quantity, by)}`;
  return {
    rule: MISMATCH_RULE,
    severity: 'MAJOR',
    dedupKey: mismatchDedupKey(m.batchId, m.labResultId, m.quantity),
    channelId: null,
    message,
    details: {
      kind: 'lab-vs-prediction',
      quantity: m.quantity,
      unit: QUANTITY_UNIT[m.quantity],
      labResultId: m.labResultId,
      labKind: m.labKind,
      externalRef: m.externalRef,
      measured: m.measured,
      measuredDetail: m.measuredDetail,
      verdict: m.verdict,
      outsideBy: by,
      band: m.band,
      rawBand: m.rawBand,
      calibrationApplied: m.calibrationApplied,
      calibration: m.calibration,
      predictionId: m.predictionId,
      predictionVersion: m.predictionVersion,
    },
  };
}
