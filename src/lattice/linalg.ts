/**
 * Small linear-algebra kernels of the lattice module (the tridiagonal QL solver is quantum/tridiag.ts):
 *
 *  - `TridiagonalLowest`: lowest eigenpairs of a large real symmetric tridiagonal matrix by Sturm-sequence
 *    bisection and inverse iteration (Wilkinson, The Algebraic Eigenvalue Problem, 1965, ch. 5 §37–§48;
 *    Golub & Van Loan, Matrix Computations, 4th ed. 2013, §8.4.1).
 *  - `LanczosExp`: y = exp(−i t A) v for a Hermitian A given matrix-free, Lanczos with full reorthogonalisation,
 *    a posteriori error estimate β·β_m |e_mᵀ exp(−itT_m) e₁| (Saad, SIAM J. Numer. Anal. 29, 209, 1992,
 *    eq. 5.8), and sub-stepping with the same basis when the estimate is too large (Sidje, ACM TOMS 24, 130, 1998).
 *
 * Complex vectors are interleaved (re, im) Float64Arrays of length 2M.
 */
import { tridiagEigen } from '../quantum/tridiag.ts';

/** bisection stops when the bracket is this many ulps of the spectral scale wide (≈ machine precision) */
const BISECTION_REL = 4 * Number.EPSILON;
/** inverse-iteration sweeps per eigenvector (two suffice from a random start; three for safety) */
const INVERSE_SWEEPS = 3;
/** Krylov dimension from which the error estimate is trusted */
const LANCZOS_MIN_CHECK = 4;
/** after a failed check the next one comes at dimension ⌈1.2 m⌉: each check costs a QL of size m, O(m³) */
const LANCZOS_CHECK_GROWTH = 1.2;
/** relative β below which the Krylov space is invariant ("happy breakdown") */
const LANCZOS_BREAKDOWN = 1e-13;
/** sub-step shrink factor when the estimate exceeds the tolerance at the largest dimension (Sidje 1998: 0.9·…) */
const SUBSTEP_SAFETY = 0.9;


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

/** y = A x for interleaved complex vectors */
export type ComplexOperator = (x: Float64Array, y: Float64Array) => void;

export interface LanczosStats {
  matvecs: number;
  calls: number;
  substeps: number;
  maxDimUsed: number;
}

/** Re⟨a, b⟩ = Σ Re(conj(a) b) */
function dotRe(a: Float64Array, b: Float64Array): number {
  let re = 0;
  for (let i = 0; i < a.length; i += 2) re += a[i] * b[i] + a[i + 1] * b[i + 1];
  return re;
}

/** Im⟨a, b⟩ = Σ Im(conj(a) b) */
function dotIm(a: Float64Array, b: Float64Array): number {
  let im = 0;
  for (let i = 0; i < a.length; i += 2) im += a[i] * b[i + 1] - a[i + 1] * b[i];
  return im;
}

/** Lanczos approximation of exp(−i t A) v (see module doc). All buffers allocated in the constructor. */
export class LanczosExp {
  readonly len: number;
  readonly maxDim: number;
  readonly stats: LanczosStats = { matvecs: 0, calls: 0, substeps: 0, maxDimUsed: 0 };
  private readonly q: Float64Array[];
  private readonly w: Float64Array;
  private readonly cur: Float64Array;
  private readonly alpha: Float64Array;
  private readonly beta: Float64Array;
  private readonly d: Float64Array;
  private readonly e: Float64Array;
  private readonly z: Float64Array;
  private readonly cRe: Float64Array;
  private readonly cIm: Float64Array;

  /** full reorthogonalisation (costs O(m²) products per call); the exponential is accurate without it (loss of
   * orthogonality only slows convergence: Druskin, Greenbaum & Knizhnerman, SIAM J. Sci. Comput. 19, 38, 1998) */
  readonly reorthogonalise: boolean;

  constructor(len: number, maxDim = 40, reorthogonalise = false) {
    this.len = len;
    this.maxDim = maxDim;
    this.reorthogonalise = reorthogonalise;
    this.q = Array.from({ length: maxDim + 1 }, () => new Float64Array(len));
    this.w = new Float64Array(len);
    this.cur = new Float64Array(len);
    this.alpha = new Float64Array(maxDim + 1);
    this.beta = new Float64Array(maxDim + 1);
    this.d = new Float64Array(maxDim + 1);
    this.e = new Float64Array(maxDim + 1);
    this.z = new Float64Array((maxDim + 1) * (maxDim + 1));
    this.cRe = new Float64Array(maxDim + 1);
    this.cIm = new Float64Array(maxDim + 1);
  }

  /** c = exp(−i t T_m) e₁; returns |c_{m−1}| */
  private small(m: number, t: number): number {
    const { d, e, z, cRe, cIm, alpha, beta } = this;
    for (let i = 0; i < m; i++) {
      d[i] = alpha[i];
      e[i] = i < m - 1 ? beta[i] : 0;
    }
    tridiagEigen(d, e, m, z);
    for (let j = 0; j < m; j++) {
      let re = 0;
      let im = 0;
      for (let l = 0; l < m; l++) {
        const zz = z[j * m + l] * z[l];
        re += zz * Math.cos(t * d[l]);
        im -= zz * Math.sin(t * d[l]);
      }
      cRe[j] = re;
      cIm[j] = im;
    }
    return Math.hypot(cRe[m - 1], cIm[m - 1]);
  }

  /**
   * out = exp(−i t A) v with absolute error per unit norm ≲ tol (v and out may be the same array).
   */
  apply(A: ComplexOperator, t: number, v: Float64Array, out: Float64Array, tol: number): void {
    this.stats.calls++;
    const { q, w, cur, alpha, beta, cRe, cIm } = this;
    cur.set(v);
    let remaining = t;
    while (Math.abs(remaining) > 0) {
      const nrm = Math.sqrt(dotRe(cur, cur));
      if (nrm === 0) break;
      const q0 = q[0];
      for (let i = 0; i < this.len; i++) q0[i] = cur[i] / nrm;
      let m = 0;
      let step = remaining;
      let done = false;
      let nextCheck = LANCZOS_MIN_CHECK;
      for (let j = 0; j < this.maxDim; j++) {
        A(q[j], w);
        this.stats.matvecs++;
        const a = dotRe(q[j], w);
        alpha[j] = a;
        // three-term recurrence (k = j − 1, j), plus a second pass against the whole basis when `reorthogonalise`
        const first = this.reorthogonalise ? 0 : Math.max(0, j - 1);
        for (let k = first; k <= j; k++) {
          const cr = dotRe(q[k], w);
          const ci = dotIm(q[k], w);
          const qk = q[k];
          for (let i = 0; i < this.len; i += 2) {
            w[i] -= cr * qk[i] - ci * qk[i + 1];
            w[i + 1] -= cr * qk[i + 1] + ci * qk[i];
          }
        }
        const b = Math.sqrt(dotRe(w, w));
        beta[j] = b;
        m = j + 1;
        if (b < LANCZOS_BREAKDOWN * Math.max(Math.abs(a), 1)) {
          this.small(m, step);
          done = true;
          break;
        }
        const qn = q[j + 1];
        for (let i = 0; i < this.len; i++) qn[i] = w[i] / b;
        if (m >= LANCZOS_MIN_CHECK && (m >= nextCheck || m === this.maxDim)) {
          nextCheck = Math.ceil(m * LANCZOS_CHECK_GROWTH);
          const err = b * this.small(m, step);
          if (err <= tol) {
            done = true;
            break;
          }
        }
      }
      if (!done) {
        // shrink the sub-step until the estimate with the full basis meets the tolerance
        let err = beta[m - 1] * this.small(m, step);
        while (err > tol) {
          step *= SUBSTEP_SAFETY * Math.min(0.5, Math.pow(tol / err, 1 / m));
          err = beta[m - 1] * this.small(m, step);
        }
      }
      this.stats.maxDimUsed = Math.max(this.stats.maxDimUsed, m);
      cur.fill(0);
      for (let j = 0; j < m; j++) {
        const cr = cRe[j] * nrm;
        const ci = cIm[j] * nrm;
        const qj = q[j];
        for (let i = 0; i < this.len; i += 2) {
          cur[i] += cr * qj[i] - ci * qj[i + 1];
          cur[i + 1] += cr * qj[i + 1] + ci * qj[i];
        }
      }
      remaining -= step;
      if (Math.abs(remaining) < 1e-15 * Math.abs(t)) remaining = 0;
      this.stats.substeps++;
    }
    out.set(cur);
  }
}
