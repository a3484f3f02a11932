/**
 * Lowest eigenpairs of a dense real symmetric matrix, for many levels at once (hundreds of states of a thermal
 * ensemble, where a Krylov method needs many restarts):
 *
 *  1. Householder tridiagonalisation Qᵀ A Q = T, one reflection H_k = I − β_k v_k v_kᵀ per column, the symmetric
 *     rank-2 update A ← A − v wᵀ − w vᵀ with p = βAv, w = p − (β pᵀv/2) v on the lower triangle only (Golub & Van Loan,
 *     Matrix Computations, 4th ed. 2013, §8.3.1, Algorithm 8.3.1);
 *  2. the lowest eigenpairs of T by Sturm bisection and inverse iteration (tridiagonal-lowest.ts);
 *  3. x = H_0 H_1 ⋯ H_{n−3} y for each tridiagonal eigenvector y (back-transformation, §8.3.1).
 *
 * Cost ≈ (2/3)n³ multiply-adds for step 1 and 2n²·count for step 3; memory: the matrix (overwritten) and the
 * reflection vectors (n²/2).
 */
import { tridiagonalLowest } from './tridiagonal-lowest.ts';

/**
 * The `count` lowest eigenpairs of the symmetric n×n matrix `a` (row-major; only the lower triangle is read; it is
 * overwritten by the reflections). Values ascending, vectors unit length.
 */
export function symmetricLowest(a: Float64Array, n: number, count: number): { values: Float64Array; vectors: Float64Array[] } {
  if (a.length !== n * n) throw new RangeError(`symmetricLowest: matrix of ${a.length} entries is not ${n}×${n}`);
  if (!Number.isInteger(count) || count < 1 || count > n) throw new RangeError(`symmetricLowest: count ${count} must be an integer in 1 … ${n}`);
  const d = new Float64Array(n);
  const e = new Float64Array(n);
  const betas = new Float64Array(n);
  /** v_k (entries k + 1 … n − 1, stored from index 0), contiguous for the inner loops and the back-transformation */
  const reflections: Float64Array[] = [];
  const p = new Float64Array(n);
  // reflections k = 0 … n − 3 act on rows/columns k + 1 … n − 1
  for (let k = 0; k < n - 2; k++) {
    const m = k + 1;
    const len = n - m;
    const v = new Float64Array(len);
    for (let i = 0; i < len; i++) v[i] = a[(m + i) * n + k];
    const { beta, subdiagonal } = householder(v);
    betas[k] = beta;
    e[k] = subdiagonal;
    d[k] = a[k * n + k];
    reflections.push(v);
    if (beta === 0) continue;
    // p = βAv over the trailing block, w = p − (β pᵀv/2) v (kept in p), A ← A − v wᵀ − w vᵀ on the lower triangle
    blockTimes(a, n, m, v, p);
    let pv = 0;
    for (let i = 0; i < len; i++) {
      p[i] *= beta;
      pv += p[i] * v[i];
    }
    const c = 0.5 * beta * pv;
    for (let i = 0; i < len; i++) p[i] -= c * v[i];
    for (let i = 0; i < len; i++) {
      const vi = v[i];
      const wi = p[i];
      const row = (m + i) * n + m;
      for (let j = 0; j <= i; j++) a[row + j] -= vi * p[j] + wi * v[j];
    }
  }
  if (n >= 2) {
    d[n - 2] = a[(n - 2) * n + (n - 2)];
    e[n - 2] = a[(n - 1) * n + (n - 2)];
  }
  d[n - 1] = a[(n - 1) * n + (n - 1)];
  const { values, vectors } = tridiagonalLowest(d, e, count);
  // back-transformation x = H_0 ⋯ H_{n−3} y, H_{n−3} first; each reflection is applied to every vector in turn, so
  // it is read once for all of them
  for (let k = n - 3; k >= 0; k--) {
    const beta = betas[k];
    if (beta === 0) continue;
    const v = reflections[k];
    const m = k + 1;
    for (const x of vectors) {
      let sum = 0;
      for (let i = 0; i < v.length; i++) sum += v[i] * x[m + i];
      sum *= beta;
      for (let i = 0; i < v.length; i++) x[m + i] -= sum * v[i];
    }
  }
  return { values, vectors };
}

/**
 * x → the Householder vector v of x in place (v = x − αₛe₁, αₛ = −sign(x₀)‖x‖, no cancellation) with β = 2/vᵀv, so
 * (I − βvvᵀ)x = αₛe₁; β = 0 (and x untouched) for x = 0 (Golub & Van Loan 2013, §5.1.2)
 */
function householder(x: Float64Array): { beta: number; subdiagonal: number } {
  let alpha = 0;
  for (let i = 0; i < x.length; i++) alpha += x[i] * x[i];
  alpha = Math.sqrt(alpha);
  if (alpha === 0) return { beta: 0, subdiagonal: 0 };
  const as = x[0] >= 0 ? -alpha : alpha;
  x[0] -= as;
  let vv = 0;
  for (let i = 0; i < x.length; i++) vv += x[i] * x[i];
  return { beta: 2 / vv, subdiagonal: as };
}

/** out = A v on the block of rows/columns m … n − 1, from its lower triangle */
function blockTimes(a: Float64Array, n: number, m: number, v: Float64Array, out: Float64Array): void {
  const len = n - m;
  out.fill(0, 0, len);
  for (let i = 0; i < len; i++) {
    const vi = v[i];
    const row = (m + i) * n + m;
    let sum = 0;
    for (let j = 0; j < i; j++) {
      const aij = a[row + j];
      sum += aij * v[j];
      out[j] += aij * vi;
    }
    out[i] += sum + a[row + i] * vi;
  }
}
