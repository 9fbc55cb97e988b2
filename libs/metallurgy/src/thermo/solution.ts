/**
 * Compound-energy formalism for (Fe,Mn,Si,Ni,Cr,Mo,Al)_1(C,Va)_c, metallurgy.md §2.1.
 *
 * Basis: J per mole of FORMULA UNIT, i.e. per mole of substitutional atoms (1 + u moles of atoms, u = x_C/(1 − x_C)).
 * For fixed substitutional site fractions y_i and temperature the Gibbs energy is a closed-form function of the
 * carbon site fraction y_C; `solutionAt` collects everything that does not depend on y_C once, so that evaluating
 * G(y_C) and dG/dy_C inside a root finder costs a few logarithms.
 */
import { ELEMENTS, MOLAR_MASS_G_PER_MOL, type ChemistryWtPct } from '../chemistry.js';
import { MAGNETIC, R_J_PER_MOL_K, magneticF, type MagneticStructure } from './magnetic.js';
import { NSPECIES, SPECIES, SPECIES_INDEX, phaseParameters, type FeSiCOption, type Species } from './parameters.js';
import { unaryTable, type UnaryTable } from './unaries.js';

/**
 * Substitutional site fractions over the species of the CALPHAD description (order of SPECIES). Elements without
 * parameters (Co, Cu, V, Nb, Ti, W, P, S, B, N) are counted as Fe: their moles are added to Fe's. Carbon does not
 * enter: y_i = x_i / (1 − x_C) is independent of the carbon content.
 */
export function thermoSiteFractions(chem: ChemistryWtPct): Float64Array {
  const y = new Float64Array(NSPECIES);
  let alloyWtPct = 0;
  let otherMoles = 0;
  let total = 0;
  for (const el of ELEMENTS) {
    const w = chem[el] ?? 0;
    alloyWtPct += w;
    if (el === 'C' || w === 0) continue;
    const n = w / MOLAR_MASS_G_PER_MOL[el];
    total += n;
    const idx = SPECIES_INDEX[el as Species];
    if (idx === undefined) otherMoles += n;
    else y[idx] += n;
  }
  const nFe = Math.max(0, 100 - alloyWtPct) / MOLAR_MASS_G_PER_MOL.Fe + otherMoles;
  total += nFe - otherMoles;
  y[0] = nFe;
  for (let i = 0; i < NSPECIES; i++) y[i] = total > 0 ? y[i] / total : i === 0 ? 1 : 0;
  return y;
}

/** Everything of one phase at fixed (y_i, T) that does not depend on y_C. */
export interface SolutionAtT {
  tempK: number;
  /** interstitial sites per formula unit (fcc 1, bcc 3) */
  sites: number;
  magnetic: MagneticStructure;
  /** R T Σ y_i ln y_i (substitutional ideal mixing; cancels in γ/α differences at equal y_i) */
  gIdealSubst: number;
  /** Σ y_i °G_{i:Va} + excess terms multiplied by y_Va */
  gVa: number;
  /** Σ y_i °G_{i:C} + excess terms multiplied by y_C */
  gC: number;
  /** Σ y_i L_{i:C,Va} */
  lCVa: number;
  /** raw (pre-AFM) T_C and β of the Va and C "ends" – both are linear in y_C */
  tcVa: number;
  tcC: number;
  betaVa: number;
  betaC: number;
}

export function solutionAt(
  phase: 'fcc' | 'bcc',
  y: ArrayLike<number>,
  tempK: number,
  siOption: FeSiCOption = 'B',
  unaries: UnaryTable = unaryTable(tempK),
): SolutionAtT {
  const p = phaseParameters(phase, siOption);
  const T = tempK;
  const u = unaries;
  let gVa = 0;
  let gC = 0;
  let lCVa = 0;
  let tcVa = 0;
  let tcC = 0;
  let betaVa = 0;
  let betaC = 0;
  let ideal = 0;
  for (let i = 0; i < NSPECIES; i++) {
    const yi = y[i];
    if (yi <= 0) continue;
    const em = p.endMembers[SPECIES[i]];
    gVa += yi * em.gVa(T, u);
    gC += yi * em.gC(T, u);
    lCVa += yi * em.lCVa(T, u);
    tcVa += yi * em.tcVa;
    tcC += yi * em.tcC;
    betaVa += yi * em.betaVa;
    betaC += yi * em.betaC;
    ideal += yi * Math.log(yi);
  }
  for (const b of p.binaries) {
    const yi = y[SPECIES_INDEX[b.pair[0]]];
    const yk = y[SPECIES_INDEX[b.pair[1]]];
    const yy = yi * yk;
    if (yy === 0) continue;
    const d = yi - yk; // order of the parameter name – §2.1 Redlich–Kister trap
    let g = 0;
    let dn = 1;
    for (const Ln of b.g) {
      g += Ln(T, u) * dn;
      dn *= d;
    }
    let tc = 0;
    if (b.tc) {
      dn = 1;
      for (const v of b.tc) {
        tc += v * dn;
        dn *= d;
      }
    }
    let beta = 0;
    if (b.beta) {
      dn = 1;
      for (const v of b.beta) {
        beta += v * dn;
        dn *= d;
      }
    }
    if (b.sub === 'Va') {
      gVa += yy * g;
      tcVa += yy * tc;
      betaVa += yy * beta;
    } else {
      gC += yy * g;
      tcC += yy * tc;
      betaC += yy * beta;
    }
  }
  for (const t of p.ternaries) {
    const yyy = y[SPECIES_INDEX[t.species[0]]] * y[SPECIES_INDEX[t.species[1]]] * y[SPECIES_INDEX[t.species[2]]];
    if (yyy === 0) continue;
    gVa += yyy * t.g(T, u);
    tcVa += yyy * (t.tc ?? 0);
  }
  return {
    tempK,
    sites: p.sites,
    magnetic: p.magnetic,
    gIdealSubst: R_J_PER_MOL_K * T * ideal,
    gVa,
    gC,
    lCVa,
    tcVa,
    tcC,
    betaVa,
    betaC,
  };
}

function magneticAndDerivative(s: SolutionAtT, yC: number): { g: number; dg: number } {
  const m = MAGNETIC[s.magnetic];
  let tc = s.tcVa + yC * (s.tcC - s.tcVa);
  let dtc = s.tcC - s.tcVa;
  if (tc < 0) {
    tc /= m.afm;
    dtc /= m.afm;
  }
  let beta = s.betaVa + yC * (s.betaC - s.betaVa);
  let dbeta = s.betaC - s.betaVa;
  if (beta < 0) {
    beta /= m.afm;
    dbeta /= m.afm;
  }
  if (tc <= 0 || beta <= 0) return { g: 0, dg: 0 };
  const T = s.tempK;
  const tau = T / tc;
  const f = magneticF(tau, s.magnetic);
  let df: number;
  if (tau < 1) {
    const t2 = tau * tau;
    const t8 = t2 * t2 * t2 * t2;
    const t14 = t8 * t2 * t2 * t2;
    df = m.a1 / t2 - 3 * m.a3 * t2 - 9 * m.a9 * t8 - 15 * m.a15 * t14;
  } else {
    const i6 = 1 / tau ** 6;
    df = 5 * m.b5 * i6 + 15 * m.b15 * i6 / tau ** 10 + 25 * m.b25 * i6 / tau ** 20;
  }
  const lnb = Math.log(beta + 1);
  const RT = R_J_PER_MOL_K * T;
  const dtau = (-T / (tc * tc)) * dtc;
  return { g: RT * lnb * f, dg: RT * ((dbeta / (beta + 1)) * f + lnb * df * dtau) };
}

/** G_mag only (no derivative) – the hot path of the T0 root finder. */
function magneticOnly(s: SolutionAtT, yC: number): number {
  const afm = MAGNETIC[s.magnetic].afm;
  let tc = s.tcVa + yC * (s.tcC - s.tcVa);
  if (tc < 0) tc /= afm;
  let beta = s.betaVa + yC * (s.betaC - s.betaVa);
  if (beta < 0) beta /= afm;
  if (tc <= 0 || beta <= 0) return 0;
  return R_J_PER_MOL_K * s.tempK * Math.log(beta + 1) * magneticF(s.tempK / tc, s.magnetic);
}

function xlnx(v: number): number {
  return v > 0 ? v * Math.log(v) : 0;
}

/** G per mole of formula unit at carbon site fraction yC (interstitial sublattice). */
export function gibbsAtSiteFraction(s: SolutionAtT, yC: number): number {
  const RT = R_J_PER_MOL_K * s.tempK;
  return (
    s.gIdealSubst +
    (1 - yC) * s.gVa +
    yC * s.gC +
    RT * s.sites * (xlnx(yC) + xlnx(1 - yC)) +
    yC * (1 - yC) * s.lCVa +
    magneticOnly(s, yC)
  );
}

/** dG/dy_C per mole of formula unit. */
export function gibbsDerivative(s: SolutionAtT, yC: number): number {
  const RT = R_J_PER_MOL_K * s.tempK;
  return s.gC - s.gVa + RT * s.sites * (Math.log(yC) - Math.log(1 - yC)) + (1 - 2 * yC) * s.lCVa + magneticAndDerivative(s, yC).dg;
}

/** Carbon chemical potential μ_C = ∂G/∂u (u = carbon atoms per substitutional atom = sites·y_C), J/mol, vs SER. */
export function carbonPotential(s: SolutionAtT, u: number): number {
  return gibbsDerivative(s, u / s.sites) / s.sites;
}

/** Potential of the substitutional lattice (μ_Fe in the Fe–C binary) = G − u μ_C, J/mol. */
export function latticePotential(s: SolutionAtT, u: number): number {
  const yC = u / s.sites;
  return gibbsAtSiteFraction(s, yC) - yC * gibbsDerivative(s, yC);
}

/** Carbon atoms per substitutional atom from carbon mole fraction. */
export function uFromX(xC: number): number {
  return xC / (1 - xC);
}

export function xFromU(u: number): number {
  return u / (1 + u);
}

/**
 * Gibbs energy of austenite (FCC_A1), J per mole of formula unit (= per mole of substitutional atoms; divide by
 * 1 + x_C/(1 − x_C) for J per mole of atoms), relative to SER, at carbon mole fraction xC and the substitutional
 * ratios of `chem` (its own C is ignored). Fe–Si–C option B (§2.4 default).
 */
export function gibbsFcc(chem: ChemistryWtPct, xC: number, tempK: number): number {
  return gibbsAtSiteFraction(solutionAt('fcc', thermoSiteFractions(chem), tempK), uFromX(xC));
}

/** Gibbs energy of ferrite (BCC_A2), same basis as gibbsFcc; carbon site fraction is u/3. */
export function gibbsBcc(chem: ChemistryWtPct, xC: number, tempK: number): number {
  return gibbsAtSiteFraction(solutionAt('bcc', thermoSiteFractions(chem), tempK), uFromX(xC) / 3);
}
