/**
 * SGTE unary Gibbs energies (Dinsdale 1991, CALPHAD 15, 317–425), J/mol, T in K, relative to the stable element
 * reference (SER). Coefficients: metallurgy.md §2.2 [F2: pycalphad test TDBs, SSOL2 extract steel1.TDB, Hallstedt
 * iron4cd.TDB]. Only the ranges needed for heat treatment (T < 1519 K) matter; for Fe the range above 1811 K is
 * included so the pure-iron melting region does not jump, for Al the range above its melting point is used as
 * liquid-free extrapolation (see GHSERAL).
 *
 * The magnetic part is NOT included here; see magnetic.ts.
 */

/** Pure Fe, bcc (stable at room temperature), non-magnetic part. */
export function ghserFe(T: number): number {
  const lnT = Math.log(T);
  if (T < 1811) return 1225.7 + 124.134 * T - 23.5143 * T * lnT - 0.00439752 * T * T - 5.8927e-8 * T ** 3 + 77359 / T;
  return -25383.581 + 299.31255 * T - 46 * T * lnT + 2.29603e31 * T ** -9;
}

/** GFCCFE − GHSERFE: lattice stability of fcc Fe, non-magnetic part. */
export function fccFeMinusBcc(T: number): number {
  if (T < 1811) return -1462.4 + 8.282 * T - 1.15 * T * Math.log(T) + 6.4e-4 * T * T;
  return -1713.815 + 0.940009 * T + 4.9251e30 * T ** -9;
}

export function gfccFe(T: number): number {
  return ghserFe(T) + fccFeMinusBcc(T);
}

/** Graphite (298.15–6000 K). */
export function ghserC(T: number): number {
  return -17368.441 + 170.73 * T - 24.3 * T * Math.log(T) - 4.723e-4 * T * T + 2562600 / T - 2.643e8 / (T * T) + 1.2e10 / (T * T * T);
}

/** Mn, cbcc-A12 reference (298.15–1519 K). */
export function ghserMn(T: number): number {
  return -8115.28 + 130.059 * T - 23.4582 * T * Math.log(T) - 0.00734768 * T * T + 69827 / T;
}

/** fcc Mn (full expression vs SER, 298.15–1519 K). */
export function gfccMn(T: number): number {
  return -3439.3 + 131.884 * T - 24.5177 * T * Math.log(T) - 0.006 * T * T + 69600 / T;
}

/** bcc Mn (full expression vs SER, 298.15–1519 K). */
export function gbccMn(T: number): number {
  return -3235.3 + 127.85 * T - 23.7 * T * Math.log(T) - 0.00744271 * T * T + 60000 / T;
}

/** Si, diamond reference (298.15–1687 K). T coefficient 137.236859 (the SSOL2 extract's 137.227259 is an older variant, §2.2). */
export function ghserSi(T: number): number {
  return -8162.609 + 137.236859 * T - 22.8317533 * T * Math.log(T) - 0.001912904 * T * T - 3.552e-9 * T ** 3 + 176667 / T;
}

/** Ni, fcc reference (298.15–1728 K). */
export function ghserNi(T: number): number {
  return -5179.159 + 117.854 * T - 22.096 * T * Math.log(T) - 0.0048407 * T * T;
}

/** Cr, bcc reference (298.15–2180 K). */
export function ghserCr(T: number): number {
  return -8856.94 + 157.48 * T - 26.908 * T * Math.log(T) + 0.00189435 * T * T - 1.47721e-6 * T ** 3 + 139250 / T;
}

/** Mo, bcc reference (298.15–2896 K). */
export function ghserMo(T: number): number {
  return -7746.302 + 131.9197 * T - 23.56414 * T * Math.log(T) - 0.003443396 * T * T + 5.66283e-7 * T ** 3 + 65812 / T - 1.30927e-10 * T ** 4;
}

/**
 * Al, fcc reference. 298.15–700 K and 700–933.47 K from §2.2. Above the melting point (933.47 K) SGTE switches to
 * a third piece (−11278.378 + 188.684153T − 31.748192 T lnT − 1.230524e28 T⁻⁹, Dinsdale 1991, from memory [M]);
 * solid Al only matters here as a dilute solute in Fe, so that piece only keeps the function continuous.
 */
export function ghserAl(T: number): number {
  const lnT = Math.log(T);
  if (T < 700) return -7976.15 + 137.093038 * T - 24.3671976 * T * lnT - 0.001884662 * T * T - 8.77664e-7 * T ** 3 + 74092 / T;
  if (T < 933.47) return -11276.24 + 223.048446 * T - 38.5844296 * T * lnT + 0.018531982 * T * T - 5.764227e-6 * T ** 3 + 74092 / T;
  return -11278.378 + 188.684153 * T - 31.748192 * T * lnT - 1.230524e28 * T ** -9;
}

/** All unaries at one temperature, computed once and shared by the fcc and bcc parameter sets. */
export interface UnaryTable {
  fe: number;
  fccFe: number;
  c: number;
  mn: number;
  fccMn: number;
  bccMn: number;
  si: number;
  ni: number;
  cr: number;
  mo: number;
  al: number;
}

export function unaryTable(T: number): UnaryTable {
  const fe = ghserFe(T);
  return {
    fe,
    fccFe: fe + fccFeMinusBcc(T),
    c: ghserC(T),
    mn: ghserMn(T),
    fccMn: gfccMn(T),
    bccMn: gbccMn(T),
    si: ghserSi(T),
    ni: ghserNi(T),
    cr: ghserCr(T),
    mo: ghserMo(T),
    al: ghserAl(T),
  };
}
