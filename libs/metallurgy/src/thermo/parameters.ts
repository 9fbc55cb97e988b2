/**
 * Parameters of the FCC_A1 (austenite) and BCC_A2 (ferrite) two-sublattice solutions (Fe,Mn,Si,Ni,Cr,Mo,Al)(C,Va)_c,
 * metallurgy.md §2.3–2.4. Every coefficient is copied from that file; its tag and source is written beside it.
 *
 * Redlich–Kister trap (§2.1, §9.4): a binary parameter L(i,k:j) multiplies (y_i − y_k)^n with i,k in the order of the
 * parameter name, which in the TDB files is alphabetical: CR,FE → (y_Cr − y_Fe); AL,FE → (y_Al − y_Fe);
 * FE,MN; FE,MO; FE,NI; FE,SI; MN,SI. The `pair` arrays below are written in exactly that order.
 */
import { fccFeMinusBcc, ghserFe, type UnaryTable } from './unaries.js';

/** Substitutional species of the CALPHAD description. Index order is used everywhere in the thermo code. */
export const SPECIES = ['Fe', 'Mn', 'Si', 'Ni', 'Cr', 'Mo', 'Al'] as const;
export type Species = (typeof SPECIES)[number];
export const NSPECIES = SPECIES.length;
const I: Record<Species, number> = { Fe: 0, Mn: 1, Si: 2, Ni: 3, Cr: 4, Mo: 5, Al: 6 };

/** Fe–Si–C ternary choice (§2.4): option B (Miettinen 1998) is the default, option A (Lacaze & Sundman 1991) the alternative. */
export type FeSiCOption = 'A' | 'B';

/** A temperature function; `u` holds the SGTE unaries at T (computed once per temperature). */
type TFn = (T: number, u: UnaryTable) => number;
const zero: TFn = () => 0;
const lin = (a: number, b = 0): TFn => (T) => a + b * T;

export interface EndMember {
  /** °G_{i:Va} */
  gVa: TFn;
  /** °G_{i:C} */
  gC: TFn;
  /** L^(0)_{i:C,Va} */
  lCVa: TFn;
  /** Raw (pre-AFM) Curie/Néel temperature and β of i:Va and i:C. */
  tcVa: number;
  betaVa: number;
  tcC: number;
  betaC: number;
}

export interface BinaryInteraction {
  /** Species in the order of the parameter name: the RK term is (y_pair[0] − y_pair[1])^n. */
  pair: readonly [Species, Species];
  /** Interstitial constituent the parameter belongs to. */
  sub: 'Va' | 'C';
  /** L^(0), L^(1), ... */
  g: TFn[];
  tc?: number[];
  beta?: number[];
}

export interface TernaryInteraction {
  species: readonly [Species, Species, Species];
  /** L(i,k,l:Va) */
  g: TFn;
  tc?: number;
}

export interface PhaseParameters {
  /** Interstitial sites per substitutional site (fcc 1, bcc 3). */
  sites: number;
  magnetic: 'fcc' | 'bcc';
  endMembers: Record<Species, EndMember>;
  binaries: BinaryInteraction[];
  ternaries: TernaryInteraction[];
}

// ----------------------------------------------------------------------------------------------------------------
// FCC_A1 (austenite)
// ----------------------------------------------------------------------------------------------------------------
function fccParameters(siOption: FeSiCOption): PhaseParameters {
  return {
    sites: 1,
    magnetic: 'fcc',
    endMembers: {
      // Fe: lattice stability §2.2 (SGTE); Fe:C Gustafson 1985 §2.3 [F2]; TC −201, β −2.1 for Fe:Va and Fe:C.
      Fe: {
        gVa: (_T, u) => u.fccFe,
        gC: (T, u) => u.fccFe + u.c + 77207 - 15.877 * T,
        lCVa: lin(-34671),
        tcVa: -201,
        betaVa: -2.1,
        tcC: -201,
        betaC: -2.1,
      },
      // Mn: fcc Mn §2.2 (SGTE) with TC −1620, β −1.86; Mn:C and L(Mn:C,Va) Huang 1990 §2.4 [F2]. The Mn:C magnetic
      // parameters are taken equal to Mn:Va (as for Fe:C).
      Mn: {
        gVa: (_T, u) => u.fccMn,
        gC: (T, u) => u.mn + u.c + 502 + 15.261 * T,
        lCVa: lin(-43433),
        tcVa: -1620,
        betaVa: -1.86,
        tcC: -1620,
        betaC: -1.86,
      },
      // Si: fcc Si = GHSERSI + 51000 − 21.8T §2.2; Si:C Lacaze & Sundman 1991 §2.4 [F2], L(Si:C,Va) = 0.
      Si: {
        gVa: (T, u) => u.si + 51000 - 21.8 * T,
        gC: (T, u) => u.si + u.c - 20510 + 38.7 * T,
        lCVa: zero,
        tcVa: 0,
        betaVa: 0,
        tcC: 0,
        betaC: 0,
      },
      // Ni: GHSERNI, TC 633, β 0.52 §2.2; Ni:C and L(Ni:C,Va) Gabriel, Gustafson & Ansara 1987 §2.4 [F2].
      Ni: {
        gVa: (_T, u) => u.ni,
        gC: (T, u) => u.ni + u.c + 62000 - 7.6 * T,
        lCVa: lin(-14902, 7.5),
        tcVa: 633,
        betaVa: 0.52,
        tcC: 633,
        betaC: 0.52,
      },
      // Cr: fcc Cr = GHSERCR + 7284 + 0.163T, TC −1109, β −2.46 §2.2; Cr:C, L(Cr:C,Va) Andersson 1987/88 §2.4 [F2].
      Cr: {
        gVa: (T, u) => u.cr + 7284 + 0.163 * T,
        gC: (T, u) => u.cr + u.c + 1200 - 1.94 * T,
        lCVa: lin(-11977, 6.8194),
        tcVa: -1109,
        betaVa: -2.46,
        tcC: -1109,
        betaC: -2.46,
      },
      // Mo: fcc Mo = GHSERMO + 15200 + 0.63T §2.2; Mo:C, L(Mo:C,Va) Andersson 1988 §2.4 [F2].
      Mo: {
        gVa: (T, u) => u.mo + 15200 + 0.63 * T,
        gC: (T, u) => u.mo + u.c - 7500 - 8.3 * T - 750000 / T,
        lCVa: lin(-41300),
        tcVa: 0,
        betaVa: 0,
        tcC: 0,
        betaC: 0,
      },
      // Al: fcc Al is the SER §2.2. fcc Al:C was NOT located (§2.4, §9.3 gap). Assumption made here (ours, not a
      // published value): Al:C = GHSERAL + GHSERCC + (77207 − 15.877T), i.e. Al adds carbon to fcc as Fe does, and
      // L(Al:C,Va) = 0. The fcc Fe–Al–C ternary is missing, so T0 for Al-bearing steels is incomplete (warned).
      Al: {
        gVa: (_T, u) => u.al,
        gC: (T, u) => u.al + u.c + 77207 - 15.877 * T,
        lCVa: zero,
        tcVa: 0,
        betaVa: 0,
        tcC: 0,
        betaC: 0,
      },
    },
    binaries: [
      // Fe–Mn, Huang 1989 (Calphad 13, 243) §2.4 [F2]: L0 = −7762 + 3.865T, L1 = −259; TC L0 −2282, L1 −2068.
      { pair: ['Fe', 'Mn'], sub: 'Va', g: [lin(-7762, 3.865), lin(-259)], tc: [-2282, -2068] },
      // Fe–Mn–C, Huang 1990 §2.4 [F2]: L0(Fe,Mn:C) = 34052 − 23.467T.
      { pair: ['Fe', 'Mn'], sub: 'C', g: [lin(34052, -23.467)] },
      // Fe–Si, Lacaze & Sundman 1991 §2.4 [F2]: L0 = −125248 + 41.116T, L1 = −142708, L2 = 89907.
      { pair: ['Fe', 'Si'], sub: 'Va', g: [lin(-125248, 41.116), lin(-142708), lin(89907)] },
      // Fe–Si–C: option B (Miettinen 1998) L0 = 226100 − 34.25T, L1 = −202400; option A (Lacaze & Sundman 1991)
      // L0 = 143220 + 39.31T, L1 = −216321. §2.4 [F2].
      siOption === 'B'
        ? { pair: ['Fe', 'Si'], sub: 'C', g: [lin(226100, -34.25), lin(-202400)] }
        : { pair: ['Fe', 'Si'], sub: 'C', g: [lin(143220, 39.31), lin(-216321)] },
      // Mn–Si, Tibballs 1991 (COST 507) §2.4 [F2]: L0 = −95600 + 2.94097T, L1 = −7500.
      { pair: ['Mn', 'Si'], sub: 'Va', g: [lin(-95600, 2.94097), lin(-7500)] },
      // Fe–Ni, Xing, Gohil, Dinsdale & Chart 1985 §2.4 [F2].
      {
        pair: ['Fe', 'Ni'],
        sub: 'Va',
        g: [lin(-12054.355, 3.27413), lin(11082.1315, -4.45077), lin(-725.805174)],
        tc: [2133, -682],
        beta: [9.55, 7.23, 5.93, 6.18],
      },
      // Fe–Ni–C, Gabriel et al. 1987 §2.4 [F2]: L0(Fe,Ni:C) = 49074 − 7.32T, L1 = −25800.
      { pair: ['Fe', 'Ni'], sub: 'C', g: [lin(49074, -7.32), lin(-25800)] },
      // Cr–Fe, Andersson & Sundman 1987 §2.4 [F2]. Order CR,FE: L0 = 10833 − 7.477T, L1 = 1410.
      { pair: ['Cr', 'Fe'], sub: 'Va', g: [lin(10833, -7.477), lin(1410)] },
      // Cr–Fe–C, B.-J. Lee 1991 via SSOL2 §2.4 [F2]: L0(Cr,Fe:C) = −74319 + 3.2353T.
      { pair: ['Cr', 'Fe'], sub: 'C', g: [lin(-74319, 3.2353)] },
      // Fe–Mo, Fernández Guillermet 1982 / Andersson 1988 §2.4 [F2]: L0 = 28347 − 17.691T.
      { pair: ['Fe', 'Mo'], sub: 'Va', g: [lin(28347, -17.691)] },
      // Fe–Mo–C, Andersson 1988 §2.4 [F2]: L0(Fe,Mo:C) = 6000.
      { pair: ['Fe', 'Mo'], sub: 'C', g: [lin(6000)] },
      // Al–Fe, Seiersten (COST 507) §2.4 [F2]. Order AL,FE: L0 = −76066.1 + 18.6758T, L1 = 21167.4 + 1.3398T.
      { pair: ['Al', 'Fe'], sub: 'Va', g: [lin(-76066.1, 18.6758), lin(21167.4, 1.3398)] },
    ],
    ternaries: [
      // Fe–Mn–Si, Forsberg & Ågren 1993 §2.4 [F2]: L0(Fe,Mn,Si:Va) = −56655 − 55.613T; TC = 13854.
      { species: ['Fe', 'Mn', 'Si'], g: lin(-56655, -55.613), tc: 13854 },
    ],
  };
}

// ----------------------------------------------------------------------------------------------------------------
// BCC_A2 (ferrite)
// ----------------------------------------------------------------------------------------------------------------
function bccParameters(siOption: FeSiCOption): PhaseParameters {
  return {
    sites: 3,
    magnetic: 'bcc',
    endMembers: {
      // Fe: GHSERFE, TC 1043, β 2.22 §2.2; Fe:C = GHSERFE + 3GHSERCC + 322050 + 75.667T, L(Fe:C,Va) = −190T,
      // Gustafson 1985 §2.3 [F2].
      Fe: {
        gVa: (_T, u) => u.fe,
        gC: (T, u) => u.fe + 3 * u.c + 322050 + 75.667 * T,
        lCVa: lin(0, -190),
        tcVa: 1043,
        betaVa: 2.22,
        tcC: 1043,
        betaC: 2.22,
      },
      // Mn: bcc Mn §2.2, TC −580, β −0.27; Mn:C = GHSERMN + 3GHSERCC + 10000 + 30T, Huang 1990 §2.4 [F2].
      Mn: {
        gVa: (_T, u) => u.bccMn,
        gC: (T, u) => u.mn + 3 * u.c + 10000 + 30 * T,
        lCVa: zero,
        tcVa: -580,
        betaVa: -0.27,
        tcC: -580,
        betaC: -0.27,
      },
      // Si: bcc Si = GHSERSI + 47000 − 22.5T §2.2; Si:C Lacaze & Sundman 1991 §2.4 [F2] as printed there
      // (note its −75.667T where Fe:C has +75.667T; the term is multiplied by y_Si·y_C and is negligible either way).
      Si: {
        gVa: (T, u) => u.si + 47000 - 22.5 * T,
        gC: (T, u) => u.si + 47000 - 22.5 * T + 3 * u.c + 322050 - 75.667 * T,
        lCVa: zero,
        tcVa: 0,
        betaVa: 0,
        tcC: 0,
        betaC: 0,
      },
      // Ni: bcc Ni = GHSERNI + 8715.084 − 3.556T, TC 575, β 0.85 §2.2; Ni:C = GHSERNI + 3GHSERCC + 270000 §2.4 [F2].
      Ni: {
        gVa: (T, u) => u.ni + 8715.084 - 3.556 * T,
        gC: (T, u) => u.ni + 3 * u.c + 270000,
        lCVa: zero,
        tcVa: 575,
        betaVa: 0.85,
        tcC: 575,
        betaC: 0.85,
      },
      // Cr: GHSERCR, TC −311.5, β −0.008 §2.2; Cr:C = GHSERCR + 3GHSERCC + 416000, L(Cr:C,Va) = −190T §2.4 [F2].
      Cr: {
        gVa: (_T, u) => u.cr,
        gC: (T, u) => u.cr + 3 * u.c + 416000,
        lCVa: lin(0, -190),
        tcVa: -311.5,
        betaVa: -0.008,
        tcC: -311.5,
        betaC: -0.008,
      },
      // Mo: GHSERMO §2.2; Mo:C = GHSERMO + 3GHSERCC + 331000 − 75T, Andersson 1988 §2.4 [F2].
      Mo: {
        gVa: (_T, u) => u.mo,
        gC: (T, u) => u.mo + 3 * u.c + 331000 - 75 * T,
        lCVa: zero,
        tcVa: 0,
        betaVa: 0,
        tcC: 0,
        betaC: 0,
      },
      // Al: bcc Al = GHSERAL + 10083 − 4.813T §2.2; Al:C = GHSERAL + 3GHSERCC + 100000 + 80T,
      // L(Al:C,Va) = 130000 + 14T, Connétable et al. 2008 §2.4 [F2].
      Al: {
        gVa: (T, u) => u.al + 10083 - 4.813 * T,
        gC: (T, u) => u.al + 3 * u.c + 100000 + 80 * T,
        lCVa: lin(130000, 14),
        tcVa: 0,
        betaVa: 0,
        tcC: 0,
        betaC: 0,
      },
    },
    binaries: [
      // Fe–Mn, Huang 1989 §2.4 [F2]: L0 = −2759 + 1.237T; TC L0 = 123.
      { pair: ['Fe', 'Mn'], sub: 'Va', g: [lin(-2759, 1.237)], tc: [123] },
      // Fe–Mn–C, Huang 1990 §2.4 [F2]: L0(Fe,Mn:C) = 34052 − 23.467T (bcc as fcc).
      { pair: ['Fe', 'Mn'], sub: 'C', g: [lin(34052, -23.467)] },
      // Fe–Si, Lacaze & Sundman 1991 §2.4 [F2]: L0 = −153138.6 + 46.48T (= 4(−27809 + 11.62T) − 4·1260·R),
      // L1 = −92352, L2 = 62240; TC L1 = 504.
      { pair: ['Fe', 'Si'], sub: 'Va', g: [lin(-153138.6, 46.48), lin(-92352), lin(62240)], tc: [0, 504] },
      // Fe–Si–C: option B (Miettinen 1998) L0 = 1000000 − 100T, L1 = −900000; option A (Lacaze & Sundman) L0 = 78866.
      siOption === 'B'
        ? { pair: ['Fe', 'Si'], sub: 'C', g: [lin(1000000, -100), lin(-900000)] }
        : { pair: ['Fe', 'Si'], sub: 'C', g: [lin(78866)] },
      // Mn–Si, Tibballs 1991 §2.4 [F2]: L0 = −89620.7 + 2.94097T, L1 = −7500.
      { pair: ['Mn', 'Si'], sub: 'Va', g: [lin(-89620.7, 2.94097), lin(-7500)] },
      // Fe–Ni, Xing et al. 1985 §2.4 [F2]: L0 = −956.63 − 1.28726T, L1 = 1789.03 − 1.92912T; same on :C (§2.4
      // "L(Fe,Ni:C) as L(Fe,Ni:Va)").
      { pair: ['Fe', 'Ni'], sub: 'Va', g: [lin(-956.63, -1.28726), lin(1789.03, -1.92912)] },
      { pair: ['Fe', 'Ni'], sub: 'C', g: [lin(-956.63, -1.28726), lin(1789.03, -1.92912)] },
      // Cr–Fe, Andersson & Sundman 1987 §2.4 [F2]. Order CR,FE: L0 = 20500 − 9.68T; TC L0 1650, L1 550; β L0 −0.85.
      { pair: ['Cr', 'Fe'], sub: 'Va', g: [lin(20500, -9.68)], tc: [1650, 550], beta: [-0.85] },
      // Cr–Fe–C, B.-J. Lee 1991 via SSOL2 §2.4 [F2]: L0(Cr,Fe:C) = −1250000 + 667.7T.
      { pair: ['Cr', 'Fe'], sub: 'C', g: [lin(-1250000, 667.7)] },
      // Fe–Mo, Andersson 1988 §2.4 [F2]: L0 = 36818 − 9.141T, L1 = −362 − 5.724T; TC L0 335, L1 526.
      { pair: ['Fe', 'Mo'], sub: 'Va', g: [lin(36818, -9.141), lin(-362, -5.724)], tc: [335, 526] },
      // Fe–Mo–C, Andersson 1988 §2.4 [F2]: L0(Fe,Mo:C) = −1250000 + 667.7T.
      { pair: ['Fe', 'Mo'], sub: 'C', g: [lin(-1250000, 667.7)] },
      // Al–Fe, Seiersten (COST 507) §2.4 [F2]. Order AL,FE: L0 = −122960 + 31.9888T, L1 = 2945.2 (A2 only).
      { pair: ['Al', 'Fe'], sub: 'Va', g: [lin(-122960, 31.9888), lin(2945.2)] },
    ],
    ternaries: [
      // Fe–Mn–Si, Forsberg & Ågren 1993 §2.4 [F2]: L0(Fe,Mn,Si:Va) = −97474.
      { species: ['Fe', 'Mn', 'Si'], g: lin(-97474) },
    ],
  };
}

const CACHE = new Map<string, PhaseParameters>();

export function phaseParameters(phase: 'fcc' | 'bcc', siOption: FeSiCOption = 'B'): PhaseParameters {
  const key = `${phase}:${siOption}`;
  let p = CACHE.get(key);
  if (!p) {
    p = phase === 'fcc' ? fccParameters(siOption) : bccParameters(siOption);
    CACHE.set(key, p);
  }
  return p;
}

export const SPECIES_INDEX = I;

/** Re-exported for tests of the pure-Fe lattice stability. */
export { fccFeMinusBcc, ghserFe };
