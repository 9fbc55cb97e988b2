/**
 * How the model calibration screen words its figures: every value of a calibrated quantity with its unit
 * (retained austenite, a volume fraction in the API, as vol% like everywhere else in the dashboard), and
 * what "in force" means in a sentence a quality manager can check against the count of results.
 */
import type { CalibrationBand, CalibratedQuantity, CalibrationExclusion, QuantityCalibration } from '../api/types.js';
import { fmtNum } from './format.js';

export const QUANTITY_LABEL: Readonly<Record<CalibratedQuantity, string>> = {
  hardnessHV: 'Hardness',
  tensileMPa: 'Tensile strength Rm',
  retainedAusteniteFraction: 'Retained austenite',
};

interface Display {
  unit: string;
  /** Factor from the API's unit to the shown one. */
  scale: number;
  digits: number;
}

const DISPLAY: Readonly<Record<CalibratedQuantity, Display>> = {
  hardnessHV: { unit: 'HV', scale: 1, digits: 1 },
  tensileMPa: { unit: 'MPa', scale: 1, digits: 1 },
  retainedAusteniteFraction: { unit: 'vol%', scale: 100, digits: 2 },
};

const DASH = '—';
const finite = (v: number | null | undefined): v is number => typeof v === 'number' && Number.isFinite(v);

/** A value of the quantity with its unit: 412.3 HV, 12.40 vol%. */
export function fmtQuantityValue(quantity: CalibratedQuantity, value: number | null | undefined): string {
  const d = DISPLAY[quantity];
  return finite(value) ? `${fmtNum(value * d.scale, d.digits)} ${d.unit}` : DASH;
}

/** A difference of the quantity (bias, shift) with its sign: +12.0 HV, −0.50 vol%. */
export function fmtQuantityDelta(quantity: CalibratedQuantity, value: number | null | undefined): string {
  if (!finite(value)) return DASH;
  const shown = fmtQuantityValue(quantity, value);
  return value > 0 ? `+${shown}` : shown;
}

/** p05–p95 with unit and the median: '371.0–445.0 HV (median 408.0 HV)'. */
export function fmtQuantityBand(quantity: CalibratedQuantity, band: CalibrationBand | null | undefined): string {
  if (!band) return DASH;
  const d = DISPLAY[quantity];
  return `${fmtNum(band.p05 * d.scale, d.digits)}–${fmtNum(band.p95 * d.scale, d.digits)} ${d.unit} (median ${fmtQuantityValue(quantity, band.p50)})`;
}

/** Percent narrower as the API gives it (negative = wider), in words. */
export function fmtNarrowed(pct: number | null | undefined): string {
  if (!finite(pct)) return DASH;
  if (pct === 0) return 'same width';
  return pct > 0 ? `${fmtNum(pct, 1)} % narrower` : `${fmtNum(-pct, 1)} % wider`;
}

export interface QuantityCounts {
  /** Results folded into the calibration. */
  used: number;
  /** Results judged but left out for an assignable cause of their load. */
  excluded: number;
  inForce: boolean;
  /** Beside the in-force badge: '4 results, at least 3 needed' or '2 of 3 results needed; the raw model band stands'. */
  status: string;
}

export function quantityCounts(q: QuantityCalibration, minResults: number): QuantityCounts {
  const used = q.calibration?.n ?? 0;
  const inForce = q.calibration?.inForce ?? false;
  const status = inForce
    ? `${used} result${used === 1 ? '' : 's'}, at least ${minResults} needed`
    : `${used} of ${minResults} results needed; the raw model band stands`;
  return { used, excluded: q.excluded.results, inForce, status };
}

/** The distinct deviations behind the excluded results, each with the loads it took out. */
export function exclusionCauses(q: QuantityCalibration): Array<{ deviationId: string; rule: string; severity: string; batches: Array<{ id: string; code: string }> }> {
  const byDeviation = new Map<string, { deviationId: string; rule: string; severity: string; batches: Array<{ id: string; code: string }> }>();
  for (const row of q.history) {
    const exclusion: CalibrationExclusion | null = row.excludedBy;
    if (!exclusion) continue;
    for (const cause of exclusion.causes) {
      const entry = byDeviation.get(cause.deviationId) ?? { ...cause, batches: [] };
      if (!entry.batches.some((b) => b.id === row.batchId)) entry.batches.push({ id: row.batchId, code: row.batchCode });
      byDeviation.set(cause.deviationId, entry);
    }
  }
  return [...byDeviation.values()];
}
