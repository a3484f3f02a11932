/**
 * Eigenvalue counts and bisection for a real symmetric cyclic (periodic) tridiagonal matrix T: diagonal d_i,
 * couplings e_i = T[i, i+1 mod n] (e_{n−1} closes the ring), n ≥ 3.
 *
 * Count below σ by Sylvester's law of inertia with a border: T − σ = [[T′, b], [bᵀ, c]] with T′ the leading
 * (n−1)×(n−1) tridiagonal block, b = (e_{n−1}, 0, …, 0, e_{n−2})ᵀ and c = d_{n−1} − σ. Haynsworth's inertia
 * additivity gives ν(T − σ) = ν(T′) + ν(c − bᵀT′⁻¹b); with T′ = LDLᵀ (pivots p_i, Golub & Van Loan, Matrix
 * Computations, 4th ed. 2013, §8.4.1 for the Sturm count) and Ly = b, bᵀT′⁻¹b = Σ y_i²/p_i, so one O(n) sweep
 * gives the count (Haynsworth, Linear Algebra Appl. 1, 73, 1968).
 */

/** a zero pivot is replaced by this multiple of the matrix scale (Wilkinson's device; common practice) */
const ZERO_PIVOT = Number.EPSILON;
/** bisection stops when the bracket is this many ulps of the bracket's magnitude wide */
const BISECTION_ULPS = 4;

/** number of eigenvalues of the cyclic tridiagonal (d, e) below σ */
export function cyclicCountBelow(d: Float64Array, e: Float64Array, sigma: number, scale: number): number {
  const n = d.length;
  const tiny = scale * ZERO_PIVOT;
  let count = 0;
  let p = d[0] - sigma;
  if (p === 0) p = tiny;
  if (p < 0) count++;
  let y = e[n - 1];
  let schur = (y * y) / p;
  for (let i = 1; i < n - 1; i++) {
    const l = e[i - 1] / p;
    p = d[i] - sigma - l * e[i - 1];
    if (p === 0) p = tiny;
    if (p < 0) count++;
    y = (i === n - 2 ? e[n - 2] : 0) - l * y;
    schur += (y * y) / p;
  }
  if (d[n - 1] - sigma - schur < 0) count++;
  return count;
}

/**
 * The lowest `count` eigenvalues (ascending) of the cyclic tridiagonal (d, e), each by bisection on the count inside
 * [lo, hi] (which must contain them). `near` (optional, per level: a centre and a half width) narrows a level's
 * bracket when two counts confirm that it holds exactly that level; otherwise the full bracket is used.
 */
export function cyclicEigenvalues(d: Float64Array, e: Float64Array, count: number, lo: number, hi: number, near?: { centre: ArrayLike<number>; halfWidth: ArrayLike<number> }): Float64Array {
  if (d.length < 3 || e.length !== d.length) throw new RangeError(`cyclic tridiagonal: need n ≥ 3 and as many couplings as diagonal entries, got ${d.length} and ${e.length}`);
  const scale = Math.max(Math.abs(lo), Math.abs(hi));
  const out = new Float64Array(count);
  for (let k = 0; k < count; k++) {
    let a = k > 0 ? out[k - 1] : lo;
    let b = hi;
    if (near && Number.isFinite(near.centre[k]) && near.halfWidth[k] > 0) {
      const na = Math.max(a, near.centre[k] - near.halfWidth[k]);
      const nb = Math.min(b, near.centre[k] + near.halfWidth[k]);
      if (na < nb && cyclicCountBelow(d, e, na, scale) <= k && cyclicCountBelow(d, e, nb, scale) > k) {
        a = na;
        b = nb;
      }
    }
    while (b - a > BISECTION_ULPS * Number.EPSILON * Math.max(Math.abs(a), Math.abs(b), 1e-300)) {
      const mid = 0.5 * (a + b);
      if (mid <= a || mid >= b) break;
      if (cyclicCountBelow(d, e, mid, scale) > k) b = mid;
      else a = mid;
    }
    out[k] = 0.5 * (a + b);
  }
  return out;
}
