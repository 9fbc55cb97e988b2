/**
 * Lab results and acceptance checks in words with units, as the batch view and the certificate record show
 * them. Reads the stored `values` of a lab result (apps/api labResultRow) and the `measured` summary of an
 * acceptance check (libs/compliance acceptanceChecks); a field that is missing is left out, never shown as 0.
 */
import { fmtC, fmtMPa, fmtNum } from './format.js';

type Values = Record<string, unknown>;

const num = (v: unknown): number | null => (typeof v === 'number' && Number.isFinite(v) ? v : null);
const plural = (n: number, one: string, many: string): string => `${n} ${n === 1 ? one : many}`;
const NOTCH_WORD: Record<string, string> = { V: 'V-notch', U: 'U-notch', UNNOTCHED: 'unnotched' };

/** A hardness figure in its scale: '494 HV', '52.5 HRC' (Rockwell C is read to a tenth). */
function hardness(v: number, scale: string): string {
  return `${fmtNum(v, scale === 'HRC' ? 1 : 0)} ${scale}`;
}

/** What a lab result measured: '494 HV mean of 5 readings (488–501 HV)', 'Rm 1,250 MPa, Rp0.2 …'. */
export function labResultText(kind: string, scale: string | null, values: Values): string {
  switch (kind) {
    case 'HARDNESS': {
      const s = scale ?? '';
      const mean = num(values['mean']);
      const n = num(values['n']) ?? (Array.isArray(values['readings']) ? values['readings'].length : null);
      const min = num(values['min']);
      const max = num(values['max']);
      if (mean === null) return '—';
      return `${hardness(mean, s)} mean${n !== null ? ` of ${plural(n, 'reading', 'readings')}` : ''}${min !== null && max !== null ? ` (${fmtNum(min, s === 'HRC' ? 1 : 0)}–${hardness(max, s)})` : ''}`;
    }
    case 'RETAINED_AUSTENITE': {
      const pct = num(values['volumePct']);
      return pct === null ? '—' : `${fmtNum(pct, 1)} vol%${typeof values['method'] === 'string' ? ` (${values['method']})` : ''}`;
    }
    case 'TENSILE': {
      const parts = [
        num(values['rmMPa']) !== null ? `Rm ${fmtMPa(num(values['rmMPa']))}` : null,
        num(values['rp02MPa']) !== null ? `Rp0.2 ${fmtMPa(num(values['rp02MPa']))}` : null,
        num(values['elongationPct']) !== null ? `A ${fmtNum(num(values['elongationPct']), 1)} %` : null,
      ].filter((x): x is string => x !== null);
      return parts.length > 0 ? parts.join(', ') : '—';
    }
    case 'IMPACT': {
      const energies = Array.isArray(values['energiesJ']) ? values['energiesJ'].filter((x): x is number => typeof x === 'number') : [];
      if (energies.length === 0) return '—';
      const notch = typeof values['notch'] === 'string' ? (NOTCH_WORD[values['notch']] ?? values['notch']) : null;
      const temp = num(values['temperatureC']);
      return `${energies.map((e) => fmtNum(e, 0)).join(', ')} J${temp !== null ? ` at ${fmtC(temp, 0)}` : ''}${notch ? `, ${notch}` : ''}`;
    }
    default:
      return '—';
  }
}

/** What an acceptance check found, in words with units ('5 readings, 488–501 HV, mean 494 HV'). */
export function acceptanceMeasuredText(criterion: string, measured: Values): string {
  switch (criterion) {
    case 'hardness': {
      const scale = typeof measured['scale'] === 'string' ? measured['scale'] : '';
      const n = num(measured['readings']) ?? 0;
      const min = num(measured['min']);
      const max = num(measured['max']);
      const mean = num(measured['mean']);
      if (n === 0 || min === null || max === null) return 'no readings';
      return `${plural(n, 'reading', 'readings')}, ${fmtNum(min, scale === 'HRC' ? 1 : 0)}–${hardness(max, scale)}${mean !== null ? `, mean ${hardness(mean, scale)}` : ''}`;
    }
    case 'tensile': {
      const n = num(measured['tests']) ?? 0;
      if (n === 0) return 'no tests';
      const parts = [
        num(measured['minRmMPa']) !== null ? `lowest Rm ${fmtMPa(num(measured['minRmMPa']))}` : null,
        num(measured['minRp02MPa']) !== null ? `lowest Rp0.2 ${fmtMPa(num(measured['minRp02MPa']))}` : null,
        num(measured['minElongationPct']) !== null ? `lowest A ${fmtNum(num(measured['minElongationPct']), 1)} %` : null,
      ].filter((x): x is string => x !== null);
      return [plural(n, 'test', 'tests'), ...parts].join(', ');
    }
    case 'retained-austenite': {
      const n = num(measured['tests']) ?? 0;
      const max = num(measured['maxVolumePct']);
      if (n === 0 || max === null) return 'no tests';
      return n === 1 ? `${fmtNum(max, 1)} vol%` : `${plural(n, 'test', 'tests')}, highest ${fmtNum(max, 1)} vol%`;
    }
    case 'impact': {
      const n = num(measured['specimens']) ?? 0;
      const min = num(measured['minJ']);
      if (n === 0 || min === null) return 'no specimens';
      return `${plural(n, 'specimen', 'specimens')}, lowest ${fmtNum(min, 0)} J`;
    }
    default:
      return Object.entries(measured).filter(([, v]) => v !== null).map(([k, v]) => `${k} ${String(v)}`).join(', ');
  }
}

const RESULT_WORD: Record<string, string> = { pass: 'pass', fail: 'FAIL', 'not-tested': 'not tested', 'not-comparable': 'not comparable (scale cannot be converted)' };
export const fmtAcceptanceVerdict = (v: string): string => RESULT_WORD[v] ?? v;

const KIND_WORD: Record<string, string> = { HARDNESS: 'Hardness', RETAINED_AUSTENITE: 'Retained austenite', TENSILE: 'Tensile', IMPACT: 'Impact (Charpy)' };
export const fmtLabKind = (kind: string, scale?: string | null): string => `${KIND_WORD[kind] ?? kind.toLowerCase().replace(/_/g, ' ')}${scale ? ` (${scale})` : ''}`;

const CRITERION_WORD: Record<string, string> = { hardness: 'Hardness', tensile: 'Tensile strength', 'retained-austenite': 'Retained austenite', impact: 'Impact energy' };
/** The acceptance check's criterion as a heading ('retained-austenite' -> 'Retained austenite'). */
export const fmtAcceptanceCriterion = (criterion: string): string => CRITERION_WORD[criterion] ?? criterion.replace(/-/g, ' ');

const QUANTITY_WORD: Record<string, string> = { hardnessHV: 'hardness', tensileMPa: 'Rm', retainedAusteniteFraction: 'retained austenite' };
const BAND_WORD: Record<string, string> = { inside: 'inside the predicted band', above: 'above the predicted band', below: 'below the predicted band' };
/** A lab value against the model's p05–p95 band: 'hardness inside the predicted band'. */
export const fmtAgainstPrediction = (quantity: string, verdict: string): string => `${QUANTITY_WORD[quantity] ?? quantity} ${BAND_WORD[verdict] ?? verdict}`;
