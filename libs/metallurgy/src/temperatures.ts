/**
 * Empirical critical temperatures (metallurgy.md §1): Ae1/Ae3, martensite start Ms, bainite start Bs.
 * All take wt% and return °C. The functions evaluate the published formula as written and never clamp;
 * `criticalTemperatures` (and `checkChemistry`) report when a composition is outside a formula's fitted range.
 */
import type { ChemistryWtPct, Element } from './chemistry.js';

export type MsFormula =
  | 'andrews-linear'
  | 'kung-rayment'
  | 'andrews-parabolic'
  | 'steven-haynes'
  | 'van-bohemen'
  | 'mahieu'
  | 'capdevila';
export type BsFormula = 'steven-haynes' | 'kirkaldy-venugopalan' | 'li-1998' | 'van-bohemen';
export type AeFormula = 'andrews-1965' | 'andrews-1965-extended' | 'andrews-1965-second-set' | 'grange-1961';

export const DEFAULT_MS_FORMULA: MsFormula = 'van-bohemen';
export const DEFAULT_BS_FORMULA: BsFormula = 'van-bohemen';
export const DEFAULT_AE_FORMULA: AeFormula = 'andrews-1965';

export interface FormulaInfo {
  name: string;
  source: string;
  validity: string;
  /**
   * Standard error (1σ) reported by the authors, °C; for 'ae' entries the error of the Ae1 (Ac1) formula. null where
   * no reported error is known. metallurgy.md §1 quotes NO reported error for any of these formulas, so every
   * non-null value here is from memory [M] and says so in reportedErrorSource.
   */
  reportedErrorC: number | null;
  /** 'ae' entries: the reported standard error of the Ae3 (Ac3) formula, °C, or null. */
  reportedErrorAe3C?: number | null;
  /** Where reportedErrorC (and reportedErrorAe3C) come from, or why they are null. */
  reportedErrorSource: string;
}

/** metallurgy.md gives no reported error for the formula, and we recall none: left null rather than guessed. */
const NO_REPORTED_ERROR = 'none known: metallurgy.md §1 quotes no reported error for this formula and we recall none';

/** Keyed 'ms:<MsFormula>', 'bs:<BsFormula>', 'ae:<AeFormula>' (use formulaInfo() for typed access). */
export const FORMULAS: Record<string, FormulaInfo> = {
  'ms:andrews-linear': {
    name: 'Andrews 1965 (linear)',
    source: 'K.W. Andrews, JISI 203 (1965) 721–727; metallurgy.md §1.2 [F2]',
    validity: 'low-alloy steels, C 0.1–0.6 wt%; under-predicts at high C; no Si term',
    reportedErrorC: null,
    reportedErrorSource: NO_REPORTED_ERROR,
  },
  'ms:kung-rayment': {
    name: 'Kung & Rayment 1982',
    source: 'C.Y. Kung, J.J. Rayment, Metall. Trans. A 13A (1982) 328, as Li et al. 1998 eq. 25; metallurgy.md §1.2 [F2]',
    validity: 'as Andrews linear (C 0.1–0.6) plus Co and Si terms; the linear formula for Si-rich steels',
    reportedErrorC: null,
    reportedErrorSource: NO_REPORTED_ERROR,
  },
  'ms:andrews-parabolic': {
    name: 'Andrews 1965 (parabolic)',
    source: 'K.W. Andrews, JISI 203 (1965) 721–727; metallurgy.md §1.2 [F2]',
    validity: 'low-alloy steels, C 0.1–0.6 wt%',
    reportedErrorC: null,
    reportedErrorSource: NO_REPORTED_ERROR,
  },
  'ms:steven-haynes': {
    name: 'Steven & Haynes 1956',
    source: 'W. Steven, A.G. Haynes, JISI 183 (1956) 349; metallurgy.md §1.2 [F2]',
    validity: 'low-alloy steels, C 0.1–0.55 wt%',
    reportedErrorC: null,
    reportedErrorSource: NO_REPORTED_ERROR,
  },
  'ms:van-bohemen': {
    name: 'van Bohemen 2012',
    source: 'S.M.C. van Bohemen, Mater. Sci. Technol. 28 (2012) 487–495; metallurgy.md §1.2 [F2]',
    validity: 'low-alloy steels; exponential C term usable up to ≈1.2–1.5 wt% C (carbon-enriched austenite)',
    reportedErrorC: null,
    reportedErrorSource: NO_REPORTED_ERROR,
  },
  'ms:mahieu': {
    name: 'Mahieu et al. 2002',
    source: 'Mahieu, Maki, De Cooman, Claessens, Metall. Mater. Trans. A 33 (2002) 2573 [M reference]; formula metallurgy.md §1.2 [F2]',
    validity: 'Si/Al TRIP steels',
    reportedErrorC: null,
    reportedErrorSource: NO_REPORTED_ERROR,
  },
  'ms:capdevila': {
    name: 'Capdevila et al. 2002',
    source: 'Capdevila, Caballero, García de Andrés, ISIJ Int. 42 (2002) 894; metallurgy.md §1.2 [F2; W and Cu terms M]',
    validity: 'low-alloy steels; formula gives K, converted to °C',
    reportedErrorC: null,
    reportedErrorSource: NO_REPORTED_ERROR,
  },
  'bs:steven-haynes': {
    name: 'Steven & Haynes 1956',
    source: 'W. Steven, A.G. Haynes, JISI 183 (1956) 349; metallurgy.md §1.3 [F2]',
    validity: 'low-alloy steels, C 0.1–0.55 wt%; no Si term',
    reportedErrorC: null,
    reportedErrorSource: NO_REPORTED_ERROR,
  },
  'bs:kirkaldy-venugopalan': {
    name: 'Kirkaldy & Venugopalan 1983',
    source: 'Kirkaldy & Venugopalan 1983 (AIME), coefficients as in the MMTA Bs review doi 10.1007/s11661-019-05371-1; metallurgy.md §1.3 [F2]',
    validity: 'low-alloy steels; strong Si term, poor for 1.5–2.5 wt% Si',
    reportedErrorC: null,
    reportedErrorSource: NO_REPORTED_ERROR,
  },
  'bs:li-1998': {
    name: 'Li et al. 1998 (KV with Si = 0.25)',
    source: 'Li, Niebuhr, Meekisho, Atteridge, Metall. Mater. Trans. B 29B (1998) 661, eq. 24; metallurgy.md §1.3 [F1]',
    validity: 'low-alloy steels; no Si dependence',
    reportedErrorC: null,
    reportedErrorSource: NO_REPORTED_ERROR,
  },
  'bs:van-bohemen': {
    name: 'van Bohemen 2012',
    source: 'S.M.C. van Bohemen, Mater. Sci. Technol. 28 (2012) 487–495; metallurgy.md §1.3 [F2]',
    validity: 'low-alloy steels',
    reportedErrorC: null,
    reportedErrorSource: NO_REPORTED_ERROR,
  },
  'ae:andrews-1965': {
    name: 'Andrews 1965 (Ac1 723 / Ac3 910 set)',
    source: 'K.W. Andrews, JISI 203 (1965) 721–727; metallurgy.md §1.1 [F2]. Labelled Ac in the codes that reproduce it; which Andrews set is Ae and which Ac is unconfirmed [M]',
    validity: 'low-alloy steels, C ≲ 0.6 wt%; Ac3 only for hypoeutectoid steels',
    reportedErrorC: 11.5,
    reportedErrorAe3C: 16.7,
    reportedErrorSource:
      'FROM MEMORY [M]: Andrews 1965 is commonly quoted with standard deviations of 11.5 °C (Ac1) and 16.7 °C (Ac3); not in metallurgy.md – check against the paper before relying on it',
  },
  'ae:andrews-1965-extended': {
    name: 'Andrews 1965 Ac3 with the often-quoted extension',
    source: 'Andrews 1965 Ac3 + (−30Mn − 11Cr − 20Cu + 700P + 400Al + 400Ti); metallurgy.md §1.1 [extension M]. Ae1 as andrews-1965',
    validity: 'low-alloy steels, C ≲ 0.6 wt%, hypoeutectoid only',
    reportedErrorC: 11.5,
    reportedErrorAe3C: null,
    reportedErrorSource:
      'Ae1 as andrews-1965 (11.5 °C, FROM MEMORY [M]); none known for the extended Ae3 (the extension itself is [M] in metallurgy.md §1.1)',
  },
  'ae:andrews-1965-second-set': {
    name: 'Andrews 1965 (Ae1 712 / Ae3 871 set)',
    source: 'Andrews 1965 as in github arthursn/transformation-diagrams transformation_models.py; metallurgy.md §1.1 [F2]',
    validity: 'low-alloy steels, hypoeutectoid for Ae3',
    reportedErrorC: null,
    reportedErrorAe3C: null,
    reportedErrorSource: NO_REPORTED_ERROR,
  },
  'ae:grange-1961': {
    name: 'Grange 1961',
    source: 'R.A. Grange, Met. Progr. 79 (1961), °F formula converted; metallurgy.md §1.1 [F2, Cr sign M]',
    validity: 'low-alloy steels, hypoeutectoid for Ae3',
    reportedErrorC: null,
    reportedErrorAe3C: null,
    reportedErrorSource: NO_REPORTED_ERROR,
  },
};

export function formulaInfo(kind: 'ms', formula: MsFormula): FormulaInfo;
export function formulaInfo(kind: 'bs', formula: BsFormula): FormulaInfo;
export function formulaInfo(kind: 'ae', formula: AeFormula): FormulaInfo;
export function formulaInfo(kind: 'ms' | 'bs' | 'ae', formula: string): FormulaInfo {
  const info = FORMULAS[`${kind}:${formula}`];
  if (!info) throw new RangeError(`unknown ${kind} formula '${formula}'`);
  return info;
}

function w(chem: ChemistryWtPct, el: Element): number {
  return chem[el] ?? 0;
}

/** Martensite start, °C (§1.2). Default van Bohemen 2012, whose carbon term stays sensible for enriched austenite. */
export function msC(chem: ChemistryWtPct, formula: MsFormula = DEFAULT_MS_FORMULA): number {
  const C = w(chem, 'C');
  const Mn = w(chem, 'Mn');
  const Si = w(chem, 'Si');
  const Ni = w(chem, 'Ni');
  const Cr = w(chem, 'Cr');
  const Mo = w(chem, 'Mo');
  switch (formula) {
    case 'andrews-linear':
      return 539 - 423 * C - 30.4 * Mn - 17.7 * Ni - 12.1 * Cr - 7.5 * Mo;
    case 'kung-rayment':
      return 539 - 423 * C - 30.4 * Mn - 17.7 * Ni - 12.1 * Cr - 7.5 * Mo + 10 * w(chem, 'Co') - 7.5 * Si;
    case 'andrews-parabolic':
      return 512 - 453 * C - 16.9 * Ni + 15 * Cr - 9.5 * Mo + 217 * C * C - 71.5 * C * Mn - 67.6 * C * Cr;
    case 'steven-haynes':
      return 561 - 474 * C - 33 * Mn - 17 * Ni - 17 * Cr - 21 * Mo;
    case 'van-bohemen':
      return 565 - (31 * Mn + 13 * Si + 10 * Cr + 18 * Ni + 12 * Mo) - 600 * (1 - Math.exp(-0.96 * C));
    case 'mahieu':
      return 539 - 423 * C - 30.4 * Mn - 7.5 * Si + 30 * w(chem, 'Al');
    case 'capdevila':
      return (
        764.2 - 302.6 * C - 30.6 * Mn - 14.5 * Si - 8.9 * Cr + 2.4 * Mo - 16.6 * Ni + 8.58 * w(chem, 'Co') + 7.4 * w(chem, 'W') - 11.3 * w(chem, 'Cu') - 273.15
      );
  }
}

/** Bainite start, °C (§1.3). Default van Bohemen 2012 (has a moderate Si term, suitable for Si-rich steels). */
export function bsC(chem: ChemistryWtPct, formula: BsFormula = DEFAULT_BS_FORMULA): number {
  const C = w(chem, 'C');
  const Mn = w(chem, 'Mn');
  const Si = w(chem, 'Si');
  const Ni = w(chem, 'Ni');
  const Cr = w(chem, 'Cr');
  const Mo = w(chem, 'Mo');
  switch (formula) {
    case 'steven-haynes':
      return 830 - 270 * C - 90 * Mn - 37 * Ni - 70 * Cr - 83 * Mo;
    case 'kirkaldy-venugopalan':
      return 656 - 57.7 * C - 75 * Si - 35 * Mn - 15.3 * Ni - 34 * Cr - 41.2 * Mo;
    case 'li-1998':
      return 637 - 58 * C - 35 * Mn - 15 * Ni - 34 * Cr - 41 * Mo;
    case 'van-bohemen':
      return 839 - (86 * Mn + 23 * Si + 67 * Cr + 33 * Ni + 75 * Mo) - 270 * (1 - Math.exp(-1.33 * C));
  }
}

/** Lower critical temperature, °C (§1.1). */
export function ae1C(chem: ChemistryWtPct, formula: AeFormula = DEFAULT_AE_FORMULA): number {
  const Mn = w(chem, 'Mn');
  const Si = w(chem, 'Si');
  const Ni = w(chem, 'Ni');
  const Cr = w(chem, 'Cr');
  switch (formula) {
    case 'andrews-1965':
    case 'andrews-1965-extended':
      // As (arsenic, +290As) is not an element of the service's chemistry and is taken as 0.
      return 723 - 10.7 * Mn - 16.9 * Ni + 29.1 * Si + 16.9 * Cr + 6.38 * w(chem, 'W');
    case 'andrews-1965-second-set':
      return 712 - 17.8 * Mn - 19.1 * Ni + 20.1 * Si + 11.9 * Cr + 9.8 * w(chem, 'Mo');
    case 'grange-1961':
      // +42Cr: metallurgy.md §1.1 notes the reproducing code has −42Cr but the published sign is believed to be + [M]
      // (Cr raises Ae1, as in every other Ae1 formula here).
      return ((1333 - 25 * Mn + 40 * Si - 26 * Ni + 42 * Cr - 32) * 5) / 9;
  }
}

/** Upper critical temperature, °C (§1.1). Only meaningful for hypoeutectoid steels. */
export function ae3C(chem: ChemistryWtPct, formula: AeFormula = DEFAULT_AE_FORMULA): number {
  const C = w(chem, 'C');
  const Mn = w(chem, 'Mn');
  const Si = w(chem, 'Si');
  const Ni = w(chem, 'Ni');
  const Cr = w(chem, 'Cr');
  const Mo = w(chem, 'Mo');
  switch (formula) {
    case 'andrews-1965':
      return 910 - 203 * Math.sqrt(C) - 15.2 * Ni + 44.7 * Si + 104 * w(chem, 'V') + 31.5 * Mo + 13.1 * w(chem, 'W');
    case 'andrews-1965-extended':
      return (
        910 -
        203 * Math.sqrt(C) -
        15.2 * Ni +
        44.7 * Si +
        104 * w(chem, 'V') +
        31.5 * Mo +
        13.1 * w(chem, 'W') -
        30 * Mn -
        11 * Cr -
        20 * w(chem, 'Cu') +
        700 * w(chem, 'P') +
        400 * w(chem, 'Al') +
        400 * w(chem, 'Ti')
      );
    case 'andrews-1965-second-set':
      return 871 - 254.4 * Math.sqrt(C) - 14.2 * Ni + 51.7 * Si;
    case 'grange-1961':
      return ((1570 - 323 * C - 25 * Mn + 80 * Si - 32 * Ni - 3 * Cr - 32) * 5) / 9;
  }
}

/**
 * Ae1, Ae3, Bs and Ms with the default formulas, plus warnings for compositions outside their fitted ranges.
 * For hypereutectoid steels the Ae3 formula falls below Ae1 (§1.1); ae3C is then reported equal to ae1C with a
 * warning (the upper critical line is Acm, which these formulas do not give).
 */
export function criticalTemperatures(chem: ChemistryWtPct): { ae1C: number; ae3C: number; bsC: number; msC: number; warnings: string[] } {
  const warnings: string[] = [];
  const C = w(chem, 'C');
  const ae1 = ae1C(chem);
  let ae3 = ae3C(chem);
  const bs = bsC(chem);
  const ms = msC(chem);
  if (C > 0.6) warnings.push(`Ae1/Ae3 (Andrews 1965) are fitted for C ≲ 0.6 wt%; got ${C}`);
  if (ae3 < ae1) {
    warnings.push(
      `Ae3 (Andrews 1965) = ${ae3.toFixed(1)} °C falls below Ae1 = ${ae1.toFixed(1)} °C (hypereutectoid steel, C = ${C} wt%): Ae3 reported as Ae1; the upper critical line is Acm`,
    );
    ae3 = ae1;
  }
  if (C > 1.5) warnings.push(`Ms (van Bohemen 2012) carbon term is fitted up to ≈1.5 wt% C; got ${C}`);
  for (const [el, limit] of [['Mn', 3.5], ['Ni', 5], ['Cr', 3.5], ['Mo', 1.5], ['Si', 3]] as Array<[Element, number]>) {
    if (w(chem, el) > limit) warnings.push(`Ms/Bs/Ae formulas are fitted to low-alloy steels (${el} ≤ ≈${limit} wt%); got ${w(chem, el)}`);
  }
  if (bs <= ms) warnings.push(`Bs (${bs.toFixed(1)} °C) is not above Ms (${ms.toFixed(1)} °C): no bainite window for this composition`);
  if (ms < -273.15) warnings.push(`Ms evaluates below absolute zero (${ms.toFixed(1)} °C): the composition is far outside the formula's range`);
  return { ae1C: ae1, ae3C: ae3, bsC: bs, msC: ms, warnings };
}
