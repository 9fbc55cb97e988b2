/**
 * T0 and T0′ (metallurgy.md §2.5).
 *
 * T0: the carbon content at which austenite and ferrite of the SAME composition have equal Gibbs energy per mole of
 * atoms. T0′: the same with the stored energy of bainitic ferrite added to ferrite, ΔG_m^{γ→α}(x_C, T) = −E_store
 * (E_store = 400 J/mol, Bhadeshia & Edmonds 1980, Acta Metall. 28, 1265). The substitutional ratios are those of the
 * bulk alloy (displacive growth, no substitutional partitioning).
 *
 * Root finding: ΔG_m rises monotonically with x_C between 200 and 700 °C (§2.5), so a bracketed Illinois
 * (regula falsi) iteration on x_C ∈ (1e−9, 0.25) converges in ≈ 8–12 evaluations of two closed-form functions.
 */
import { carbonWtPctFromMoleFraction, carbonMoleFractionFromWtPct, type ChemistryWtPct } from '../chemistry.js';
import { R_J_PER_MOL_K, magneticGibbs } from './magnetic.js';
import { SPECIES_INDEX, type FeSiCOption } from './parameters.js';
import { gibbsAtSiteFraction, solutionAt, thermoSiteFractions, uFromX, type SolutionAtT } from './solution.js';
import { fccFeMinusBcc, unaryTable } from './unaries.js';

/** Stored energy of bainitic ferrite, J/mol (Bhadeshia & Edmonds 1980; metallurgy.md §2.5). */
export const BAINITE_STORED_ENERGY_J_PER_MOL = 400;

/**
 * Which thermodynamic description of the substitutional solutes to use.
 * - 'calphad': the §2 parameter set (Gustafson Fe–C, Huang Fe–Mn(–C), Fe–Si–C option B, ...). The default.
 * - 'alt': a CONSTRUCTED spread, not a published description. It stands in for the published non-CALPHAD treatments
 *   with a stronger Mn effect (§9.1: descriptions that put the substitutional solutes in as Aaronson–Domian–Pound-type
 *   temperature shifts of the pure-iron γ/α free-energy change; §8.2: "quasi-chemical Fe–C with temperature-shift
 *   alloy terms"). metallurgy.md names no specific published set or paper for it, so none is implemented; we only
 *   imitate its reported size of effect. Construction (ours):
 *     ΔG_m,alt(x_C, T) = ΔG_m,§2 with Fe–Si–C option A (x_C, T)
 *                        + (1 − x_C)·y_Fe·[ΔG°_Fe(T + ΔT) − ΔG°_Fe(T)],   ΔT = Σ_i k_i·(100·y_i)
 *   where ΔG°_Fe = G_bcc − G_fcc of pure iron (magnetism included) and k_i is in K per at.% of the substitutional
 *   lattice (a positive k stabilises austenite, lowering T0). Option A gives the other sign of the small Si effect
 *   (§9.2). The k_i are fitted [C] to the second column of the §8.2 "named steels" table (15 values: five steels at
 *   300/350/400 °C). That column is headed "x_T0′" there, but we read it as the T0′ of the stronger-Mn published
 *   description: its first column equals our CALPHAD T0′ exactly, and its 350 °C value for Fe–0.43C–2.12Si–3Mn,
 *   x = 0.0243 ≈ 0.54 wt%, is the one the §8.2 lever-rule example attributes to that description; see
 *   thermo/t0.test.ts. Fit: rms 0.0010, max 0.0019 in x_C. Mo is tied to Cr (too few Mo data to fit it alone).
 *   Those 15 values are its fitting data, so the test that it reproduces them is a fit regression, not a
 *   validation. Use 'alt' only to sample the model spread in the uncertainty band, never as the answer.
 */
export type ThermoDescription = 'calphad' | 'alt';

export type AltShiftElement = 'Mn' | 'Ni' | 'Cr' | 'Mo' | 'Si';

/** ADP-style temperature shifts of the constructed 'alt' description, K per at.% (fitted [C] by us, see ThermoDescription). */
export const ALT_SHIFT_K_PER_AT_PCT: Readonly<Record<AltShiftElement, number>> = { Mn: 29.6, Ni: 9.3, Cr: 25.5, Mo: 25.5, Si: 0 };

const ALT_SHIFT_ELEMENTS: readonly AltShiftElement[] = ['Mn', 'Ni', 'Cr', 'Mo', 'Si'];

/** Pure-iron G_bcc − G_fcc per mole, magnetism included (§2.2 lattice stability + §2.1 magnetic terms). */
export function pureIronBccMinusFcc(tempK: number): number {
  return -fccFeMinusBcc(tempK) + magneticGibbs(tempK, 1043, 2.22, 'bcc') - magneticGibbs(tempK, -201, -2.1, 'fcc');
}

/** Precomputed driving-force function of one composition at one temperature. */
export interface DrivingForce {
  tempK: number;
  /** ΔG_m^{γ→α} = (G_bcc − G_fcc) per mole of atoms at carbon mole fraction xC, J/mol. */
  at(xC: number): number;
}

export function drivingForce(chem: ChemistryWtPct, tempK: number, description: ThermoDescription = 'calphad'): DrivingForce {
  assertTemperatureK(tempK);
  const y = thermoSiteFractions(chem);
  return drivingForceForSiteFractions(y, tempK, description);
}

export function drivingForceForSiteFractions(
  y: Float64Array,
  tempK: number,
  description: ThermoDescription = 'calphad',
  altShift: Readonly<Record<AltShiftElement, number>> = ALT_SHIFT_K_PER_AT_PCT,
  altSiOption: FeSiCOption = 'A',
): DrivingForce {
  const siOption = description === 'alt' ? altSiOption : 'B';
  const unaries = unaryTable(tempK);
  const fcc: SolutionAtT = solutionAt('fcc', y, tempK, siOption, unaries);
  const bcc: SolutionAtT = solutionAt('bcc', y, tempK, siOption, unaries);
  let shiftPerMoleSubst = 0;
  if (description === 'alt') {
    let dT = 0;
    for (const el of ALT_SHIFT_ELEMENTS) dT += altShift[el] * 100 * y[SPECIES_INDEX[el]];
    if (dT !== 0) shiftPerMoleSubst = y[SPECIES_INDEX.Fe] * (pureIronBccMinusFcc(tempK + dT) - pureIronBccMinusFcc(tempK));
  }
  return {
    tempK,
    at(xC: number): number {
      const u = uFromX(xC);
      // Per mole of formula unit, then / (1 + u) for per mole of atoms; the shift is per mole of substitutional atoms.
      return (gibbsAtSiteFraction(bcc, u / 3) - gibbsAtSiteFraction(fcc, u) + shiftPerMoleSubst) / (1 + u);
    },
  };
}

function assertTemperatureK(tempK: number): void {
  if (!Number.isFinite(tempK) || tempK <= 0) throw new RangeError(`T0: temperature must be finite and above absolute zero; got ${tempK - 273.15} °C`);
}

const X_LO = 1e-9;
const X_HI = 0.25;

/** Root of ΔG_m(x) + storedEnergy = 0 on (X_LO, X_HI). Returns 0 if even carbon-free ferrite is not favoured. */
function solveCarbon(df: DrivingForce, storedEnergy: number): number {
  let a = X_LO;
  let fa = df.at(a) + storedEnergy;
  if (fa >= 0) return 0;
  let b = X_HI;
  let fb = df.at(b) + storedEnergy;
  if (fb <= 0) return X_HI;
  // Illinois variant of regula falsi, with a bisection step whenever the secant stalls.
  let side = 0;
  for (let iter = 0; iter < 100; iter++) {
    let c = (a * fb - b * fa) / (fb - fa);
    if (!(c > a && c < b)) c = 0.5 * (a + b);
    const fc = df.at(c) + storedEnergy;
    if (Math.abs(fc) < 1e-7 || b - a < 1e-12) return c;
    if (fc * fb > 0) {
      b = c;
      fb = fc;
      if (side === 1) fa /= 2;
      side = 1;
    } else {
      a = c;
      fa = fc;
      if (side === -1) fb /= 2;
      side = -1;
    }
  }
  return 0.5 * (a + b);
}

/** T0 carbon as a MOLE FRACTION (substitutional ratios of chem; its own C is irrelevant). */
export function t0MoleFraction(chem: ChemistryWtPct, tempC: number, opts: { storedEnergyJPerMol?: number; description?: ThermoDescription } = {}): number {
  const storedEnergy = opts.storedEnergyJPerMol ?? 0;
  if (!Number.isFinite(storedEnergy)) throw new RangeError(`T0: storedEnergyJPerMol must be finite; got ${storedEnergy}`);
  return solveCarbon(drivingForce(chem, tempC + 273.15, opts.description ?? 'calphad'), storedEnergy);
}

/** T0 carbon, wt%, at tempC (°C). Returns 0 where carbon-free ferrite is not favoured (above ≈ 912 °C for Fe–C). */
export function t0CarbonWtPct(chem: ChemistryWtPct, tempC: number, opts: { description?: ThermoDescription } = {}): number {
  return carbonWtPctFromMoleFraction(t0MoleFraction(chem, tempC, { description: opts.description }), chem);
}

/** T0′ carbon, wt%: ΔG_m^{γ→α} = −E_store (default 400 J/mol). */
export function t0PrimeCarbonWtPct(chem: ChemistryWtPct, tempC: number, opts: { storedEnergyJPerMol?: number; description?: ThermoDescription } = {}): number {
  const storedEnergy = opts.storedEnergyJPerMol ?? BAINITE_STORED_ENERGY_J_PER_MOL;
  return carbonWtPctFromMoleFraction(t0MoleFraction(chem, tempC, { storedEnergyJPerMol: storedEnergy, description: opts.description }), chem);
}

/** T0 and T0′ over a temperature range (inclusive of both ends when the step divides the range). */
export function t0Curve(
  chem: ChemistryWtPct,
  fromC: number,
  toC: number,
  stepC: number,
  opts: { storedEnergyJPerMol?: number; description?: ThermoDescription } = {},
): Array<{ tempC: number; t0CarbonWtPct: number; t0PrimeCarbonWtPct: number }> {
  if (!(stepC > 0)) throw new RangeError(`t0Curve: stepC must be > 0; got ${stepC}`);
  assertTemperatureK(fromC + 273.15);
  assertTemperatureK(toC + 273.15);
  const storedEnergy = opts.storedEnergyJPerMol ?? BAINITE_STORED_ENERGY_J_PER_MOL;
  const y = thermoSiteFractions(chem);
  const out: Array<{ tempC: number; t0CarbonWtPct: number; t0PrimeCarbonWtPct: number }> = [];
  const dir = toC >= fromC ? 1 : -1;
  const n = Math.floor(Math.abs(toC - fromC) / stepC + 1e-9);
  for (let i = 0; i <= n; i++) {
    const tempC = fromC + dir * i * stepC;
    const df = drivingForceForSiteFractions(y, tempC + 273.15, opts.description ?? 'calphad');
    out.push({
      tempC,
      t0CarbonWtPct: carbonWtPctFromMoleFraction(solveCarbon(df, 0), chem),
      t0PrimeCarbonWtPct: carbonWtPctFromMoleFraction(solveCarbon(df, storedEnergy), chem),
    });
  }
  return out;
}

/**
 * T0 (or T0′) TEMPERATURE, °C, of an alloy with the given carbon wt% (§2.5: bisect on T over 400–1200 K).
 * Returns NaN if the root is outside that range.
 */
export function t0TemperatureC(chem: ChemistryWtPct, carbonWtPct: number, opts: { storedEnergyJPerMol?: number; description?: ThermoDescription } = {}): number {
  const storedEnergy = opts.storedEnergyJPerMol ?? 0;
  const xC = carbonMoleFractionFromWtPct(carbonWtPct, chem);
  const y = thermoSiteFractions(chem);
  const f = (T: number) => drivingForceForSiteFractions(y, T, opts.description ?? 'calphad').at(xC) + storedEnergy;
  let lo = 400;
  let hi = 1200;
  let flo = f(lo);
  const fhi = f(hi);
  if (flo * fhi > 0) return Number.NaN;
  for (let i = 0; i < 60; i++) {
    const mid = 0.5 * (lo + hi);
    const fm = f(mid);
    if (fm * flo > 0) {
      lo = mid;
      flo = fm;
    } else hi = mid;
  }
  return 0.5 * (lo + hi) - 273.15;
}

export { R_J_PER_MOL_K };
