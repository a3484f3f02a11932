/**
 * Small dense linear systems A X = B with several right-hand-side blocks B₁, B₂, … that share the matrix A:
 * Gaussian elimination with partial pivoting (row interchanges, Golub & Van Loan, Matrix Computations, 4th ed.
 * 2013, §3.4, Alg. 3.4.1) applied to A and every block at once, then back substitution with the upper
 * triangular factor (ibid. §3.1.2). Meant for matrices of a few rows (O(n³) flops, no blocking).
 */

/**
 * In place: `a` (n×n, row-major) is overwritten by the upper triangular factor U of PA = LU, and every block of
 * `rhs` (n×cols, row-major) by the solution X of A X = B. The caller guarantees that A is non-singular (a zero
 * pivot gives non-finite entries; nothing is checked, so that the arithmetic stays that of the plain algorithm).
 */
export function solveDenseInPlace(a: Float64Array, n: number, rhs: readonly Float64Array[], cols: number): void {
  for (let col = 0; col < n; col++) {
    let piv = col;
    for (let r = col + 1; r < n; r++) if (Math.abs(a[r * n + col]) > Math.abs(a[piv * n + col])) piv = r;
    if (piv !== col) {
      swapRows(a, n, col, piv);
      for (const b of rhs) swapRows(b, cols, col, piv);
    }
    const d = a[col * n + col];
    for (let r = col + 1; r < n; r++) {
      const f = a[r * n + col] / d;
      if (f === 0) continue;
      for (let c = 0; c < n; c++) a[r * n + c] -= f * a[col * n + c];
      for (const b of rhs) for (let c = 0; c < cols; c++) b[r * cols + c] -= f * b[col * cols + c];
    }
  }
  for (const b of rhs) backSubstitute(a, n, b, cols);
}

/** exchange rows i and j of a row-major matrix with `cols` columns */
function swapRows(m: Float64Array, cols: number, i: number, j: number): void {
  for (let c = 0; c < cols; c++) {
    const t = m[i * cols + c];
    m[i * cols + c] = m[j * cols + c];
    m[j * cols + c] = t;
  }
}

/** In place: b (n×cols) ← U⁻¹ b for the upper triangle U of `u` (n×n, row-major) */
function backSubstitute(u: Float64Array, n: number, b: Float64Array, cols: number): void {
  for (let row = n - 1; row >= 0; row--) {
    const d = u[row * n + row];
    for (let c = 0; c < cols; c++) {
      let s = b[row * cols + c];
      for (let k = row + 1; k < n; k++) s -= u[row * n + k] * b[k * cols + c];
      b[row * cols + c] = s / d;
    }
  }
}
