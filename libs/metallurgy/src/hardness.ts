/**
 * Hardness scale conversions (ASTM E140) and the austempered ductile iron grade tables (ASTM A897/A897M,
 * ISO 17804). Conversions are approximate by nature (ASTM A370 says so); we interpolate linearly between the
 * table rows we carry and return null outside them rather than extrapolating a conversion.
 */

/**
 * ASTM E140 rows for non-austenitic steels, HB with a tungsten-carbide ball (metallurgy.md §6.4, [F2]: table in a
 * public test file labelled "ASTM E140-12b"). HBW at HRC 60 is marked uncertain there (E140 footnotes that range).
 */
export const E140_ROWS: ReadonlyArray<{ hrc: number; hv: number; hbw: number }> = [
  { hrc: 20, hv: 238, hbw: 226 },
  { hrc: 25, hv: 266, hbw: 253 },
  { hrc: 30, hv: 302, hbw: 286 },
  { hrc: 35, hv: 345, hbw: 327 },
  { hrc: 40, hv: 392, hbw: 371 },
  { hrc: 45, hv: 446, hbw: 421 },
  { hrc: 50, hv: 513, hbw: 481 },
  { hrc: 55, hv: 595, hbw: 560 },
  { hrc: 60, hv: 697, hbw: 613 },
];

function interpolate(x: number, xs: readonly number[], ys: readonly number[]): number | null {
  if (!Number.isFinite(x) || x < xs[0] || x > xs[xs.length - 1]) return null;
  for (let i = 1; i < xs.length; i++) {
    if (x <= xs[i]) return ys[i - 1] + ((x - xs[i - 1]) / (xs[i] - xs[i - 1])) * (ys[i] - ys[i - 1]);
  }
  return ys[ys.length - 1];
}

const HV = E140_ROWS.map((r) => r.hv);
const HRC = E140_ROWS.map((r) => r.hrc);
const HBW = E140_ROWS.map((r) => r.hbw);

/** HRC for a Vickers hardness (E140 rows, linear interpolation); null outside HV 238–697. */
export function hrcFromHv(hardnessHV: number): number | null {
  return interpolate(hardnessHV, HV, HRC);
}
/** HBW for a Vickers hardness; null outside HV 238–697. */
export function hbwFromHv(hardnessHV: number): number | null {
  return interpolate(hardnessHV, HV, HBW);
}
/** HV for a Rockwell C hardness; null outside HRC 20–60. */
export function hvFromHrc(hardnessHRC: number): number | null {
  return interpolate(hardnessHRC, HRC, HV);
}
/** HV for a Brinell (WC ball) hardness; null outside HBW 226–613. */
export function hvFromHbw(hardnessHBW: number): number | null {
  return interpolate(hardnessHBW, HBW, HV);
}

export interface AdiGrade {
  /** ASTM A897M (SI) designation UTS/YS/elongation. */
  grade: string;
  /** ASTM A897 inch-pound designation. */
  gradeInch: string;
  tensileMinMPa: number;
  yieldMinMPa: number;
  elongationMinPct: number;
  /** Typical (informative) Brinell range. */
  typicalHbw: [number, number];
}

/**
 * ASTM A897/A897M grades (metallurgy.md §4.3, [F2]: A897/A897M-16 Table 1 excerpt and A897M-03 as reproduced by a
 * foundry page; the 110/70/11 inch designation is from memory [M]). These are LIMITS: a prediction is placed in
 * the grade whose minima it meets; it is never presented as a test result.
 */
export const A897_GRADES: ReadonlyArray<AdiGrade> = [
  { grade: '750/500/11', gradeInch: '110/70/11', tensileMinMPa: 750, yieldMinMPa: 500, elongationMinPct: 11, typicalHbw: [241, 302] },
  { grade: '900/650/09', gradeInch: '130/90/09', tensileMinMPa: 900, yieldMinMPa: 650, elongationMinPct: 9, typicalHbw: [269, 341] },
  { grade: '1050/750/07', gradeInch: '150/110/07', tensileMinMPa: 1050, yieldMinMPa: 750, elongationMinPct: 7, typicalHbw: [302, 375] },
  { grade: '1200/850/04', gradeInch: '175/125/04', tensileMinMPa: 1200, yieldMinMPa: 850, elongationMinPct: 4, typicalHbw: [341, 444] },
  { grade: '1400/1100/02', gradeInch: '200/155/02', tensileMinMPa: 1400, yieldMinMPa: 1100, elongationMinPct: 2, typicalHbw: [388, 477] },
  { grade: '1600/1300/01', gradeInch: '230/185/01', tensileMinMPa: 1600, yieldMinMPa: 1300, elongationMinPct: 1, typicalHbw: [402, 512] },
];

/**
 * ISO 17804 tensile grades (grade count [F2], values from memory [M], metallurgy.md §4.3): Rm/Rp0.2 minima, MPa.
 * The hardness grades JS/HBW400 and JS/HBW450 are wear grades and not assigned from a prediction.
 */
export const ISO17804_GRADES: ReadonlyArray<{ grade: string; tensileMinMPa: number; yieldMinMPa: number; elongationMinPct: number }> = [
  { grade: 'ISO17804/JS/800-10', tensileMinMPa: 800, yieldMinMPa: 500, elongationMinPct: 10 },
  { grade: 'ISO17804/JS/900-8', tensileMinMPa: 900, yieldMinMPa: 600, elongationMinPct: 8 },
  { grade: 'ISO17804/JS/1050-6', tensileMinMPa: 1050, yieldMinMPa: 700, elongationMinPct: 6 },
  { grade: 'ISO17804/JS/1200-3', tensileMinMPa: 1200, yieldMinMPa: 850, elongationMinPct: 3 },
  { grade: 'ISO17804/JS/1400-1', tensileMinMPa: 1400, yieldMinMPa: 1100, elongationMinPct: 1 },
];

/** Highest A897 grade whose tensile minimum the value meets; null below the lowest grade. */
export function a897GradeForTensile(tensileMPa: number): AdiGrade | null {
  let found: AdiGrade | null = null;
  for (const g of A897_GRADES) if (tensileMPa >= g.tensileMinMPa) found = g;
  return found;
}

export function iso17804GradeForTensile(tensileMPa: number): string | null {
  let found: string | null = null;
  for (const g of ISO17804_GRADES) if (tensileMPa >= g.tensileMinMPa) found = g.grade;
  return found;
}

/**
 * Tensile strength an ADI of the given Brinell hardness is expected to reach, read off the A897 grade table:
 * each grade's tensile minimum is paired with the middle of its typical HBW range and we interpolate linearly
 * between grades (our construction from the [F2] table, not a published correlation; clamped to the table's
 * ends). It stands in for the steel hardness→tensile conversions, which metallurgy.md §6.4 says not to use for ADI.
 */
export function adiTensileFromHbw(hardnessHBW: number): number {
  const xs = A897_GRADES.map((g) => 0.5 * (g.typicalHbw[0] + g.typicalHbw[1]));
  const ys = A897_GRADES.map((g) => g.tensileMinMPa);
  if (hardnessHBW <= xs[0]) return ys[0] * (hardnessHBW / xs[0]);
  if (hardnessHBW >= xs[xs.length - 1]) return ys[ys.length - 1] * (hardnessHBW / xs[xs.length - 1]);
  return interpolate(hardnessHBW, xs, ys) as number;
}
