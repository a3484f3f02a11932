/**
 * Eigen-decomposition of a real symmetric tridiagonal matrix by the implicit QL method with Wilkinson-type
 * shifts (Press, Teukolsky, Vetterling & Flannery, Numerical Recipes, 3rd ed. 2007, §11.4 "tqli"; the EISPACK
 * routine tql2). Used for the small Lanczos matrices of eigen.ts and krylov.ts.
 */

import { NumericalError } from '../core/errors.ts';

/** QL iterations allowed per eigenvalue before giving up (Numerical Recipes uses 30; doubled for safety) */
const MAX_QL_ITERATIONS = 60;

/**
 * In place: d (length n) diagonal → eigenvalues (unsorted); e (length ≥ n) with e[i] = T[i, i+1], i < n−1 → destroyed;
 * z (n·n, row-major) → column j holds the eigenvector of d[j]; if `wantVectors` is false z is ignored.
 * Eigenvalues are returned unsorted; see `sortEigen`.
 */
export function tridiagEigen(d: Float64Array, e: Float64Array, n: number, z: Float64Array | null): void {
  if (z) {
    z.fill(0, 0, n * n);
    for (let i = 0; i < n; i++) z[i * n + i] = 1;
  }
  if (n === 1) return;
  e[n - 1] = 0;
  for (let l = 0; l < n; l++) {
    let iter = 0;
    let m: number;
    do {
      for (m = l; m < n - 1; m++) {
        const dd = Math.abs(d[m]) + Math.abs(d[m + 1]);
        if (Math.abs(e[m]) <= Number.EPSILON * dd) break;
      }
      if (m !== l) {
        if (iter++ === MAX_QL_ITERATIONS) throw new NumericalError('tridiagEigen: QL iteration did not converge');
        let g = (d[l + 1] - d[l]) / (2 * e[l]);
        let r = Math.hypot(g, 1);
        g = d[m] - d[l] + e[l] / (g + (g >= 0 ? Math.abs(r) : -Math.abs(r)));
        let s = 1;
        let c = 1;
        let p = 0;
        let i: number;
        let early = false;
        for (i = m - 1; i >= l; i--) {
          let f = s * e[i];
          const b = c * e[i];
          r = Math.hypot(f, g);
          e[i + 1] = r;
          if (r === 0) {
            d[i + 1] -= p;
            e[m] = 0;
            early = true;
            break;
          }
          s = f / r;
          c = g / r;
          g = d[i + 1] - p;
          r = (d[i] - g) * s + 2 * c * b;
          p = s * r;
          d[i + 1] = g + p;
          g = c * r - b;
          if (z) {
            for (let k = 0; k < n; k++) {
              const row = k * n;
              f = z[row + i + 1];
              z[row + i + 1] = s * z[row + i] + c * f;
              z[row + i] = c * z[row + i] - s * f;
            }
          }
        }
        if (early) continue;
        d[l] -= p;
        e[l] = g;
        e[m] = 0;
      }
    } while (m !== l);
  }
}

/** indices that sort d[0..n) ascending */
export function sortedOrder(d: Float64Array, n: number): number[] {
  const idx = Array.from({ length: n }, (_, i) => i);
  idx.sort((a, b) => d[a] - d[b]);
  return idx;
}
