/**
 * Time-dependent Schrödinger propagation i ∂_s ψ = H(s) ψ on the periodic grid (natural units, physics.md §3),
 * for the KdV drive H(s) = k² + u(λ(s)) + σ λ'(s) (−4k³ − 3{u,k}) (σ = +1 CD, 0 bare, −1 sign-flipped) or any
 * Hamiltonian of the form O(s) = c₁(s)k + c₂(s)k² + c₃(s)k³ + v(s) + b(s){w(s), k} supplied as a callback.
 * Three fourth-order one-step schemes:
 *
 * 'etd4' (default) — exponential time differencing RK4 (Cox & Matthews, J. Comput. Phys. 176, 430, 2002;
 *   Kassam & Trefethen, SIAM J. Sci. Comput. 26, 1214, 2005) with the k-diagonal part D = c₁k + c₂k² + c₃k³ frozen
 *   at the step midpoint and treated exactly in Fourier space (physics.md §5), N = −i[B(s) + D(s) − D(s_mid)]ψ
 *   explicit. ETDRK4 reproduces the slaved response of the fast high-k modes (φ-functions), which splitting does
 *   not. It is not unitary: each step is followed by a projection back to the initial norm (Hairer, Lubich &
 *   Wanner, Geometric Numerical Integration, 2nd ed. 2006, §IV.4); the raw drift is visible with
 *   `renormalize = false`. Order 4 verified (tests, and Cauchy differences on the two-soliton case: ratio ≈ 20
 *   per halving at 3200 → 6400 steps, N = 256). Cost: 4 operator evaluations (4 FFTs each) per step and state.
 *
 * 'magnus4' — commutator-free Magnus method with two exponentials at the Gauss nodes c₁,₂ = ½ ∓ √3/6
 *   (Blanes & Moan, Appl. Numer. Math. 56, 1519, 2006; same scheme in Alvermann & Fehske, J. Comput. Phys. 230,
 *   5930, 2011, "CFET4:2"):  ψ ← exp(−ih(α₁H₁ + α₂H₂)) exp(−ih(α₂H₁ + α₁H₂)) ψ,  α₁,₂ = ¼ ∓ √3/6,
 *   each exponential by Lanczos (krylov.ts). Unitary; the reference for non-stiff drives (harmonic test). For the
 *   cubic drive its Krylov cost grows with h·4|τ′|k_max³: two-soliton N = 512 took 115 s (2509 steps).
 *
 * 'split4' — H = D + B with D exact, B = v + b{w,k} by Lanczos at the stage midpoints, Strang steps of the
 *   time-extended system composed by Suzuki's five-stage fractal (Suzuki, Phys. Lett. A 146, 319, 1990; Hairer,
 *   Lubich & Wanner 2006, §II.4), p = 1/(4 − 4^{1/3}); `kCut` keeps modes |k| ≤ kCut in the Krylov part.
 *   Unitary and fourth order for smooth problems, but for the cubic drive it stays pre-asymptotic (measured:
 *   Cauchy differences 0.19, 0.13, 0.10 at 200/400/800 steps, N = 256, kCut = 10), so it is not the default.
 *
 * Error control: step doubling (Hairer, Nørsett & Wanner, Solving ODEs I, 2nd ed. 1993, §II.4). One step of h and
 * two of h/2 are compared, err = max over states of the part of ψ_h − ψ_{h/2,h/2} orthogonal to the state (the
 * only part that changes a fidelity; a global phase error does not); the two-half-step result is kept. The
 * budget is an infidelity `tol` caused by time stepping: the orthogonal amplitude error δ = √tol is spread over
 * the interval, err ≤ δ·h/(s₁ − s₀) per step, so Σ err ≤ δ. This is conservative: on the two-soliton case
 * (N = 512, etd4) tol = 1e-6 gave a true worst infidelity 1.6e-11 and tol = 1e-8 gave 1e-14.
 */
import { UserError } from '../core/errors.ts';
import type { Grid } from '../spectral/grid.ts';
import { emptyTerms, normBound, SpectralOperator, type OperatorTerms, cdTerms } from './hamiltonian.ts';
import { KrylovExp } from '../integrate/krylov.ts';
import type { Ramp } from '../protocol/ramp.ts';

export type Scheme = 'magnus4' | 'split4' | 'etd4';
export const SCHEMES: readonly Scheme[] = ['magnus4', 'split4', 'etd4'];

/** fraction of the per-step error budget given to each Krylov exponential (the rest is time stepping) */
const KRYLOV_SHARE = 0.02;
/** floor for the Krylov tolerance (round-off level of a unit vector after a few hundred FFTs) */
const KRYLOV_TOL_FLOOR = 1e-13;
/** step-size controller: safety factor and bounds of the change per step (Hairer, Nørsett & Wanner 1993, §II.4) */
const SAFETY = 0.8;
const GROW_MAX = 2;
const SHRINK_MIN = 0.2;
/** global error control: first level, largest level, smallest convergence ratio trusted (a 4th-order method
 *  gives 16 asymptotically; below 2 the levels are not converging yet) */
const GLOBAL_INITIAL_STEPS = 64;
const GLOBAL_MAX_STEPS = 1 << 16;
const GLOBAL_MIN_RATIO = 2;
/** observed orders above the scheme's order are not trusted */
const GLOBAL_MAX_ORDER = 4;
/** predicted next level: margin on the predicted count, and the smallest growth (keeps f^p − 1 well conditioned) */
const GLOBAL_MARGIN = 1.2;
const GLOBAL_MIN_GROWTH = 1.25;
/** default Krylov dimension cap */
const KRYLOV_DIM_DEFAULT = 40;

/** the time-dependent Hamiltonian; `terms` may point out.v / out.w at arrays it reuses on the next call */
export interface DrivenHamiltonian {
  readonly grid: Grid;
  terms(s: number, out: OperatorTerms): void;
  /** out[0..2] = ∫_{sa}^{sb} (c₁, c₂, c₃) ds; required by 'split4' */
  kineticIntegral?(sa: number, sb: number, out: Float64Array): void;
}

/** potential callback in natural units: fill out[j] = u(ξ_j; λ) */
export type PotentialFn = (lambda: number, out: Float64Array) => void;

/**
 * The KdV drive of physics.md §3: H(s) = k² + u(λ(s)) + σ λ'(s)(−4k³ − 3{u,k}); λ = τ is the KdV time.
 * σ = 1: exact CD for a KdV-admissible sequence; σ = 0: bare ramp; σ = −1: sign-flipped correction.
 */
export function kdvDrive(grid: Grid, potential: PotentialFn, ramp: Ramp, sigma: number): DrivenHamiltonian {
  const u = new Float64Array(grid.n);
  return {
    grid,
    terms(s, out) {
      potential(ramp.value(s), u);
      cdTerms(u, ramp.rate(s), sigma, out);
    },
    kineticIntegral(sa, sb, out) {
      out[0] = 0;
      out[1] = sb - sa;
      out[2] = -4 * sigma * (ramp.value(sb) - ramp.value(sa));
    },
  };
}

export interface PropagateOptions {
  scheme?: Scheme;
  /** infidelity budget from time stepping (default 1e-8) */
  tol?: number;
  /** fixed number of equal steps: no error control (for order checks) */
  fixedSteps?: number;
  initialStep?: number;
  maxStep?: number;
  minStep?: number;
  krylovMaxDim?: number;
  /** times at which onSample is called with the current states (steps are cut to land on them) */
  sampleTimes?: readonly number[];
  onSample?: (s: number, states: readonly Float64Array[]) => void;
  onProgress?: (fraction: number) => void;
  /**
   * 'local' (default): step doubling with the per-step budget described in the module comment.
   * 'global': uniform steps n₀, 2n₀, 4n₀, … until the final states converge: with the perpendicular differences
   * d_k between levels k−1 and k and ρ = d_{k−1}/d_k (≥ 2 required, at least three levels), the error of the finest
   * level is estimated as d_k/(ρ − 1) (geometric tail; Aitken-type, cf. Richardson extrapolation, Hairer, Nørsett
   * & Wanner 1993, §II.4) and accepted when it is ≤ √tol. Once the observed order p = log₂ρ (≤ 4) is known, the
   * next level is the predicted count ×1.2 (growth f ∈ [1.25, 2]) and its error is d/(f^p − 1).
   * Samples are reported from the accepted level only.
   */
  errorControl?: 'local' | 'global';
  /** first level of the global control (default 64 steps) */
  initialSteps?: number;
}

export interface PropagationStats {
  scheme: Scheme;
  errorEstimator: 'step-doubling' | 'none (fixed steps)' | 'global step halving';
  /** global control: the step counts tried */
  levels?: number[];
  steps: number;
  rejected: number;
  matvecs: number;
  krylovCalls: number;
  krylovSubsteps: number;
  krylovMaxDimUsed: number;
  minStep: number;
  maxStep: number;
  /** Σ of the step-doubling differences (a conservative bound: before the asymptotic regime the kept half-step
   *  result is not 2⁴ − 1 times better), 2-norm, max over states; its square bounds the infidelity */
  estimatedAmplitudeError: number;
  /** max over states and steps of |‖ψ‖ − ‖ψ₀‖| */
  maxNormDrift: number;
  wallMs: number;
}

export interface PropagationResult {
  states: Float64Array[];
  stats: PropagationStats;
}

/** weights of the CF Magnus-4 step (Blanes & Moan 2006) */
const SQ3 = Math.sqrt(3);
const GAUSS_C1 = 0.5 - SQ3 / 6;
const GAUSS_C2 = 0.5 + SQ3 / 6;
const CF_A1 = 0.25 - SQ3 / 6;
const CF_A2 = 0.25 + SQ3 / 6;
/** Suzuki fractal p = 1/(4 − 4^{1/3}); stage fractions p, p, 1 − 4p, p, p */
const SUZUKI_P = 1 / (4 - Math.cbrt(4));
const SUZUKI_STAGES = [SUZUKI_P, SUZUKI_P, 1 - 4 * SUZUKI_P, SUZUKI_P, SUZUKI_P];

class TermsBuffer {
  readonly t: OperatorTerms = emptyTerms();
  readonly v: Float64Array;
  readonly w: Float64Array;
  /** when the source had w ≡ v, the folded w equals wOverV·v (saves one FFT in etd4) */
  wOverV: number | null = null;
  constructor(n: number) {
    this.v = new Float64Array(n);
    this.w = new Float64Array(n);
  }
  /** copy src (whose arrays may be transient) into own storage, with the coefficient b folded into w */
  load(src: OperatorTerms): void {
    this.combine(1, src, 0, null);
    this.wOverV = src.w !== null && src.w === src.v ? src.b : null;
  }
  /** this = a·A + b·B */
  combine(a: number, A: OperatorTerms, bb: number, B: OperatorTerms | null): void {
    const t = this.t;
    this.wOverV = null;
    const n = this.v.length;
    t.c1 = a * A.c1 + (B ? bb * B.c1 : 0);
    t.c2 = a * A.c2 + (B ? bb * B.c2 : 0);
    t.c3 = a * A.c3 + (B ? bb * B.c3 : 0);
    t.kCut = Infinity;
    const hasV = A.v !== null || (B !== null && B.v !== null);
    const hasW = (A.w !== null && A.b !== 0) || (B !== null && B.w !== null && B.b !== 0);
    if (hasV) {
      for (let j = 0; j < n; j++) this.v[j] = (A.v ? a * A.v[j] : 0) + (B && B.v ? bb * B.v[j] : 0);
      t.v = this.v;
    } else t.v = null;
    if (hasW) {
      const fa = A.w ? a * A.b : 0;
      const fb = B && B.w ? bb * B.b : 0;
      for (let j = 0; j < n; j++) this.w[j] = (A.w ? fa * A.w[j] : 0) + (B && B.w ? fb * B.w[j] : 0);
      t.w = this.w;
      t.b = 1;
    } else {
      t.w = null;
      t.b = 0;
    }
  }
}

/**
 * A reusable propagator for one grid: all buffers are allocated here; `step` and `propagate` allocate only
 * per call (result arrays), never per matrix-vector product.
 */
export class Propagator {
  readonly grid: Grid;
  readonly op: SpectralOperator;
  readonly krylov: KrylovExp;
  private readonly raw: OperatorTerms = emptyTerms();
  private readonly tb1: TermsBuffer;
  private readonly tb2: TermsBuffer;
  private readonly tbx: TermsBuffer;
  private current: OperatorTerms;
  private currentNorm = 1;
  /** etd4: rescale every state to its norm before the step (projection); set false to see the raw ETD norm drift */
  renormalize = true;
  private normBefore = new Float64Array(64);
  /** split4: modes with |k| > kCut get the exact kinetic flow, the rest stays in the Krylov part */
  kCut = 0;
  private readonly apply: (x: Float64Array, y: Float64Array) => void;
  private readonly spec: Float64Array;
  private readonly spec2: Float64Array;
  private readonly kint = new Float64Array(3);
  private readonly k2: Float64Array;
  private readonly k3: Float64Array;

  constructor(grid: Grid, krylovMaxDim = KRYLOV_DIM_DEFAULT) {
    this.grid = grid;
    this.op = new SpectralOperator(grid);
    this.krylov = new KrylovExp(2 * grid.n, krylovMaxDim);
    this.tb1 = new TermsBuffer(grid.n);
    this.tb2 = new TermsBuffer(grid.n);
    this.tbx = new TermsBuffer(grid.n);
    this.tA = new TermsBuffer(grid.n);
    this.tB = new TermsBuffer(grid.n);
    this.current = this.tbx.t;
    this.apply = (x, y) => this.op.apply(this.current, x, y);
    this.spec = new Float64Array(2 * grid.n);
    this.spec2 = new Float64Array(2 * grid.n);
    this.k2 = Float64Array.from(grid.k, (k) => k * k);
    this.k3 = Float64Array.from(grid.kOdd, (k) => k * k * k);
  }

  /** ψ ← exp(−i∫D) ψ with ∫D = I₁k + I₂k² + I₃k³ (exact, diagonal in Fourier space) */
  private kineticFlow(psi: Float64Array, i1: number, i2: number, i3: number, kCut: number): void {
    const n = this.grid.n;
    const { spec, spec2, k2, k3 } = this;
    const kOdd = this.grid.kOdd;
    this.op.fft.forward(psi, spec);
    const kFull = this.grid.k;
    for (let j = 0; j < n; j++) {
      const ph = Math.abs(kFull[j]) > kCut ? i1 * kOdd[j] + i2 * k2[j] + i3 * k3[j] : 0;
      const c = Math.cos(ph);
      const s = -Math.sin(ph);
      const re = spec[2 * j];
      const im = spec[2 * j + 1];
      spec2[2 * j] = c * re - s * im;
      spec2[2 * j + 1] = c * im + s * re;
    }
    this.op.fft.inverse(spec2, psi);
  }

  private expCurrent(psi: Float64Array, h: number, tolK: number): void {
    this.krylov.expm(this.apply, psi, h, tolK, psi, this.currentNorm);
  }

  /** one CF Magnus-4 step s → s + h, in place on every state */
  private stepMagnus(H: DrivenHamiltonian, s: number, h: number, states: Float64Array[], tolK: number): void {
    H.terms(s + GAUSS_C1 * h, this.raw);
    this.tb1.load(this.raw);
    H.terms(s + GAUSS_C2 * h, this.raw);
    this.tb2.load(this.raw);
    // first exponential (acts first): α₂H₁ + α₁H₂, then α₁H₁ + α₂H₂
    const pairs: Array<[number, number]> = [[CF_A2, CF_A1], [CF_A1, CF_A2]];
    for (const [a, b] of pairs) {
      this.tbx.combine(a, this.tb1.t, b, this.tb2.t);
      this.current = this.tbx.t;
      this.currentNorm = normBound(this.grid, this.current);
      for (const psi of states) this.expCurrent(psi, h, tolK);
    }
  }

  /** one Suzuki-composed Strang step with exact kinetic flow */
  private stepSplit(H: DrivenHamiltonian, s: number, h: number, states: Float64Array[], tolK: number): void {
    const kCut = this.kCut;
    if (!H.kineticIntegral) throw new UserError('propagator: scheme "split4" needs a Hamiltonian with kineticIntegral; use scheme "magnus4"');
    let t = s;
    let pending = t; // start of the not yet applied kinetic flow
    const kint = this.kint;
    for (const g of SUZUKI_STAGES) {
      const hs = g * h;
      const mid = t + hs / 2;
      H.kineticIntegral(pending, mid, kint);
      for (const psi of states) this.kineticFlow(psi, kint[0], kint[1], kint[2], kCut);
      H.terms(mid, this.raw);
      this.tbx.load(this.raw);
      const bt = this.tbx.t;
      bt.kCut = kCut;
      this.current = bt;
      this.currentNorm = normBound(this.grid, bt);
      for (const psi of states) this.expCurrent(psi, hs, tolK);
      pending = mid;
      t += hs;
    }
    H.kineticIntegral(pending, s + h, kint);
    for (const psi of states) this.kineticFlow(psi, kint[0], kint[1], kint[2], kCut);
  }


  // ---- etd4: exponential time differencing RK4 with the k-diagonal part exact -------------------------------
  private etdBuf: Float64Array[] = [];
  private etdCoef: Float64Array[] = [];
  private readonly tA: TermsBuffer;
  private readonly tB: TermsBuffer;

  private ensureEtd(): void {
    if (this.etdBuf.length) return;
    const n2 = 2 * this.grid.n;
    this.etdBuf = Array.from({ length: 13 }, () => new Float64Array(n2));
    this.etdCoef = Array.from({ length: 6 }, () => new Float64Array(n2));
  }

  /**
   * out = −i[(B_t y)^ + (D_t − D_mid) ŷ] in Fourier space, B_t = v + b{w,k} of `t` (c's are D_t), D_mid from `mid`.
   * Four FFTs (three O(N) passes) when w ∝ v, five otherwise. Uses etdBuf[8..11] as scratch; allocates nothing.
   */
  private etdNonlin(t: TermsBuffer, mid: OperatorTerms, yHat: Float64Array, out: Float64Array): void {
    const n = this.grid.n;
    const fft = this.op.fft;
    const buf = this.etdBuf;
    const x = buf[8];
    const kx = buf[9];
    const p = buf[10];
    const r = buf[11];
    const kOdd = this.grid.kOdd;
    const { k2, k3 } = this;
    const tt = t.t;
    const v = tt.v;
    const w = tt.w;
    const bw = tt.b;
    const prop = t.wOverV !== null && v !== null ? t.wOverV : null;
    if (v !== null && w !== null && prop !== null) {
      this.etdNonlinCd(v, w, bw, prop, tt, mid, yHat, out);
      return;
    }
    fft.inverse(yHat, x);
    if (w) {
      for (let j = 0; j < n; j++) {
        const kk = kOdd[j];
        p[2 * j] = kk * yHat[2 * j];
        p[2 * j + 1] = kk * yHat[2 * j + 1];
      }
      fft.inverse(p, kx);
    }
    // x-space products: p = v·y, r = w·(k y), and (only if w is not ∝ v) kx-reuse: q = w·y into x after use
    for (let j = 0; j < n; j++) {
      const yr = x[2 * j];
      const yi = x[2 * j + 1];
      if (v) {
        p[2 * j] = v[j] * yr;
        p[2 * j + 1] = v[j] * yi;
      }
      if (w) {
        r[2 * j] = w[j] * kx[2 * j];
        r[2 * j + 1] = w[j] * kx[2 * j + 1];
        if (prop === null) {
          kx[2 * j] = w[j] * yr;
          kx[2 * j + 1] = w[j] * yi;
        }
      }
    }
    // transforms: P̂ → x, R̂ → out (temporarily), Q̂ → kx-spectrum in buf[12]
    if (v) fft.forward(p, x);
    const qHat = buf[12];
    if (w) {
      fft.forward(r, p);
      if (prop === null) fft.forward(kx, qHat);
    }
    const dc1 = tt.c1 - mid.c1;
    const dc2 = tt.c2 - mid.c2;
    const dc3 = tt.c3 - mid.c3;
    for (let j = 0; j < n; j++) {
      const kk = kOdd[j];
      const m = dc1 * kk + dc2 * k2[j] + dc3 * k3[j];
      let re = m * yHat[2 * j];
      let im = m * yHat[2 * j + 1];
      if (v) {
        re += x[2 * j];
        im += x[2 * j + 1];
      }
      if (w) {
        // b (k Q̂ + R̂), Q̂ = prop·P̂ when w = prop·v
        const qr = prop !== null ? prop * x[2 * j] : qHat[2 * j];
        const qi = prop !== null ? prop * x[2 * j + 1] : qHat[2 * j + 1];
        re += bw * (kk * qr + p[2 * j]);
        im += bw * (kk * qi + p[2 * j + 1]);
      }
      // multiply by −i: (re, im) → (im, −re)
      out[2 * j] = im;
      out[2 * j + 1] = -re;
    }
    this.op.applications++;
  }

  /** etdNonlin for w = prop·v (the KdV drive): branch-free loops, four FFTs */
  private etdNonlinCd(v: Float64Array, w: Float64Array, bw: number, prop: number, tt: OperatorTerms, mid: OperatorTerms, yHat: Float64Array, out: Float64Array): void {
    const n = this.grid.n;
    const fft = this.op.fft;
    const buf = this.etdBuf;
    const x = buf[8];
    const kx = buf[9];
    const p = buf[10];
    const r = buf[11];
    const kOdd = this.grid.kOdd;
    const { k2, k3 } = this;
    fft.inverse(yHat, x);
    for (let j = 0; j < n; j++) {
      const kk = kOdd[j];
      p[2 * j] = kk * yHat[2 * j];
      p[2 * j + 1] = kk * yHat[2 * j + 1];
    }
    fft.inverse(p, kx);
    for (let j = 0; j < n; j++) {
      const vj = v[j];
      const wj = w[j];
      p[2 * j] = vj * x[2 * j];
      p[2 * j + 1] = vj * x[2 * j + 1];
      r[2 * j] = wj * kx[2 * j];
      r[2 * j + 1] = wj * kx[2 * j + 1];
    }
    fft.forward(p, x);
    fft.forward(r, kx);
    const dc1 = tt.c1 - mid.c1;
    const dc2 = tt.c2 - mid.c2;
    const dc3 = tt.c3 - mid.c3;
    const bp = bw * prop;
    for (let j = 0; j < n; j++) {
      const kk = kOdd[j];
      const m = dc1 * kk + dc2 * k2[j] + dc3 * k3[j];
      const f = 1 + bp * kk;
      const re = m * yHat[2 * j] + f * x[2 * j] + bw * kx[2 * j];
      const im = m * yHat[2 * j + 1] + f * x[2 * j + 1] + bw * kx[2 * j + 1];
      out[2 * j] = im;
      out[2 * j + 1] = -re;
    }
    this.op.applications++;
  }

  /**
   * One ETDRK4 step (Cox & Matthews, J. Comput. Phys. 176, 430, 2002; Kassam & Trefethen, SIAM J. Sci. Comput.
   * 26, 1214, 2005) for ψ' = Lψ + N(s, ψ), L = −iD(s + h/2) (diagonal in Fourier space, D = c₁k + c₂k² + c₃k³),
   * N = −i[B(s) + D(s) − D(s + h/2)]ψ. The φ-functions of the purely imaginary z = hL are evaluated directly:
   * Taylor series for |z| < 1, closed forms otherwise (no cancellation problem there; physics.md §5 warns that
   * real-part contour shortcuts fail for imaginary L).
   */
  private stepEtd(H: DrivenHamiltonian, s: number, h: number, states: Float64Array[]): void {
    this.ensureEtd();
    H.terms(s, this.raw);
    this.tA.load(this.raw);
    H.terms(s + h / 2, this.raw);
    this.tb1.load(this.raw);
    H.terms(s + h, this.raw);
    this.tB.load(this.raw);
    const mid = this.tb1.t;
    const n = this.grid.n;
    const [E, E2, Q, F1, F2, F3] = this.etdCoef;
    const kOdd = this.grid.kOdd;
    const { k2, k3 } = this;
    for (let j = 0; j < n; j++) {
      const d = mid.c1 * kOdd[j] + mid.c2 * k2[j] + mid.c3 * k3[j];
      const th = -h * d; // z = iθ
      etdPhi(th, PHI);
      // E = e^{iθ}, E2 = e^{iθ/2}, Q = (h/2)φ₁(iθ/2), f1 = h(φ₁ − 3φ₂ + 4φ₃), f2 = h(φ₂ − 2φ₃), f3 = h(4φ₃ − φ₂)
      E[2 * j] = Math.cos(th); E[2 * j + 1] = Math.sin(th);
      E2[2 * j] = Math.cos(th / 2); E2[2 * j + 1] = Math.sin(th / 2);
      F1[2 * j] = h * (PHI[0] - 3 * PHI[2] + 4 * PHI[4]); F1[2 * j + 1] = h * (PHI[1] - 3 * PHI[3] + 4 * PHI[5]);
      F2[2 * j] = h * (PHI[2] - 2 * PHI[4]); F2[2 * j + 1] = h * (PHI[3] - 2 * PHI[5]);
      F3[2 * j] = h * (4 * PHI[4] - PHI[2]); F3[2 * j + 1] = h * (4 * PHI[5] - PHI[3]);
      etdPhi(th / 2, PHI);
      Q[2 * j] = (h / 2) * PHI[0]; Q[2 * j + 1] = (h / 2) * PHI[1];
    }
    const [u0, a, b, c, nu, na, nb, nc] = this.etdBuf;
    const fft = this.op.fft;
    for (const psi of states) {
      fft.forward(psi, u0);
      this.etdNonlin(this.tA, mid, u0, nu);
      for (let j = 0; j < n; j++) {
        const er = E2[2 * j], ei = E2[2 * j + 1], qr = Q[2 * j], qi = Q[2 * j + 1];
        a[2 * j] = er * u0[2 * j] - ei * u0[2 * j + 1] + qr * nu[2 * j] - qi * nu[2 * j + 1];
        a[2 * j + 1] = er * u0[2 * j + 1] + ei * u0[2 * j] + qr * nu[2 * j + 1] + qi * nu[2 * j];
      }
      this.etdNonlin(this.tb1, mid, a, na);
      for (let j = 0; j < n; j++) {
        const er = E2[2 * j], ei = E2[2 * j + 1], qr = Q[2 * j], qi = Q[2 * j + 1];
        b[2 * j] = er * u0[2 * j] - ei * u0[2 * j + 1] + qr * na[2 * j] - qi * na[2 * j + 1];
        b[2 * j + 1] = er * u0[2 * j + 1] + ei * u0[2 * j] + qr * na[2 * j + 1] + qi * na[2 * j];
      }
      this.etdNonlin(this.tb1, mid, b, nb);
      for (let j = 0; j < n; j++) {
        const er = E2[2 * j], ei = E2[2 * j + 1], qr = Q[2 * j], qi = Q[2 * j + 1];
        const gr = 2 * nb[2 * j] - nu[2 * j];
        const gi = 2 * nb[2 * j + 1] - nu[2 * j + 1];
        c[2 * j] = er * a[2 * j] - ei * a[2 * j + 1] + qr * gr - qi * gi;
        c[2 * j + 1] = er * a[2 * j + 1] + ei * a[2 * j] + qr * gi + qi * gr;
      }
      this.etdNonlin(this.tB, mid, c, nc);
      for (let j = 0; j < n; j++) {
        const i = 2 * j;
        const sr = na[i] + nb[i];
        const si = na[i + 1] + nb[i + 1];
        const re = E[i] * u0[i] - E[i + 1] * u0[i + 1]
          + F1[i] * nu[i] - F1[i + 1] * nu[i + 1]
          + 2 * (F2[i] * sr - F2[i + 1] * si)
          + F3[i] * nc[i] - F3[i + 1] * nc[i + 1];
        const im = E[i] * u0[i + 1] + E[i + 1] * u0[i]
          + F1[i] * nu[i + 1] + F1[i + 1] * nu[i]
          + 2 * (F2[i] * si + F2[i + 1] * sr)
          + F3[i] * nc[i + 1] + F3[i + 1] * nc[i];
        a[i] = re;
        a[i + 1] = im;
      }
      fft.inverse(a, psi);
    }
  }

  /** pure step: returns new states ψ(s + h) (inputs untouched) */
  step(H: DrivenHamiltonian, scheme: Scheme, s: number, h: number, states: readonly Float64Array[], tolK: number): Float64Array[] {
    const out = states.map((p) => Float64Array.from(p));
    this.stepInPlace(H, scheme, s, h, out, tolK);
    return out;
  }

  private stepInPlace(H: DrivenHamiltonian, scheme: Scheme, s: number, h: number, states: Float64Array[], tolK: number): void {
    if (scheme === 'magnus4') this.stepMagnus(H, s, h, states, tolK);
    else if (scheme === 'split4') this.stepSplit(H, s, h, states, tolK);
    else {
      // ETDRK4 is not unitary: project back onto the sphere ‖ψ‖ = const after the step (standard projection
      // method, Hairer, Lubich & Wanner, Geometric Numerical Integration 2006, §IV.4; it keeps the order)
      for (let i = 0; i < states.length; i++) this.normBefore[i] = norm(states[i]);
      this.stepEtd(H, s, h, states);
      if (this.renormalize) {
        for (let i = 0; i < states.length; i++) {
          const f = this.normBefore[i] / norm(states[i]);
          const p = states[i];
          for (let j = 0; j < p.length; j++) p[j] *= f;
        }
      }
    }
  }

  /** see PropagateOptions.errorControl = 'global' */
  private propagateGlobal(H: DrivenHamiltonian, initial: readonly Float64Array[], s0: number, s1: number, opts: PropagateOptions,
    scheme: Scheme, tol: number, t0: number): PropagationResult {
    const delta = Math.sqrt(tol);
    let n = opts.initialSteps ?? GLOBAL_INITIAL_STEPS;
    if (!Number.isInteger(n) || n < 1) throw new UserError(`propagator: initialSteps ${n} must be a positive integer`);
    const levels: number[] = [];
    let prev: PropagationResult | null = null;
    let prevDiff = Infinity;
    let total = 0;
    let matvecs = 0;
    let order = 0; // observed order p (set once the doubling ladder converges; clamped to ≤ 4, the scheme's order)
    for (;;) {
      const cap: Array<{ s: number; states: Float64Array[] }> = [];
      const done = total;
      const res = this.propagate(H, initial, s0, s1, {
        ...opts, scheme, tol, fixedSteps: n, errorControl: 'local',
        onSample: opts.onSample ? (s, sts) => cap.push({ s, states: sts.map((x) => Float64Array.from(x)) }) : undefined,
        // expected total work ≈ 2× the current level
        onProgress: opts.onProgress ? (f) => opts.onProgress?.(Math.min(0.99, (done + f * n) / (done + 2 * n))) : undefined,
      });
      const ratio = levels.length ? n / levels[levels.length - 1] : 2;
      levels.push(n);
      total += n;
      matvecs += res.stats.matvecs;
      let accept = false;
      let estimate = Infinity;
      if (prev) {
        let d = 0;
        for (let i = 0; i < res.states.length; i++) d = Math.max(d, perpendicularDifference(prev.states[i], res.states[i]) / norm(initial[i]));
        if (d === 0) {
          estimate = 0;
          accept = true;
        } else if (ratio === 2 && levels.length >= 3 && levels[levels.length - 2] === 2 * levels[levels.length - 3]) {
          // two doublings in a row: ρ = d_{k−1}/d_k, error of the finest level ≈ d_k/(ρ − 1); update the order
          const rho = prevDiff / d;
          if (rho >= GLOBAL_MIN_RATIO) {
            estimate = d / (rho - 1);
            order = Math.min(GLOBAL_MAX_ORDER, Math.log2(rho));
          }
        } else if (order > 0) {
          // after a predicted level with ratio f: error ≈ d/(f^p − 1), p from the ladder
          estimate = d / (Math.pow(ratio, order) - 1);
        }
        accept = accept || estimate <= delta;
        prevDiff = d;
      }
      prev = res;
      if (accept || n >= GLOBAL_MAX_STEPS) {
        for (const c of cap) opts.onSample?.(c.s, c.states);
        opts.onProgress?.(1);
        const st = res.stats;
        st.errorEstimator = 'global step halving';
        st.levels = levels;
        st.matvecs = matvecs;
        st.estimatedAmplitudeError = estimate;
        st.wallMs = performance.now() - t0;
        return { states: res.states, stats: st };
      }
      // next level: doubling until the order is known, then the predicted count (with margin) for the budget
      const f = order > 0 && Number.isFinite(estimate) ? Math.min(2, Math.max(GLOBAL_MIN_GROWTH, GLOBAL_MARGIN * Math.pow(estimate / delta, 1 / order))) : 2;
      n = Math.ceil(n * f);
    }
  }

  /** propagate all states from s0 to s1 (see module comment for the error control) */
  propagate(H: DrivenHamiltonian, initial: readonly Float64Array[], s0: number, s1: number, opts: PropagateOptions = {}): PropagationResult {
    const t0 = performance.now();
    const scheme: Scheme = opts.scheme ?? 'etd4';
    if (!SCHEMES.includes(scheme)) throw new UserError(`propagator: scheme "${String(scheme)}" is not known; allowed: ${SCHEMES.join(', ')}`);
    const tol = opts.tol ?? 1e-8;
    if (!(tol > 0) || tol >= 1) throw new UserError(`propagator: tol ${tol} must be in (0, 1)`);
    const span = s1 - s0;
    if (!(span > 0)) throw new UserError(`propagator: end time ${s1} must exceed start time ${s0}`);
    for (const p of initial) if (p.length !== 2 * this.grid.n) throw new UserError(`propagator: state length ${p.length} must be 2N = ${2 * this.grid.n}`);
    if (opts.errorControl === 'global' && !opts.fixedSteps) return this.propagateGlobal(H, initial, s0, s1, opts, scheme, tol, t0);
    if (opts.errorControl !== undefined && opts.errorControl !== 'global' && opts.errorControl !== 'local') {
      throw new UserError(`propagator: errorControl "${String(opts.errorControl)}" is not known; allowed: local, global`);
    }
    const kStats0 = { ...this.krylov.stats };
    const apps0 = this.op.applications;
    const states = initial.map((p) => Float64Array.from(p));
    if (this.normBefore.length < states.length) this.normBefore = new Float64Array(states.length);
    const norms0 = states.map(norm);
    const a = states.map((p) => new Float64Array(p.length));
    const b = states.map((p) => new Float64Array(p.length));
    const delta = Math.sqrt(tol);
    const samples = [...(opts.sampleTimes ?? [])].filter((x) => x >= s0 && x <= s1).sort((x, y) => x - y);
    let nextSample = 0;
    const stats: PropagationStats = {
      scheme, errorEstimator: opts.fixedSteps ? 'none (fixed steps)' : 'step-doubling', steps: 0, rejected: 0, matvecs: 0,
      krylovCalls: 0, krylovSubsteps: 0, krylovMaxDimUsed: 0, minStep: Infinity, maxStep: 0, estimatedAmplitudeError: 0,
      maxNormDrift: 0, wallMs: 0,
    };
    const emitSamples = (s: number): void => {
      while (nextSample < samples.length && samples[nextSample] <= s + 1e-12 * span) {
        opts.onSample?.(samples[nextSample], states);
        nextSample++;
      }
    };
    emitSamples(s0);
    let s = s0;
    const maxStep = opts.maxStep ?? span;
    const minStep = opts.minStep ?? span * 1e-9;
    let h = opts.fixedSteps ? span / opts.fixedSteps : Math.min(opts.initialStep ?? span / 50, maxStep);
    while (s < s1 - 1e-14 * span) {
      let hTry = Math.min(h, s1 - s);
      if (nextSample < samples.length && samples[nextSample] > s) hTry = Math.min(hTry, samples[nextSample] - s);
      const tolK = Math.max(KRYLOV_TOL_FLOOR, (KRYLOV_SHARE * delta * hTry) / span);
      if (opts.fixedSteps) {
        this.stepInPlace(H, scheme, s, hTry, states, tolK);
      } else {
        for (let i = 0; i < states.length; i++) {
          a[i].set(states[i]);
          b[i].set(states[i]);
        }
        this.stepInPlace(H, scheme, s, hTry, a, tolK);
        this.stepInPlace(H, scheme, s, hTry / 2, b, tolK / 2);
        this.stepInPlace(H, scheme, s + hTry / 2, hTry / 2, b, tolK / 2);
        let err = 0;
        for (let i = 0; i < states.length; i++) err = Math.max(err, perpendicularDifference(a[i], b[i]) / norms0[i]);
        const allowed = (delta * hTry) / span;
        const factor = err === 0 ? GROW_MAX : Math.min(GROW_MAX, Math.max(SHRINK_MIN, SAFETY * Math.pow(allowed / err, 0.25)));
        if (err > allowed && hTry > minStep) {
          stats.rejected++;
          h = Math.max(minStep, hTry * factor);
          continue;
        }
        for (let i = 0; i < states.length; i++) states[i].set(b[i]);
        stats.estimatedAmplitudeError += err;
        // a step cut short by a sample time or the end must not shrink the next one
        h = hTry < h ? Math.max(h, Math.min(maxStep, hTry * factor)) : Math.min(maxStep, hTry * factor);
      }
      s += hTry;
      stats.steps++;
      stats.minStep = Math.min(stats.minStep, hTry);
      stats.maxStep = Math.max(stats.maxStep, hTry);
      for (let i = 0; i < states.length; i++) stats.maxNormDrift = Math.max(stats.maxNormDrift, Math.abs(norm(states[i]) - norms0[i]));
      emitSamples(s);
      opts.onProgress?.(Math.min(1, (s - s0) / span));
    }
    const ks = this.krylov.stats;
    stats.matvecs = this.op.applications - apps0;
    stats.krylovCalls = ks.calls - kStats0.calls;
    stats.krylovSubsteps = ks.substeps - kStats0.substeps;
    stats.krylovMaxDimUsed = ks.maxDimUsed;
    stats.wallMs = performance.now() - t0;
    return { states, stats };
  }
}

function norm(p: Float64Array): number {
  let s = 0;
  for (let j = 0; j < p.length; j++) s += p[j] * p[j];
  return Math.sqrt(s);
}

/** convenience: one-shot propagation with a fresh Propagator */
export function propagate(H: DrivenHamiltonian, initial: readonly Float64Array[], s0: number, s1: number, opts: PropagateOptions = {}): PropagationResult {
  return new Propagator(H.grid, opts.krylovMaxDim).propagate(H, initial, s0, s1, opts);
}

/** scratch for etdPhi: [Re φ₁, Im φ₁, Re φ₂, Im φ₂, Re φ₃, Im φ₃] */
const PHI = new Float64Array(6);
/** below this |θ| the φ-functions use their Taylor series (closed forms lose digits as |θ| → 0) */
const PHI_SERIES_BELOW = 1;
const PHI_SERIES_TERMS = 24;

/**
 * φ₁,₂,₃(iθ) with φ_j(z) = Σ_{n≥0} zⁿ/(n+j)! (Hochbruck & Ostermann, Acta Numerica 19, 209, 2010, eq. 2.10);
 * closed forms φ₁ = (e^z − 1)/z, φ₂ = (e^z − 1 − z)/z², φ₃ = (e^z − 1 − z − z²/2)/z³.
 */
export function etdPhi(theta: number, out: Float64Array): void {
  if (Math.abs(theta) < PHI_SERIES_BELOW) {
    for (let j = 1; j <= 3; j++) {
      // Σ (iθ)^n/(n+j)!: accumulate by Horner from the top
      let re = 0;
      let im = 0;
      for (let nn = PHI_SERIES_TERMS; nn >= 0; nn--) {
        // value = 1/(nn+j)! + (iθ) * value * (nn+j)!/(nn+j)!... use term ratio form instead
        const f = 1 / (nn + j + 1);
        // value_n = 1/(n+j)! + iθ·value_{n+1}·… : write φ_j = (1/j!)(1 + iθ/(j+1) (1 + iθ/(j+2)(1 + …)))
        const nr = 1 - theta * im * f;
        const ni = theta * re * f;
        re = nr;
        im = ni;
      }
      let fact = 1;
      for (let t = 2; t <= j; t++) fact *= t;
      out[2 * (j - 1)] = re / fact;
      out[2 * (j - 1) + 1] = im / fact;
    }
    return;
  }
  const c = Math.cos(theta);
  const sn = Math.sin(theta);
  // z = iθ: 1/z = −i/θ, 1/z² = −1/θ², 1/z³ = i/θ³
  const e1r = c - 1;
  const e1i = sn;
  out[0] = e1i / theta;
  out[1] = -e1r / theta;
  const e2r = e1r;
  const e2i = e1i - theta;
  out[2] = -e2r / (theta * theta);
  out[3] = -e2i / (theta * theta);
  const e3r = e2r + (theta * theta) / 2;
  const e3i = e2i;
  const t3 = theta * theta * theta;
  out[4] = -e3i / t3;
  out[5] = e3r / t3;
}

/**
 * ‖d − ⟨b̂|d⟩ b̂‖ with d = a − b, b̂ = b/‖b‖: the part of the difference orthogonal to the state. Only this part
 * changes the fidelity 1 − |⟨ψ_exact|ψ⟩|² ≈ ‖d_⊥‖² (a global phase error does not), so it is the error the
 * infidelity budget has to control.
 */
export function perpendicularDifference(a: Float64Array, b: Float64Array): number {
  let bb = 0;
  let pr = 0;
  let pi = 0;
  let dd = 0;
  for (let j = 0; j < a.length; j += 2) {
    const br = b[j], bi = b[j + 1];
    const dr = a[j] - br, di = a[j + 1] - bi;
    bb += br * br + bi * bi;
    pr += br * dr + bi * di;
    pi += br * di - bi * dr;
    dd += dr * dr + di * di;
  }
  const par = bb > 0 ? (pr * pr + pi * pi) / bb : 0;
  return Math.sqrt(Math.max(0, dd - par));
}
