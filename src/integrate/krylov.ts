/**
 * Krylov (Lanczos) approximation of y = exp(−i h A) v for a Hermitian operator A given matrix-free
 * (Park & Light, J. Chem. Phys. 85, 5870, 1986; Saad, SIAM J. Numer. Anal. 29, 209, 1992; Hochbruck & Lubich,
 * SIAM J. Numer. Anal. 34, 1911, 1997). The Lanczos basis is fully reorthogonalised, the small tridiagonal
 * exponential is evaluated through its eigen-decomposition (tridiag.ts), and the error is estimated a posteriori
 * by β·β_m·max(|e_mᵀ exp(−ihT_m) e₁|, |h|·|e_mᵀ φ₁(−ihT_m) e₁|) (Saad 1992, eq. 5.8; Hochbruck, Lubich &
 * Selhofer 1998). When the estimate exceeds the tolerance at the maximal
 * dimension, the step is cut into sub-steps that reuse the same basis (the scheme of Sidje, Expokit, ACM TOMS 24,
 * 130, 1998), so any h is accepted. Buffers are allocated in the constructor only.
 */
import { NumericalError } from '../core/errors.ts';
import { tridiagEigen } from '../linalg/tridiag.ts';

/** smallest dimension before the error estimate is first evaluated (estimate unreliable below) */
const MIN_CHECK_DIM = 4;
/** relative size of β_j below which the Krylov space is invariant ("happy breakdown") */
const BREAKDOWN_REL = 1e-14;
/** sub-steps allowed per call before giving up (a runaway guard; typical calls need one) */
const MAX_SUBSTEPS = 10000;
/** halvings of a sub-step on one basis before it is used as is */
const MAX_HALVINGS = 200;
/** Gram–Schmidt passes over the basis per Lanczos step (1 suffices here; 2 = "twice is enough", Parlett 1998) */
const REORTH_PASSES = 1;

export type ApplyOperator = (x: Float64Array, y: Float64Array) => void;

export interface KrylovStats {
  matvecs: number;
  substeps: number;
  calls: number;
  maxDimUsed: number;
}

export class KrylovExp {
  readonly len: number;
  readonly maxDim: number;
  readonly stats: KrylovStats = { matvecs: 0, substeps: 0, calls: 0, maxDimUsed: 0 };
  private readonly q: Float64Array[];
  private readonly r: Float64Array;
  private readonly w: Float64Array;
  private readonly alpha: Float64Array;
  private readonly beta: Float64Array;
  private readonly d: Float64Array;
  private readonly e: Float64Array;
  private readonly z: Float64Array;
  private readonly cRe: Float64Array;
  private readonly cIm: Float64Array;

  /** len = 2N (interleaved complex), maxDim = largest Krylov dimension */
  constructor(len: number, maxDim = 40) {
    this.len = len;
    this.maxDim = maxDim;
    this.q = Array.from({ length: maxDim + 1 }, () => new Float64Array(len));
    this.r = new Float64Array(len);
    this.w = new Float64Array(len);
    this.alpha = new Float64Array(maxDim + 1);
    this.beta = new Float64Array(maxDim + 1);
    this.d = new Float64Array(maxDim + 1);
    this.e = new Float64Array(maxDim + 1);
    this.z = new Float64Array((maxDim + 1) * (maxDim + 1));
    this.cRe = new Float64Array(maxDim + 1);
    this.cIm = new Float64Array(maxDim + 1);
  }

  /**
   * c = exp(−i h T_m) e₁ for the current α, β; returns the larger of |c_{m−1}| and |h|·|[φ₁(−ihT_m)e₁]_{m−1}|
   * (the second is the generalised-residual estimate of Hochbruck, Lubich & Selhofer, SIAM J. Sci. Comput. 19,
   * 1552, 1998, which does not vanish by accident when the first one passes through zero).
   */
  private smallExp(m: number, h: number): number {
    const { d, e, z, cRe, cIm, alpha, beta } = this;
    for (let i = 0; i < m; i++) {
      d[i] = alpha[i];
      e[i] = i < m - 1 ? beta[i] : 0;
    }
    tridiagEigen(d, e, m, z);
    let pr = 0;
    let pi = 0;
    for (let j = 0; j < m; j++) {
      let re = 0;
      let im = 0;
      for (let l = 0; l < m; l++) {
        const zz = z[j * m + l] * z[l];
        re += zz * Math.cos(h * d[l]);
        im -= zz * Math.sin(h * d[l]);
      }
      cRe[j] = re;
      cIm[j] = im;
    }
    // h φ₁(−ihθ) = (e^{−ihθ} − 1)/(−iθ), → h as θ → 0
    const j = m - 1;
    for (let l = 0; l < m; l++) {
      const zz = z[j * m + l] * z[l];
      const x = h * d[l];
      if (Math.abs(x) < 1e-8) {
        pr += zz * h;
      } else {
        // (cos x − 1 − i sin x)/(−iθ) = (sin x + i(cos x − 1))/θ · … with θ = d[l]: multiply by i/θ
        pr += (zz * Math.sin(x)) / d[l];
        pi += (zz * (Math.cos(x) - 1)) / d[l];
      }
    }
    return Math.max(Math.hypot(cRe[m - 1], cIm[m - 1]), Math.hypot(pr, pi));
  }

  /**
   * out = exp(−i h A) v with estimated absolute 2-norm error ≤ tol. `out` may alias `v`.
   * `normA` (optional) is an upper bound on ‖A‖ used only to scale the breakdown test.
   */
  expm(applyA: ApplyOperator, v: Float64Array, h: number, tol: number, out: Float64Array, normA = 1): void {
    const st = this.stats;
    st.calls++;
    const { q, w } = this;
    const len = this.len;
    w.set(v);
    let remaining = h;
    let guard = 0;
    while (remaining !== 0) {
      if (++guard > MAX_SUBSTEPS) throw new NumericalError('KrylovExp: too many sub-steps');
      let bnorm = 0;
      for (let i = 0; i < len; i++) bnorm += w[i] * w[i];
      bnorm = Math.sqrt(bnorm);
      if (bnorm === 0) break;
      const q0 = q[0];
      for (let i = 0; i < len; i++) q0[i] = w[i] / bnorm;
      const { m, hs } = this.subStep(applyA, bnorm, remaining, h, tol, normA);
      if (m > st.maxDimUsed) st.maxDimUsed = m;
      this.expand(m, bnorm);
      st.substeps++;
      remaining -= hs;
      if (Math.abs(remaining) <= 1e-15 * Math.abs(h)) remaining = 0;
    }
    out.set(w);
  }

  /**
   * Lanczos basis from q₀ until the error estimate for the sub-step hs meets its share tol·|hs|/|h| (or the basis
   * is invariant); at the maximal dimension hs is halved on the same basis instead. Leaves c = exp(−ihs T_m)e₁ in
   * cRe, cIm and returns the dimension and the sub-step taken.
   */
  private subStep(applyA: ApplyOperator, bnorm: number, hs: number, h: number, tol: number, normA: number): { m: number; hs: number } {
    const { q, r, alpha, beta } = this;
    const len = this.len;
    let m = 0;
    for (let j = 0; j < this.maxDim; j++) {
      const qj = q[j];
      applyA(qj, r);
      this.stats.matvecs++;
      // α_j = ⟨q_j, A q_j⟩ (real for Hermitian A)
      let a = 0;
      for (let i = 0; i < len; i++) a += qj[i] * r[i];
      alpha[j] = a;
      this.reorthogonalise(j);
      let b = 0;
      for (let i = 0; i < len; i++) b += r[i] * r[i];
      b = Math.sqrt(b);
      beta[j] = b;
      m = j + 1;
      if (b <= BREAKDOWN_REL * Math.max(normA, Math.abs(a))) {
        // invariant subspace: the exponential is exact for any h
        this.smallExp(m, hs);
        return { m, hs };
      }
      const qn = q[j + 1];
      for (let i = 0; i < len; i++) qn[i] = r[i] / b;
      if (m >= MIN_CHECK_DIM && (m === this.maxDim || m % 2 === 0)) {
        const last = this.smallExp(m, hs);
        const err = bnorm * b * last;
        if (err <= (tol * Math.abs(hs)) / Math.abs(h)) return { m, hs };
      }
    }
    // shrink the sub-step on the same basis until the estimate is met
    for (let it = 0; it < MAX_HALVINGS; it++) {
      hs *= 0.5;
      const last = this.smallExp(m, hs);
      if (bnorm * beta[m - 1] * last <= (tol * Math.abs(hs)) / Math.abs(h)) break;
    }
    return { m, hs };
  }

  /**
   * r ← r − Σ_{l ≤ j} q_l⟨q_l, r⟩: full reorthogonalisation against q_0 … q_j (classical Gram–Schmidt; one pass after
   * the recurrence's own projection is enough for the exponential, Saad 1992)
   */
  private reorthogonalise(j: number): void {
    const { q, r } = this;
    const len = this.len;
    for (let pass = 0; pass < REORTH_PASSES; pass++) {
      for (let l = 0; l <= j; l++) {
        const ql = q[l];
        let sr = 0;
        let si = 0;
        for (let i = 0; i < len; i += 2) {
          sr += ql[i] * r[i] + ql[i + 1] * r[i + 1];
          si += ql[i] * r[i + 1] - ql[i + 1] * r[i];
        }
        for (let i = 0; i < len; i += 2) {
          r[i] -= sr * ql[i] - si * ql[i + 1];
          r[i + 1] -= sr * ql[i + 1] + si * ql[i];
        }
      }
    }
  }

  /** w = β Q_m c */
  private expand(m: number, bnorm: number): void {
    const { q, w, cRe, cIm } = this;
    const len = this.len;
    w.fill(0);
    for (let l = 0; l < m; l++) {
      const ql = q[l];
      const cr = bnorm * cRe[l];
      const ci = bnorm * cIm[l];
      for (let i = 0; i < len; i += 2) {
        w[i] += cr * ql[i] - ci * ql[i + 1];
        w[i + 1] += cr * ql[i + 1] + ci * ql[i];
      }
    }
  }
}
