/**
 * Heat chemistry: validation, wt% → mole fraction / site fraction conversions, and the ADI matrix carbon.
 *
 * Conventions (metallurgy.md "Conventions"): compositions in wt% with Fe as the balance; mole fraction
 * x_i = (w_i/M_i) / Σ_j (w_j/M_j); substitutional ratios y_i = x_i / (1 − x_C) (§2.1).
 */

export type Material = 'steel' | 'ductile-iron';

export const ELEMENTS = ['C', 'Si', 'Mn', 'Ni', 'Cr', 'Mo', 'Al', 'Cu', 'V', 'Nb', 'Ti', 'B', 'N', 'P', 'S', 'Co', 'W'] as const;
export type Element = (typeof ELEMENTS)[number];
export type ChemistryWtPct = Partial<Record<Element, number>>;

export interface ChemistryIssue {
  /** Path of the offending value, e.g. 'chemistryWtPct.Mn'. */
  field: string;
  message: string;
  severity: 'error' | 'warning';
}

/**
 * Molar masses in g/mol. Fe, C, Mn, Si, Ni, Cr, Mo, Al, Co, Cu, V: metallurgy.md conventions [F2].
 * Nb, Ti, B, N, P, S, W: IUPAC standard atomic weights (from memory) – they only enter the wt%→mole conversion
 * at impurity / micro-alloy levels, where the fourth digit is irrelevant.
 */
export const MOLAR_MASS_G_PER_MOL: Readonly<Record<Element | 'Fe', number>> = {
  Fe: 55.845,
  C: 12.011,
  Si: 28.085,
  Mn: 54.938,
  Ni: 58.693,
  Cr: 51.996,
  Mo: 95.95,
  Al: 26.982,
  Cu: 63.546,
  V: 50.942,
  Nb: 92.906,
  Ti: 47.867,
  B: 10.81,
  N: 14.007,
  P: 30.974,
  S: 32.06,
  Co: 58.933,
  W: 183.84,
};

const ELEMENT_SET: ReadonlySet<string> = new Set(ELEMENTS);
const FIELD = 'chemistryWtPct';

/** Elements the CALPHAD description of §2 has parameters for (besides Fe and C). */
export const CALPHAD_SUBSTITUTIONALS = ['Mn', 'Si', 'Ni', 'Cr', 'Mo', 'Al'] as const;

/** Elements present in a heat at a level that matters for T0 but absent from the CALPHAD set (treated as Fe). */
const NOT_IN_CALPHAD_THRESHOLD_WT_PCT: Partial<Record<Element, number>> = {
  Co: 0.1,
  Cu: 0.3,
  V: 0.1,
  Nb: 0.05,
  Ti: 0.05,
  W: 0.1,
};

/**
 * Validates a chemistry posted by a lab. Returns the typed chemistry (null if any error) and every issue found.
 * Errors: not an object, unknown element (including 'Fe', which is the balance), a value that is not a finite
 * non-negative number, sum > 100 wt%, missing C, carbon impossible for the material.
 * Warnings: each names the model whose fitted range the chemistry leaves. Values are never clamped here.
 */
export function checkChemistry(input: unknown, material: Material): { chemistry: ChemistryWtPct | null; issues: ChemistryIssue[] } {
  const issues: ChemistryIssue[] = [];
  const error = (field: string, message: string) => issues.push({ field, message, severity: 'error' });
  const warn = (field: string, message: string) => issues.push({ field, message, severity: 'warning' });

  if (input === null || typeof input !== 'object' || Array.isArray(input)) {
    const got = input === null ? 'null' : Array.isArray(input) ? 'an array' : typeof input;
    error(FIELD, `must be an object of element → wt% (e.g. {"C": 0.4, "Mn": 0.7}); got ${got}`);
    return { chemistry: null, issues };
  }

  const chemistry: ChemistryWtPct = {};
  let sumWtPct = 0;
  for (const [key, value] of Object.entries(input as Record<string, unknown>)) {
    const field = `${FIELD}.${key}`;
    if (key === 'Fe') {
      error(field, 'Fe is the balance and must not be given; list only the alloying and residual elements');
      continue;
    }
    if (!ELEMENT_SET.has(key)) {
      const caseFix = ELEMENTS.find((e) => e.toLowerCase() === key.toLowerCase());
      error(
        field,
        caseFix
          ? `unknown element '${key}'; element symbols are case-sensitive, did you mean '${caseFix}'?`
          : `unknown element '${key}'; allowed: ${ELEMENTS.join(', ')}`,
      );
      continue;
    }
    if (typeof value !== 'number') {
      error(field, `must be a number (wt%); got ${value === null ? 'null' : typeof value}`);
      continue;
    }
    if (Number.isNaN(value)) {
      error(field, 'must be a number (wt%); got NaN');
      continue;
    }
    if (!Number.isFinite(value)) {
      error(field, `must be a finite number (wt%); got ${value}`);
      continue;
    }
    if (value < 0) {
      error(field, `must not be negative; got ${value} wt%`);
      continue;
    }
    if (value > 100) {
      error(field, `must not exceed 100 wt%; got ${value}`);
      continue;
    }
    chemistry[key as Element] = value;
    sumWtPct += value;
  }

  if (sumWtPct > 100) {
    error(FIELD, `elements sum to ${round(sumWtPct, 3)} wt%, more than 100 wt% (Fe is the balance)`);
  }
  if (!('C' in (input as object))) {
    error(`${FIELD}.C`, 'carbon is required (wt%)');
  }

  const c = chemistry.C;
  if (c !== undefined) {
    if (material === 'steel' && c > 2.1) {
      error(`${FIELD}.C`, `${c} wt% C is above the maximum carbon solubility in austenite (≈2.1 wt%): this is a cast iron, not a steel`);
    }
    if (material === 'ductile-iron' && c < 2.1) {
      error(`${FIELD}.C`, `${c} wt% C is too low for a ductile (graphitic) iron; expected ≈3.0–4.0 wt%`);
    }
  }

  if (issues.some((i) => i.severity === 'error')) return { chemistry: null, issues };

  if (material === 'steel') steelValidityWarnings(chemistry, warn);
  else ductileIronValidityWarnings(chemistry, warn);

  return { chemistry, issues };
}

function steelValidityWarnings(chem: ChemistryWtPct, warn: (field: string, message: string) => void): void {
  const f = (e: Element) => `${FIELD}.${e}`;
  const w = (e: Element) => chem[e] ?? 0;
  const c = w('C');
  // §1.2: Andrews linear and Kung–Rayment are fitted for C 0.1–0.6; Steven–Haynes for 0.1–0.55.
  if (c > 0.6) warn(f('C'), `Ms (Andrews linear / Kung–Rayment) is fitted for C ≤ 0.6 wt%; got ${c} (van Bohemen is used instead)`);
  if (c < 0.1) warn(f('C'), `Ms (Andrews linear / Steven–Haynes) is fitted for C ≥ 0.1 wt%; got ${c}`);
  if (c > 0.55) warn(f('C'), `Ms and Bs (Steven–Haynes 1956) are fitted for C ≤ 0.55 wt%; got ${c}`);
  // §1.1: Andrews Ac1/Ac3 fitted to low-alloy steels with C ≲ 0.6; Ac3 meaningless above the eutectoid.
  if (c > 0.6) warn(f('C'), `Ae1/Ae3 (Andrews 1965) are fitted for C ≲ 0.6 wt%; got ${c}`);
  if (c >= 0.77) warn(f('C'), `Ae3 (Andrews/Grange) is only meaningful for hypoeutectoid steels (C < ≈0.77 wt%); got ${c}`);
  // §1.2: van Bohemen's exponential carbon term works up to ≈1.2–1.5 C.
  if (c > 1.5) warn(f('C'), `Ms (van Bohemen 2012) carbon term is fitted up to ≈1.5 wt% C; got ${c}`);
  // §1.3: KV Bs has a strong Si term that makes it poor for 1.5–2.5 Si.
  if (w('Si') > 1.5) warn(f('Si'), `Bs (Kirkaldy–Venugopalan) is poor for Si > 1.5 wt% (strong Si term); got ${w('Si')}`);
  // §9.1: T0′ is model-dependent for Mn/Ni-rich steels.
  if (w('Mn') >= 1.5) {
    warn(f('Mn'), `T0′ (CALPHAD) is model-dependent for Mn ≥ 1.5 wt% (published descriptions differ by up to ≈0.25–0.4 wt% C); got ${w('Mn')}`);
  }
  if (w('Ni') >= 2) {
    warn(f('Ni'), `T0′ (CALPHAD) is model-dependent for Ni ≥ 2 wt% (published descriptions differ); got ${w('Ni')}`);
  }
  // §9.3: no fcc Al–C / Fe–Al–C parameters; §2.4 Fe–Al bcc B2 ordering ignored above ≈2 wt%.
  if (w('Al') > 0.1) warn(f('Al'), `T0 (CALPHAD) has no fcc Al–C or Fe–Al–C parameters, so T0 for Al-bearing steels is incomplete; got ${w('Al')}`);
  if (w('Al') > 2) warn(f('Al'), `T0 (CALPHAD) ignores B2 ordering of ferrite, acceptable only up to ≈2 wt% Al; got ${w('Al')}`);
  for (const [el, limit] of Object.entries(NOT_IN_CALPHAD_THRESHOLD_WT_PCT) as Array<[Element, number]>) {
    if (w(el) > limit) warn(f(el), `T0 (CALPHAD) has no parameters for ${el}; it is treated as Fe (got ${w(el)} wt%)`);
  }
  // Empirical Ms/Bs/Ae formulas are fitted to low-alloy steels.
  for (const [el, limit] of [['Mn', 3.5], ['Ni', 5], ['Cr', 3.5], ['Mo', 1.5], ['Si', 3]] as Array<[Element, number]>) {
    if (w(el) > limit) warn(f(el), `Ms/Bs/Ae formulas are fitted to low-alloy steels (${el} ≤ ≈${limit} wt%); got ${w(el)}`);
  }
}

function ductileIronValidityWarnings(chem: ChemistryWtPct, warn: (field: string, message: string) => void): void {
  const f = (e: Element) => `${FIELD}.${e}`;
  const w = (e: Element) => chem[e] ?? 0;
  if (w('C') > 4.0) warn(f('C'), `ductile irons normally hold ≈3.0–4.0 wt% C; got ${w('C')}`);
  // §4.1 Voigt–Loper: common unalloyed/low-alloy irons (typical Si 2.3–2.8, §4.2).
  if (w('Si') < 2 || w('Si') > 3) {
    warn(f('Si'), `matrix carbon (Voigt–Loper 1984) is fitted for common irons with Si ≈2–3 wt%; got ${w('Si')}`);
  }
  // §4.2: Mn/Mo segregation to intercellular regions can close the processing window (0.67 Mn / 0.25 Mo example).
  if (w('Mn') > 0.5) warn(f('Mn'), `Mn > 0.5 wt% segregates to intercellular regions and can close the ADI processing window; got ${w('Mn')}`);
  if (w('Mo') > 0.25) warn(f('Mo'), `Mo > 0.25 wt% segregates to intercellular regions and can close the ADI processing window; got ${w('Mo')}`);
}

function round(value: number, digits: number): number {
  const k = 10 ** digits;
  return Math.round(value * k) / k;
}

/** All mole fractions (Fe is the balance). */
export function toMoleFractions(chem: ChemistryWtPct): Record<Element | 'Fe', number> {
  let alloyWtPct = 0;
  for (const el of ELEMENTS) alloyWtPct += chem[el] ?? 0;
  const moles: Record<string, number> = {};
  let total = 0;
  for (const el of ELEMENTS) {
    const n = (chem[el] ?? 0) / MOLAR_MASS_G_PER_MOL[el];
    moles[el] = n;
    total += n;
  }
  const nFe = Math.max(0, 100 - alloyWtPct) / MOLAR_MASS_G_PER_MOL.Fe;
  moles.Fe = nFe;
  total += nFe;
  const x = {} as Record<Element | 'Fe', number>;
  for (const key of Object.keys(moles) as Array<Element | 'Fe'>) x[key] = total > 0 ? moles[key] / total : 0;
  return x;
}

/**
 * Site fractions for the two-sublattice solutions of §2.1.
 * - `y`: substitutional ratios y_i = x_i / (1 − x_C) for Fe and every non-carbon element (N and B are counted with
 *   the substitutional lattice here: at their ppm levels this only matters for the mean molar mass). Σ y = 1.
 * - `yC`: the interstitial site fraction of carbon in austenite (FCC_A1, one interstitial site per metal atom),
 *   y_C = u = x_C / (1 − x_C). For ferrite (three sites) divide by 3.
 */
export function siteFractions(chem: ChemistryWtPct): { yC: number; y: Record<string, number> } {
  const x = toMoleFractions(chem);
  const xC = x.C;
  const y: Record<string, number> = {};
  for (const key of Object.keys(x) as Array<Element | 'Fe'>) {
    if (key === 'C') continue;
    y[key] = xC < 1 ? x[key] / (1 - xC) : 0;
  }
  return { yC: xC < 1 ? xC / (1 - xC) : Infinity, y };
}

/** Mean molar mass of the non-carbon (substitutional) lattice, Σ_i y_i M_i, in g/mol. */
export function substitutionalMolarMass(chem: ChemistryWtPct): number {
  let nSubst = 0;
  let massSubst = 0;
  let alloyWtPct = 0;
  for (const el of ELEMENTS) {
    const w = chem[el] ?? 0;
    alloyWtPct += w;
    if (el === 'C') continue;
    nSubst += w / MOLAR_MASS_G_PER_MOL[el];
    massSubst += w;
  }
  const wFe = Math.max(0, 100 - alloyWtPct);
  nSubst += wFe / MOLAR_MASS_G_PER_MOL.Fe;
  massSubst += wFe;
  return nSubst > 0 ? massSubst / nSubst : MOLAR_MASS_G_PER_MOL.Fe;
}

/**
 * wt% C of a phase holding carbon mole fraction xC with the substitutional ratios of `chem` (conventions:
 * wt%C = 100·x_C·M_C / (x_C·M_C + (1 − x_C)·Σ_i y_i M_i)). The carbon content of `chem` itself is irrelevant.
 */
export function carbonWtPctFromMoleFraction(xC: number, chem: ChemistryWtPct): number {
  const mC = MOLAR_MASS_G_PER_MOL.C;
  const mSubst = substitutionalMolarMass(chem);
  return (100 * xC * mC) / (xC * mC + (1 - xC) * mSubst);
}

/** Inverse of carbonWtPctFromMoleFraction at the substitutional ratios of `chem`. */
export function carbonMoleFractionFromWtPct(carbonWtPct: number, chem: ChemistryWtPct): number {
  const nC = carbonWtPct / MOLAR_MASS_G_PER_MOL.C;
  const nSubst = (100 - carbonWtPct) / substitutionalMolarMass(chem);
  return nC / (nC + nSubst);
}

/**
 * Carbon dissolved in the austenite matrix of a ductile iron at the austenitising temperature, wt% (§4.1,
 * Voigt & Loper 1984, J. Heat Treating 3, 291 – coefficients from memory [M]):
 * C_γ° = T_γ/420 − 0.17·Si − 0.95, fitted for common unalloyed/low-alloy irons at 850–950 °C.
 * Used instead of the bulk C for every matrix calculation of ADI. Not clamped: callers warn outside 850–950 °C.
 */
export function adiMatrixCarbonWtPct(austenitizeTempC: number, chem: ChemistryWtPct): number {
  return austenitizeTempC / 420 - 0.17 * (chem.Si ?? 0) - 0.95;
}
