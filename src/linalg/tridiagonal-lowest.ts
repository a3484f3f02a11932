/**
 * Lowest eigenpairs of a large real symmetric tridiagonal matrix (the tight-binding lattice Hamiltonians); the
 * full QL solver is linalg/tridiag.ts.
 *
 *  - `tridiagonalLowest`: lowest eigenpairs of a large real symmetric tridiagonal matrix by Sturm-sequence
 *    bisection and inverse iteration (Wilkinson, The Algebraic Eigenvalue Problem, 1965, ch. 5 §37–§48;
 *    Golub & Van Loan, Matrix Computations, 4th ed. 2013, §8.4.1).
 */
import { tridiagEigen } from './tridiag.ts';

/** bisection stops when the bracket is this many ulps of the spectral scale wide (≈ machine precision) */
const BISECTION_REL = 4 * Number.EPSILON;
/** inverse-iteration sweeps per eigenvector (two suffice from a random start; three for safety) */
const INVERSE_SWEEPS = 3;


/** sorted eigenvalues of the symmetric tridiagonal (diag, off) — convenience wrapper (allocates) */
export function tridiagonalEigenvalues(diag: ArrayLike<number>, off: ArrayLike<number>): Float64Array {
  const n = diag.length;
  const d = Float64Array.from(diag);
  const e = new Float64Array(n);
  for (let i = 0; i < n - 1; i++) e[i] = off[i];
  tridiagEigen(d, e, n, null);
  return d.sort();
}

/**
 * Lowest `count` eigenpairs of the real symmetric tridiagonal matrix T (diag d, off-diagonal e, e[i] = T[i,i+1]).
 * Eigenvalues by Sturm-count bisection (the number of negative pivots of T − σ equals the number of eigenvalues
 * below σ), eigenvectors by inverse iteration with the LU factors of T − λ(1 + ε) (Thomas algorithm).
 */
export function tridiagonalLowest(d: Float64Array, e: Float64Array, count: number): { values: Float64Array; vectors: Float64Array[] } {
  const n = d.length;
  let lo = Infinity;
  let hi = -Infinity;
  for (let i = 0; i < n; i++) {
    const r = (i > 0 ? Math.abs(e[i - 1]) : 0) + (i < n - 1 ? Math.abs(e[i]) : 0);
    lo = Math.min(lo, d[i] - r);
    hi = Math.max(hi, d[i] + r);
  }
  const scale = Math.max(Math.abs(lo), Math.abs(hi), 1e-300);
  const below = (sigma: number): number => {
    let c = 0;
    let q = d[0] - sigma;
    if (q < 0) c++;
    for (let i = 1; i < n; i++) {
      const qq = q === 0 ? scale * Number.EPSILON : q;
      q = d[i] - sigma - (e[i - 1] * e[i - 1]) / qq;
      if (q < 0) c++;
    }
    return c;
  };
  const values = new Float64Array(count);
  for (let k = 0; k < count; k++) {
    let a = lo;
    let b = hi;
    while (b - a > BISECTION_REL * scale) {
      const mid = 0.5 * (a + b);
      if (below(mid) > k) b = mid;
      else a = mid;
    }
    values[k] = 0.5 * (a + b);
  }
  const vectors: Float64Array[] = [];
  const diagLu = new Float64Array(n);
  const upper = new Float64Array(n);
  for (let k = 0; k < count; k++) {
    const shift = values[k] + scale * 1e-14;
    // LU of T − shift without pivoting: stable enough for inverse iteration (the growth only helps)
    diagLu[0] = d[0] - shift;
    for (let i = 1; i < n; i++) {
      const p = diagLu[i - 1] === 0 ? scale * Number.EPSILON : diagLu[i - 1];
      upper[i] = e[i - 1] / p;
      diagLu[i] = d[i] - shift - upper[i] * e[i - 1];
    }
    const v = new Float64Array(n);
    for (let i = 0; i < n; i++) v[i] = 1 + 0.1 * Math.sin(1.7 * i + k);
    for (let sweep = 0; sweep < INVERSE_SWEEPS; sweep++) {
      for (let i = 1; i < n; i++) v[i] -= upper[i] * v[i - 1];
      v[n - 1] /= diagLu[n - 1] === 0 ? scale * Number.EPSILON : diagLu[n - 1];
      for (let i = n - 2; i >= 0; i--) v[i] = (v[i] - e[i] * v[i + 1]) / (diagLu[i] === 0 ? scale * Number.EPSILON : diagLu[i]);
      // orthogonalise against the lower vectors (matters only for near-degenerate levels)
      for (const w of vectors) {
        let dot = 0;
        for (let i = 0; i < n; i++) dot += w[i] * v[i];
        for (let i = 0; i < n; i++) v[i] -= dot * w[i];
      }
      let nn = 0;
      for (let i = 0; i < n; i++) nn += v[i] * v[i];
      const inv = 1 / Math.sqrt(nn);
      for (let i = 0; i < n; i++) v[i] *= inv;
    }
    vectors.push(v);
  }
  return { values, vectors };
}
