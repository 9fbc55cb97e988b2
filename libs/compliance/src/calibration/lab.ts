// Lab results as measurements of the predicted quantities (hardness converted between scales by the
// engine's ASTM E140 rows; retained austenite as a fraction; tensile strength Rm).

import { hbwFromHv, hrcFromHv, hvFromHbw, hvFromHrc } from '@ausline/metallurgy';
import { judgeAgainstBand, type Band, type BandVerdict, type CalibratedQuantity } from './bands.js';

export type HardnessScaleName = 'HV' | 'HRC' | 'HBW';

/** A LabResult row as stored (libs/db), reduced to what the comparison reads. */
export interface LabResultLike {
  id: string;
  kind: 'HARDNESS' | 'RETAINED_AUSTENITE' | 'TENSILE' | 'IMPACT';
  scale: string | null;
  values: unknown;
}

function isRecord(v: unknown): v is Record<string, unknown> {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

/**
 * A hardness value converted between HV, HRC and HBW through the E140 rows (via HV); null outside the rows
 * (HV 238–697, HRC 20–60, HBW 226–613) – a conversion is never extrapolated.
 */
export function convertHardness(value: number, from: HardnessScaleName, to: HardnessScaleName): number | null {
  if (from === to) return value;
  const hv = from === 'HV' ? value : from === 'HRC' ? hvFromHrc(value) : hvFromHbw(value);
  if (hv === null) return null;
  return to === 'HV' ? hv : to === 'HRC' ? hrcFromHv(hv) : hbwFromHv(hv);
}

export function isHardnessScale(s: unknown): s is HardnessScaleName {
  return s === 'HV' || s === 'HRC' || s === 'HBW';
}

/** Readings of a stored hardness result (values.readings, else values.mean). */
export function hardnessReadings(values: unknown): number[] {
  if (!isRecord(values)) return [];
  if (Array.isArray(values.readings) && values.readings.every((x) => typeof x === 'number' && Number.isFinite(x))) return values.readings as number[];
  return typeof values.mean === 'number' && Number.isFinite(values.mean) ? [values.mean] : [];
}

/**
 * Mean hardness of a result in `target` scale: every reading converted first (the conversion is not linear,
 * so converting the mean would differ), then averaged. Null when a reading has no conversion.
 */
export function meanHardnessIn(result: Pick<LabResultLike, 'scale' | 'values'>, target: HardnessScaleName): { value: number; n: number; meanInOwnScale: number } | null {
  if (!isHardnessScale(result.scale)) return null;
  const readings = hardnessReadings(result.values);
  if (readings.length === 0) return null;
  let sum = 0;
  for (const r of readings) {
    const c = convertHardness(r, result.scale, target);
    if (c === null) return null;
    sum += c;
  }
  return { value: sum / readings.length, n: readings.length, meanInOwnScale: readings.reduce((s, x) => s + x, 0) / readings.length };
}

export type LabObservation =
  | {
      quantity: CalibratedQuantity;
      comparable: true;
      /** In the quantity's unit (HV, MPa, volume fraction). */
      measured: number;
      detail: Record<string, unknown>;
    }
  | { quantity: CalibratedQuantity; comparable: false; reason: string; detail: Record<string, unknown> };

/** What a lab result measures of the predicted quantities (IMPACT: nothing is predicted). */
export function labObservations(result: LabResultLike): LabObservation[] {
  const v = isRecord(result.values) ? result.values : {};
  switch (result.kind) {
    case 'HARDNESS': {
      const readings = hardnessReadings(result.values);
      const detail: Record<string, unknown> = { scale: result.scale, readings: readings.length };
      if (!isHardnessScale(result.scale)) return [{ quantity: 'hardnessHV', comparable: false, reason: `unknown hardness scale '${result.scale}'`, detail }];
      const mean = meanHardnessIn(result, 'HV');
      if (!mean) {
        return [{ quantity: 'hardnessHV', comparable: false, reason: `a ${result.scale} reading lies outside the ASTM E140 rows (HRC 20–60, HBW 226–613); no conversion to HV`, detail }];
      }
      return [
        {
          quantity: 'hardnessHV',
          comparable: true,
          measured: mean.value,
          detail: { ...detail, meanInScale: mean.meanInOwnScale, ...(result.scale === 'HV' ? {} : { convertedBy: 'ASTM E140 rows (libs/metallurgy), reading by reading' }) },
        },
      ];
    }
    case 'RETAINED_AUSTENITE': {
      const pct = v.volumePct;
      if (typeof pct !== 'number' || !Number.isFinite(pct)) return [{ quantity: 'retainedAusteniteFraction', comparable: false, reason: 'no volumePct', detail: {} }];
      return [{ quantity: 'retainedAusteniteFraction', comparable: true, measured: pct / 100, detail: { volumePct: pct, method: v.method ?? null } }];
    }
    case 'TENSILE': {
      const rm = v.rmMPa;
      if (typeof rm !== 'number' || !Number.isFinite(rm)) return [{ quantity: 'tensileMPa', comparable: false, reason: 'no rmMPa', detail: {} }];
      return [{ quantity: 'tensileMPa', comparable: true, measured: rm, detail: { rmMPa: rm, rp02MPa: v.rp02MPa ?? null, elongationPct: v.elongationPct ?? null } }];
    }
    default:
      return [];
  }
}

export interface BandComparison {
  verdict: BandVerdict;
  /** measured − p95 (above) or p05 − measured (below); 0 inside. */
  outsideBy: number;
}

export function compareWithBand(measured: number, band: Band): BandComparison {
  const verdict = judgeAgainstBand(measured, band);
  return { verdict, outsideBy: verdict === 'above' ? measured - band.p95 : verdict === 'below' ? band.p05 - measured : 0 };
}
