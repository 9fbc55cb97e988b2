// Dense linear solver for the Markov-chain ARL systems (I − R)·L = 1, of a few hundred unknowns.
// Gaussian elimination with partial pivoting (Golub & Van Loan, Matrix Computations, alg. 3.4.1):
// I − R is diagonally dominant for a transient chain, so this is stable and needs nothing fancier.

/**
 * Solve A·x = b for a dense n×n matrix stored row-major in `a` (overwritten) and right-hand side `b`
 * (overwritten with the solution, which is also returned).
 */
export function solveDenseInPlace(a: Float64Array, b: Float64Array, n: number): Float64Array {
  if (a.length !== n * n || b.length !== n) throw new RangeError('solveDenseInPlace: dimension mismatch');
  for (let col = 0; col < n; col++) {
    let pivotRow = col;
    let pivotAbs = Math.abs(a[col * n + col]);
    for (let r = col + 1; r < n; r++) {
      const v = Math.abs(a[r * n + col]);
      if (v > pivotAbs) {
        pivotAbs = v;
        pivotRow = r;
      }
    }
    if (pivotAbs === 0) throw new RangeError('solveDenseInPlace: singular matrix');
    if (pivotRow !== col) {
      for (let c = col; c < n; c++) {
        const t = a[col * n + c];
        a[col * n + c] = a[pivotRow * n + c];
        a[pivotRow * n + c] = t;
      }
      const t = b[col];
      b[col] = b[pivotRow];
      b[pivotRow] = t;
    }
    const pivot = a[col * n + col];
    for (let r = col + 1; r < n; r++) {
      const factor = a[r * n + col] / pivot;
      if (factor === 0) continue;
      const rowOffset = r * n;
      const pivotOffset = col * n;
      for (let c = col + 1; c < n; c++) a[rowOffset + c] -= factor * a[pivotOffset + c];
      a[rowOffset + col] = 0;
      b[r] -= factor * b[col];
    }
  }
  for (let r = n - 1; r >= 0; r--) {
    let s = b[r];
    for (let c = r + 1; c < n; c++) s -= a[r * n + c] * b[c];
    b[r] = s / a[r * n + r];
  }
  return b;
}
