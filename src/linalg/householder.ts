/**
 * Householder reduction of a dense real symmetric matrix to tridiagonal form (Golub & Van Loan, Matrix
 * Computations, 4th ed. 2013, Alg. 8.3.1), for eigenvalues by the QL method of tridiag.ts.
 */

/** In place Householder tridiagonalisation of the symmetric n×n row-major matrix a: returns diagonal, off-diagonal */
export function householderTridiagonal(a: Float64Array, n: number): { d: Float64Array; e: Float64Array } {
  const d = new Float64Array(n);
  const e = new Float64Array(n);
  const v = new Float64Array(n);
  const p = new Float64Array(n);
  for (let k = 0; k < n - 2; k++) {
    // Householder vector for column k below the diagonal
    let alpha = 0;
    for (let i = k + 1; i < n; i++) alpha += a[i * n + k] * a[i * n + k];
    alpha = Math.sqrt(alpha);
    if (alpha === 0) {
      e[k] = 0;
      continue;
    }
    const x0 = a[(k + 1) * n + k];
    const sgn = x0 >= 0 ? 1 : -1;
    e[k] = -sgn * alpha;
    v.fill(0);
    v[k + 1] = x0 + sgn * alpha;
    for (let i = k + 2; i < n; i++) v[i] = a[i * n + k];
    let vv = 0;
    for (let i = k + 1; i < n; i++) vv += v[i] * v[i];
    const beta = 2 / vv;
    // p = β A v on the trailing block, then w = p − (β/2)(pᵀv) v, A ← A − v wᵀ − w vᵀ
    let pv = 0;
    for (let i = k + 1; i < n; i++) {
      let s = 0;
      const row = i * n;
      for (let j = k + 1; j < n; j++) s += a[row + j] * v[j];
      p[i] = beta * s;
      pv += p[i] * v[i];
    }
    const c = 0.5 * beta * pv;
    for (let i = k + 1; i < n; i++) p[i] -= c * v[i];
    for (let i = k + 1; i < n; i++) {
      const row = i * n;
      const vi = v[i], pi = p[i];
      for (let j = k + 1; j < n; j++) a[row + j] -= vi * p[j] + pi * v[j];
    }
  }
  for (let i = 0; i < n; i++) d[i] = a[i * n + i];
  if (n >= 2) e[n - 2] = a[(n - 1) * n + (n - 2)];
  e[n - 1] = 0;
  return { d, e };
}
