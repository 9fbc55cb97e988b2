/**
 * Numbers with their units, the same way on every screen. A missing value is '—', never 0.
 * Fractions (0..1) are shown as vol% because that is how metallographers and XRD reports state them.
 */

const DASH = '—';
const ok = (v: number | null | undefined): v is number => typeof v === 'number' && Number.isFinite(v);

export function fmtNum(v: number | null | undefined, digits = 0): string {
  if (!ok(v)) return DASH;
  return v.toFixed(digits).replace('-', '−');
}

export const fmtC = (v: number | null | undefined, digits = 1): string => (ok(v) ? `${fmtNum(v, digits)} °C` : DASH);
export const fmtWtPct = (v: number | null | undefined, digits = 3): string => (ok(v) ? `${fmtNum(v, digits)} wt%` : DASH);
export const fmtHV = (v: number | null | undefined): string => (ok(v) ? `${fmtNum(v, 0)} HV` : DASH);
export const fmtMPa = (v: number | null | undefined): string => (ok(v) ? `${fmtNum(v, 0)} MPa` : DASH);
export const fmtMin = (v: number | null | undefined, digits = 0): string => (ok(v) ? `${fmtNum(v, digits)} min` : DASH);
export const fmtS = (v: number | null | undefined, digits = 0): string => (ok(v) ? `${fmtNum(v, digits)} s` : DASH);
export const fmtKg = (v: number | null | undefined): string => (ok(v) ? `${fmtNum(v, v < 100 ? 1 : 0)} kg` : DASH);
export const fmtMm = (v: number | null | undefined): string => (ok(v) ? `${fmtNum(v, v < 10 ? 1 : 0)} mm` : DASH);

/** A volume fraction (0..1) as vol%: 0.763 -> '76.3 vol%'. */
export function fmtVolPct(fraction: number | null | undefined, digits = 1): string {
  return ok(fraction) ? `${fmtNum(fraction * 100, digits)} vol%` : DASH;
}

/** p05–p95 (p50) with unit: '420–462 HV (median 440)'. */
export function fmtBand(band: { p05: number; p50: number; p95: number } | null | undefined, unit: string, digits = 0): string {
  if (!band) return DASH;
  return `${fmtNum(band.p05, digits)}–${fmtNum(band.p95, digits)} ${unit} (median ${fmtNum(band.p50, digits)})`;
}

/** 'min–max unit', or '≥ min', '≤ max'. */
export function fmtLimits(min: number | null | undefined, max: number | null | undefined, unit: string, digits = 0): string {
  if (ok(min) && ok(max)) return `${fmtNum(min, digits)}–${fmtNum(max, digits)} ${unit}`;
  if (ok(min)) return `≥ ${fmtNum(min, digits)} ${unit}`;
  if (ok(max)) return `≤ ${fmtNum(max, digits)} ${unit}`;
  return 'not limited';
}

const SECTION_WORD: Record<string, string> = { PLATE: 'plate', CYLINDER: 'round', SQUARE_BAR: 'square bar' };
const SECTION_SIZE: Record<string, string> = { PLATE: 'thick', CYLINDER: 'dia.', SQUARE_BAR: 'side' };

export function fmtSection(shape: string, sizeMm: number): string {
  return `${SECTION_WORD[shape] ?? shape}, ${fmtMm(sizeMm)} ${SECTION_SIZE[shape] ?? ''}`.trim();
}

const STATUS_WORD: Record<string, string> = {
  PLANNED: 'Planned',
  IN_FURNACE: 'In furnace',
  IN_TRANSFER: 'Transfer',
  IN_BATH: 'In bath',
  DONE: 'Done',
};
export const fmtBatchStatus = (s: string): string => STATUS_WORD[s] ?? s;

const DISPOSITION_WORD: Record<string, string> = {
  USE_AS_IS: 'Use as is',
  RETREAT: 'Re-treat',
  SCRAP: 'Scrap',
  CONCESSION: 'Ship under customer concession',
};
export const fmtDisposition = (d: string | null | undefined): string => (d ? (DISPOSITION_WORD[d] ?? d) : DASH);

const DEVIATION_STATUS_WORD: Record<string, string> = {
  OPEN: 'Open',
  ACKNOWLEDGED: 'Acknowledged',
  DISPOSITIONED: 'Dispositioned',
  CLOSED: 'Closed',
  CLEARED: 'Cleared (condition gone)',
};
export const fmtDeviationStatus = (s: string): string => DEVIATION_STATUS_WORD[s] ?? s;

/** Rule ids (libs/compliance and issue 4) in words. */
const RULE_WORD: Record<string, string> = {
  'austenitize-temp': 'Austenitize temperature',
  'austenitize-time': 'Austenitize time',
  'transfer-time': 'Transfer time',
  'bath-band-excursion': 'Bath temperature band',
  'thermocouple-disagreement': 'Thermocouples disagree',
  'channel-gap': 'Gap in a signal',
  'signal-flatline': 'Flat-lined signal',
  'signal-implausible': 'Implausible signal',
  'load-event-order': 'Load events out of order',
  'hold-min': 'Hold too short',
  'hold-max': 'Hold too long',
  // predictions (issue 4: libs/contracts PREDICTION_CRITERIA)
  'predicted-bainite-min': 'Bainite below minimum (predicted)',
  'predicted-incomplete-transformation': 'Incomplete transformation (predicted)',
  'predicted-fresh-martensite-max': 'Fresh martensite above maximum (predicted)',
  'predicted-blocky-austenite-max': 'Blocky austenite above maximum (predicted)',
  'predicted-film-block-ratio-min': 'Film-to-block ratio too low (predicted)',
  'predicted-retained-austenite-max': 'Retained austenite above maximum (predicted)',
  'predicted-ms-margin': 'Bath too close to Ms (predicted)',
  'predicted-bs-margin': 'Bath too close to Bs (predicted)',
  'predicted-upper-products': 'Upper products in the quench (predicted)',
  'predicted-unstable-austenite': 'Unstable retained austenite (predicted)',
  'predicted-si-al-low': 'Si + Al too low to keep cementite out',
  'predicted-hardness': 'Hardness outside the band (predicted)',
  'predicted-tensile': 'Tensile outside the band (predicted)',
  'predicted-adi-stage-i': 'ADI stage I unfinished (predicted)',
  'predicted-adi-stage-ii': 'ADI stage II begun (predicted)',
  'hold-too-short-predicted': 'Scheduled hold too short (predicted)',
  'model-process-mismatch': 'Lab result outside the predicted band',
  'hardness-band': 'Hardness outside the band (lab)',
  drift: 'Process drift across lots',
  'suspect-product': 'Suspect product (pyrometry)',
  'equipment-overdue': 'Survey or calibration overdue',
  'equipment-record-incomplete': 'Pyrometry record incomplete',
  'sensor-expired': 'Sensor expired',
  'sensor-use-limit': 'Sensor use limit reached',
};
export const fmtRule = (rule: string): string => RULE_WORD[rule] ?? rule.replace(/[-_]/g, ' ').replace(/^./, (c) => c.toUpperCase());
