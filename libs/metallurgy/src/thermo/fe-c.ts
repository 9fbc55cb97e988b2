/**
 * Fe–C binary phase boundaries from the §2 description (Gustafson 1985 Fe–C, SGTE Fe and graphite, cementite as a
 * stoichiometric phase), metallurgy.md §2.2–2.3 and check values §8.1.
 *
 * Two-phase equilibria are solved with the carbon potential μ_C = ∂G/∂u and the lattice potential Ω = G − u μ_C
 * (= μ_Fe in the binary), u = carbon atoms per iron atom:
 *   α/γ : μ_C^α = μ_C^γ and Ω^α = Ω^γ           (1-D bisection on μ_C; each phase inverts μ_C(u) by bisection)
 *   γ/θ : 3 Ω^γ(u) + μ_C^γ(u) = G(Fe3C)           (monotonic in u for u < 1/3)
 *   γ/gr: μ_C^γ(u) = GHSERCC                      (graphite is pure C)
 * Speed is irrelevant here (used for reference diagrams and tests), robustness is not.
 */
import { carbonMoleFractionFromWtPct, type ChemistryWtPct } from '../chemistry.js';
import { carbonPotential, latticePotential, solutionAt, thermoSiteFractions, uFromX, xFromU, type SolutionAtT } from './solution.js';
import { ghserC, ghserFe } from './unaries.js';
import { magneticGibbs } from './magnetic.js';
import { fccFeMinusBcc } from './unaries.js';

const M_FE = 55.845;
const M_C = 12.011;
const PURE_FE = new Float64Array([1, 0, 0, 0, 0, 0, 0]);

/** Cementite Fe3C per mole of formula unit (4 atoms), FULL value vs SER – Gustafson 1985 §2.3 [F2]. Never add 3·GHSERFE + GHSERCC (§9.5). */
export function gibbsCementite(tempK: number): number {
  return -10745 + 706.04 * tempK - 120.6 * tempK * Math.log(tempK);
}

function wtPctFromU(u: number): number {
  return (100 * u * M_C) / (u * M_C + M_FE);
}

function phase(structure: 'fcc' | 'bcc', tempK: number, y: Float64Array = PURE_FE): SolutionAtT {
  return solutionAt(structure, y, tempK);
}

/** u of a phase at a given carbon potential (μ_C increases monotonically with u in a stable solution). */
function uAtCarbonPotential(s: SolutionAtT, muC: number): number {
  let lo = Math.log(1e-14);
  let hi = Math.log(0.999 * s.sites);
  for (let i = 0; i < 200; i++) {
    const mid = 0.5 * (lo + hi);
    if (carbonPotential(s, Math.exp(mid)) < muC) lo = mid;
    else hi = mid;
    if (hi - lo < 1e-13) break;
  }
  return Math.exp(0.5 * (lo + hi));
}

function bisect(f: (v: number) => number, lo: number, hi: number, tol: number): number {
  let flo = f(lo);
  const fhi = f(hi);
  if (Number.isNaN(flo) || Number.isNaN(fhi) || flo * fhi > 0) return Number.NaN;
  for (let i = 0; i < 200 && hi - lo > tol; i++) {
    const mid = 0.5 * (lo + hi);
    const fm = f(mid);
    if (fm * flo > 0) {
      lo = mid;
      flo = fm;
    } else hi = mid;
  }
  return 0.5 * (lo + hi);
}

/** α/γ two-phase equilibrium: u of ferrite and austenite, or null if none exists at this temperature. */
function ferriteAustenite(tempK: number, y: Float64Array = PURE_FE): { uAlpha: number; uGamma: number } | null {
  const a = phase('bcc', tempK, y);
  const g = phase('fcc', tempK, y);
  // Ω^γ − Ω^α as a function of μ_C decreases (dΩ/dμ_C = −u and u_γ > u_α).
  const diff = (muC: number) => latticePotential(g, uAtCarbonPotential(g, muC)) - latticePotential(a, uAtCarbonPotential(a, muC));
  // μ_C range: from very dilute to well beyond graphite saturation.
  const muLo = carbonPotential(g, 1e-9);
  const muHi = carbonPotential(g, 0.3);
  const muC = bisect(diff, muLo, muHi, 1e-7);
  if (Number.isNaN(muC)) return null;
  const uAlpha = uAtCarbonPotential(a, muC);
  const uGamma = uAtCarbonPotential(g, muC);
  if (!(uGamma > uAlpha)) return null;
  return { uAlpha, uGamma };
}

/** u of a solution in equilibrium with cementite. */
function withCementite(s: SolutionAtT): number {
  const gTheta = gibbsCementite(s.tempK);
  const h = (lnU: number) => {
    const u = Math.exp(lnU);
    return 3 * latticePotential(s, u) + carbonPotential(s, u) - gTheta;
  };
  const lnU = bisect(h, Math.log(1e-12), Math.log(0.3), 1e-13);
  return Number.isNaN(lnU) ? Number.NaN : Math.exp(lnU);
}

/** u of a solution in equilibrium with graphite. */
function withGraphite(s: SolutionAtT): number {
  const muGraphite = ghserC(s.tempK);
  return uAtCarbonPotential(s, muGraphite);
}

export interface FeCBoundaries {
  tempC: number;
  /**
   * α/γ equilibrium (A3 line and the ferrite solvus opposite it). Below the eutectoid temperature this two-phase
   * equilibrium is metastable (α + Fe3C is stable); `metastable` says so. null above the pure-iron α/γ point.
   */
  ferriteAustenite: { ferriteCarbonWtPct: number; austeniteCarbonWtPct: number; metastable: boolean } | null;
  /** γ/Fe3C (Acm line) – carbon of austenite saturated with cementite. Metastable vs graphite (the Fe–Fe3C diagram). */
  austeniteCementite: { austeniteCarbonWtPct: number } | null;
  /** α/Fe3C – carbon of ferrite saturated with cementite. */
  ferriteCementite: { ferriteCarbonWtPct: number } | null;
  /** γ/graphite (stable Fe–C diagram). */
  austeniteGraphite: { austeniteCarbonWtPct: number } | null;
}

/**
 * Fe–C binary boundaries at tempC (°C): α/γ, γ/Fe3C, α/Fe3C and γ/graphite carbon contents in wt%.
 * Solid-state only (no liquid, no δ-ferrite region); valid ≈ 400–1147 °C (eutectic).
 */
export function feCBoundaries(tempC: number): FeCBoundaries {
  const T = tempC + 273.15;
  if (!Number.isFinite(tempC) || tempC < 0) throw new RangeError(`feCBoundaries: tempC must be a finite temperature ≥ 0 °C; got ${tempC}`);
  const ag = T < 1184.8 ? ferriteAustenite(T) : null;
  const g = phase('fcc', T);
  const a = phase('bcc', T);
  const uGTheta = withCementite(g);
  const uATheta = withCementite(a);
  const uGGr = withGraphite(g);
  const eutectoidK = eutectoidTempK();
  return {
    tempC,
    ferriteAustenite: ag
      ? { ferriteCarbonWtPct: wtPctFromU(ag.uAlpha), austeniteCarbonWtPct: wtPctFromU(ag.uGamma), metastable: T < eutectoidK }
      : null,
    austeniteCementite: Number.isNaN(uGTheta) ? null : { austeniteCarbonWtPct: wtPctFromU(uGTheta) },
    ferriteCementite: Number.isNaN(uATheta) ? null : { ferriteCarbonWtPct: wtPctFromU(uATheta) },
    austeniteGraphite: Number.isNaN(uGGr) ? null : { austeniteCarbonWtPct: wtPctFromU(uGGr) },
  };
}

/** Pure Fe G_fcc − G_bcc including magnetism, J/mol. */
export function pureIronFccMinusBcc(tempK: number): number {
  return fccFeMinusBcc(tempK) + magneticGibbs(tempK, -201, -2.1, 'fcc') - magneticGibbs(tempK, 1043, 2.22, 'bcc');
}

/** α/γ transition of pure iron, °C (A3 of pure Fe; 912 °C in the handbooks). */
export function pureIronAlphaGammaC(): number {
  return bisect(pureIronFccMinusBcc, 1000, 1300, 1e-9) - 273.15;
}

/** γ/δ transition of pure iron, °C (1394 °C in the handbooks). */
export function pureIronGammaDeltaC(): number {
  return bisect(pureIronFccMinusBcc, 1500, 1750, 1e-9) - 273.15;
}

/** Gibbs energy of bcc (α) iron vs SER, magnetism included, J/mol (GHSERFE + Inden/Hillert–Jarl term, §2.1–2.2). */
function bccIronGibbs(tempK: number): number {
  return ghserFe(tempK) + magneticGibbs(tempK, 1043, 2.22, 'bcc');
}

/**
 * Heat capacity of bcc iron, J/(mol K): c_p = −T·∂²G/∂T² of the SGTE description, by a central second difference
 * (step 0.01 K; G is smooth on either side of the Curie point, where the magnetic term puts a λ-shaped peak).
 */
export function bccIronHeatCapacity(tempK: number): number {
  const h = 0.01;
  return (-tempK * (bccIronGibbs(tempK + h) - 2 * bccIronGibbs(tempK) + bccIronGibbs(tempK - h))) / (h * h);
}

/**
 * Curie temperature of bcc iron, °C, as the DESCRIPTION gives it: the temperature of the heat-capacity (λ) peak of
 * GHSERFE + G_mag, found by scanning 900–1200 K and refining by golden-section search. Derived from the Gibbs
 * energy, so a wrong magnetic function (τ, p, D, the branch at τ = 1) moves it off the handbook 770 °C.
 */
export function ironCurieC(): number {
  let bestK = 900;
  let bestCp = Number.NEGATIVE_INFINITY;
  for (let T = 900; T <= 1200; T += 0.5) {
    const cp = bccIronHeatCapacity(T);
    if (cp > bestCp) {
      bestCp = cp;
      bestK = T;
    }
  }
  let a = bestK - 1;
  let b = bestK + 1;
  const g = (Math.sqrt(5) - 1) / 2;
  while (b - a > 1e-3) {
    const c = b - g * (b - a);
    const d = a + g * (b - a);
    if (bccIronHeatCapacity(c) > bccIronHeatCapacity(d)) b = d;
    else a = c;
  }
  return 0.5 * (a + b) - 273.15;
}

let eutectoidCache: number | undefined;

function eutectoidTempK(): number {
  if (eutectoidCache === undefined) {
    // Eutectoid: the γ corner of α/γ meets the Acm line. Above it the γ side of α/γ is leaner than Acm.
    const d = (T: number) => {
      const ag = ferriteAustenite(T);
      const uTheta = withCementite(phase('fcc', T));
      return ag ? ag.uGamma - uTheta : Number.NaN;
    };
    eutectoidCache = bisect(d, 900, 1150, 1e-8);
  }
  return eutectoidCache;
}

/** Fe–C (Fe–Fe3C) eutectoid: temperature and carbon of the three phases in equilibrium. */
export function feCEutectoid(): { tempC: number; austeniteCarbonWtPct: number; ferriteCarbonWtPct: number; austeniteCarbonMoleFraction: number; ferriteCarbonMoleFraction: number } {
  const T = eutectoidTempK();
  const ag = ferriteAustenite(T);
  if (!ag) throw new Error('Fe–C eutectoid not found');
  return {
    tempC: T - 273.15,
    austeniteCarbonWtPct: wtPctFromU(ag.uGamma),
    ferriteCarbonWtPct: wtPctFromU(ag.uAlpha),
    austeniteCarbonMoleFraction: xFromU(ag.uGamma),
    ferriteCarbonMoleFraction: xFromU(ag.uAlpha),
  };
}

/**
 * Para-equilibrium Ae3 of an alloy, °C: the temperature at which austenite of the bulk composition is in
 * equilibrium with ferrite of the same substitutional ratios (only carbon partitions) – the §2 CALPHAD α/γ boundary
 * at fixed y_i, recommended over the empirical formulas for high-Si steels (§1.1). For Fe–C it is the A3 line.
 * Para-equilibrium lies below the full (ortho) equilibrium Ae3 for Mn/Ni steels: it is the upper limit for
 * ferrite that grows without substitutional partitioning (for 4340 it is ≈ 55 K below the Andrews value).
 * Solutes without parameters count as Fe. Cementite is not considered: above the eutectoid carbon the result is the
 * metastable α/γ extension below A1, so compare it with Ae1. Returns NaN when no α/γ boundary crosses the bulk
 * carbon between 500 °C and the alloy's carbon-free α/γ temperature.
 */
export function paraequilibriumAe3C(chem: ChemistryWtPct): number {
  const y = thermoSiteFractions(chem);
  const uBulk = uFromX(carbonMoleFractionFromWtPct(chem.C ?? 0, chem));
  const carbonFree = (T: number) => gibbsOfPhaseAt('fcc', y, T) - gibbsOfPhaseAt('bcc', y, T);
  // Carbon-free α/γ temperature of the alloy (upper end of the two-phase field): the first crossing above 500 °C
  // (ferritisers such as Si close the γ loop, so fcc − bcc may turn negative again at high temperature).
  let tTop = Number.NaN;
  for (let T = 773.15; T < 1700; T += 10) {
    if (carbonFree(T) > 0 && carbonFree(T + 10) <= 0) {
      tTop = bisect(carbonFree, T, T + 10, 1e-6);
      break;
    }
  }
  if (Number.isNaN(tTop)) return Number.NaN;
  if (uBulk <= 0) return tTop - 273.15;
  const g = (T: number) => {
    const ag = ferriteAustenite(T, y);
    return (ag ? ag.uGamma : 0) - uBulk;
  };
  const T = bisect(g, 773.15, tTop - 1e-6, 1e-4);
  return Number.isNaN(T) ? Number.NaN : T - 273.15;
}

function gibbsOfPhaseAt(structure: 'fcc' | 'bcc', y: Float64Array, T: number): number {
  return latticePotential(phase(structure, T, y), 1e-14);
}
