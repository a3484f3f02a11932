/**
 * Eigenvalue counts and bisection for a real symmetric cyclic (periodic) tridiagonal matrix T: diagonal d_i,
 * couplings e_i = T[i, i+1 mod n] (e_{n−1} closes the ring), n ≥ 3.
 *
 * Count below σ by Sylvester's law of inertia with a border: T − σ = [[T′, b], [bᵀ, c]] with T′ the leading
 * (n−1)×(n−1) tridiagonal block, b = (e_{n−1}, 0, …, 0, e_{n−2})ᵀ and c = d_{n−1} − σ. Haynsworth's inertia
 * additivity gives ν(T − σ) = ν(T′) + ν(c − bᵀT′⁻¹b); with T′ = LDLᵀ (pivots p_i, Golub & Van Loan, Matrix
 * Computations, 4th ed. 2013, §8.4.1 for the Sturm count) and Ly = b, bᵀT′⁻¹b = Σ y_i²/p_i, so one O(n) sweep
 * gives the count (Haynsworth, Linear Algebra Appl. 1, 73, 1968).
 *
 * Eigenvalues by bisection on the count until a bracket holds exactly one of them, then Newton's method on
 * det(T − σ) = Π p_i · q (q = c − bᵀT′⁻¹b) safeguarded by that bracket (rtsafe: Press et al., Numerical Recipes,
 * 3rd ed. 2007, §9.4): det is a polynomial with a single simple root in the bracket, so Newton converges
 * quadratically, and every iterate's count (from the same sweep) shrinks the bracket; a step that leaves it is
 * replaced by bisection. ∂_σ log|det| comes from the derivatives of the sweep's recurrences (see sweep).
 */

/** a zero pivot is replaced by this multiple of the matrix scale (Wilkinson's device; common practice) */
const ZERO_PIVOT = Number.EPSILON;
/** bisection stops when the bracket is this many ulps of the bracket's magnitude wide */
const BISECTION_ULPS = 4;
/** Newton stops when its step is below this fraction of max(|σ|, 1): quadratic convergence leaves an error of about
 *  the step squared over the gap to the next level, below the counts' own round-off (common practice) */
const NEWTON_STEP_REL = 1e-11;
/** a Newton step below this fraction of max(|σ|, 1) that no longer shrinks is the counts' round-off (seen at 1e-13
 *  on 8192 points): stop there (common practice) */
const NEWTON_STALL = 1e-10;
/** Newton iterations before the refinement falls back to bisection in the bracket it has narrowed */
const NEWTON_MAX = 30;

/** number of eigenvalues of the cyclic tridiagonal (d, e) below σ */
export function cyclicCountBelow(d: Float64Array, e: Float64Array, sigma: number, scale: number): number {
  return sweep(d, e, sigma, scale, null);
}

/**
 * The LDLᵀ sweep of T − σ (module comment) and its derivative in σ: with l_i = e_{i−1}/p_{i−1},
 *     p_i′ = −1 + l_i² p_{i−1}′,   l_i′ = −l_i p_{i−1}′/p_{i−1},   y_i′ = −l_i′ y_{i−1} − l_i y_{i−1}′,
 *     ∂_σ log|det(T − σ)| = Σ p_i′/p_i + q′/q,   q′ = −1 − Σ (2y_i y_i′/p_i − y_i² p_i′/p_i²).
 * Returns the count below σ; writes the Newton correction det/∂_σdet into newton[0] when given. The derivative
 * costs next to nothing: the sweep's time is the chain of divisions.
 */
function sweep(d: Float64Array, e: Float64Array, sigma: number, scale: number, newton: Float64Array | null): number {
  const n = d.length;
  const tiny = scale * ZERO_PIVOT;
  let count = 0;
  let p = d[0] - sigma;
  if (p === 0) p = tiny;
  if (p < 0) count++;
  let inv = 1 / p;
  let dp = -1;
  let y = e[n - 1];
  let dy = 0;
  let schur = y * y * inv;
  let dschur = -y * y * dp * inv * inv;
  let dlog = dp * inv;
  for (let i = 1; i < n - 1; i++) {
    const l = e[i - 1] * inv;
    const dl = -l * dp * inv;
    p = d[i] - sigma - l * e[i - 1];
    if (p === 0) p = tiny;
    if (p < 0) count++;
    dp = -1 + l * l * dp;
    dy = -dl * y - l * dy;
    y = (i === n - 2 ? e[n - 2] : 0) - l * y;
    inv = 1 / p;
    schur += y * y * inv;
    dschur += (2 * y * dy - y * y * dp * inv) * inv;
    dlog += dp * inv;
  }
  const q = d[n - 1] - sigma - schur;
  if (q < 0) count++;
  if (newton) newton[0] = 1 / (dlog + (-1 - dschur) / q);
  return count;
}

/** bracket [a, b] too narrow to split further (BISECTION_ULPS) */
function converged(a: number, b: number): boolean {
  return !(b - a > BISECTION_ULPS * Number.EPSILON * Math.max(Math.abs(a), Math.abs(b), 1e-300));
}

/**
 * Eigenvalue k inside [a, b], which holds it and no other (count(a) = k, count(b) = k + 1): Newton from `start`
 * safeguarded as in rtsafe (module comment): a step that leaves the bracket or does not halve the step before the
 * last is replaced by bisection. Stops when the step falls below NEWTON_STEP_REL, or below NEWTON_STALL without
 * shrinking (the counts' round-off); bisection to BISECTION_ULPS if neither happens within NEWTON_MAX sweeps.
 */
function refineIsolated(d: Float64Array, e: Float64Array, k: number, a: number, b: number, start: number, scale: number, newton: Float64Array): number {
  let s = start > a && start < b ? start : 0.5 * (a + b);
  let dx = b - a;
  let dxOld = dx;
  for (let it = 0; it < NEWTON_MAX && !converged(a, b); it++) {
    if (sweep(d, e, s, scale, newton) > k) b = s;
    else a = s;
    const step = newton[0];
    const size = Math.max(Math.abs(s), 1);
    if (Math.abs(step) <= NEWTON_STEP_REL * size) return s - step;
    const next = s - step;
    if (!(next > a && next < b) || Math.abs(2 * step) > Math.abs(dxOld)) {
      if (Math.abs(step) <= NEWTON_STALL * size) return s;
      dxOld = dx;
      dx = 0.5 * (b - a);
      s = a + dx;
    } else {
      dxOld = dx;
      dx = step;
      s = next;
    }
  }
  while (!converged(a, b)) {
    const mid = 0.5 * (a + b);
    if (mid <= a || mid >= b) break;
    if (cyclicCountBelow(d, e, mid, scale) > k) b = mid;
    else a = mid;
  }
  return 0.5 * (a + b);
}

/**
 * The lowest `count` eigenvalues (ascending) of the cyclic tridiagonal (d, e), each by bisection on the count inside
 * [lo, hi] (which must contain them) until the bracket holds that level alone, then safeguarded Newton (module
 * comment); a level degenerate with another to the counts' resolution is bisected to BISECTION_ULPS. `near`
 * (optional, per level: a centre and a half width) narrows a level's bracket when two counts confirm that it holds
 * that level, and its centre starts Newton; otherwise the full bracket is used.
 */
export function cyclicEigenvalues(d: Float64Array, e: Float64Array, count: number, lo: number, hi: number, near?: { centre: ArrayLike<number>; halfWidth: ArrayLike<number> }): Float64Array {
  if (d.length < 3 || e.length !== d.length) throw new RangeError(`cyclic tridiagonal: need n ≥ 3 and as many couplings as diagonal entries, got ${d.length} and ${e.length}`);
  const scale = Math.max(Math.abs(lo), Math.abs(hi));
  const out = new Float64Array(count);
  const newton = new Float64Array(1);
  for (let k = 0; k < count; k++) {
    let a = k > 0 ? out[k - 1] : lo;
    let b = hi;
    let ca = -1;
    let cb = -1;
    let start = NaN;
    if (near && Number.isFinite(near.centre[k]) && near.halfWidth[k] > 0) {
      const na = Math.max(a, near.centre[k] - near.halfWidth[k]);
      const nb = Math.min(b, near.centre[k] + near.halfWidth[k]);
      if (na < nb) {
        const cna = cyclicCountBelow(d, e, na, scale);
        const cnb = cyclicCountBelow(d, e, nb, scale);
        if (cna <= k && cnb > k) {
          a = na;
          b = nb;
          ca = cna;
          cb = cnb;
          start = near.centre[k];
        }
      }
    }
    if (ca < 0) {
      ca = cyclicCountBelow(d, e, a, scale);
      cb = cyclicCountBelow(d, e, b, scale);
    }
    let done = false;
    while (!converged(a, b)) {
      if (ca === k && cb === k + 1) {
        out[k] = refineIsolated(d, e, k, a, b, start, scale, newton);
        done = true;
        break;
      }
      const mid = 0.5 * (a + b);
      if (mid <= a || mid >= b) break;
      const c = cyclicCountBelow(d, e, mid, scale);
      if (c > k) {
        b = mid;
        cb = c;
      } else {
        a = mid;
        ca = c;
      }
    }
    if (!done) out[k] = 0.5 * (a + b);
  }
  return out;
}
