/**
 * Matrix-free Fourier pseudo-spectral operators on a periodic grid (natural units of physics.md §3):
 *
 *   H ψ     = k²ψ + uψ,                                   k = −i∂_ξ
 *   H_CD ψ  = [k² + u − τ′(4k³ + 3{u,k})] ψ,              {u,k}ψ = u·(kψ) + k(uψ)
 *   A_τ ψ   = −(4k³ + 3{u,k}) ψ                           (iħ times the Lax operator B, physics.md §3)
 *   ½{g,k}  for an arbitrary real g(ξ)                    (first-order CD terms, Muga et al., J. Phys. B 43, 085509, 2010)
 *
 * Everything is built from one general operator
 *
 *   O ψ = (c₁k + c₂k² + c₃k³) ψ + v ψ + b {w, k} ψ
 *
 * Odd powers of k use grid.kOdd (Nyquist mode zeroed, physics.md §5 and Trefethen, Spectral Methods in MATLAB,
 * 2000, ch. 3) so that every discrete operator is Hermitian for real v, w and real coefficients.
 * Vectors are interleaved complex Float64Array(2N) on the grid points; inner products are plain Σ conj(a)b.
 * All buffers are allocated in the constructor: `apply` allocates nothing.
 */
import { ComplexFFT } from '../spectral/fft.ts';
import type { Grid } from '../spectral/grid.ts';
import { dotRe } from '../linalg/complex.ts';

/** coefficients and functions of O = c₁k + c₂k² + c₃k³ + v + b{w,k}; null arrays mean "absent" */
export interface OperatorTerms {
  c1: number;
  c2: number;
  c3: number;
  v: Float64Array | null;
  w: Float64Array | null;
  b: number;
}

export function emptyTerms(): OperatorTerms {
  return { c1: 0, c2: 0, c3: 0, v: null, w: null, b: 0 };
}

/** H = k² + u */
export function bareTerms(u: Float64Array, out: OperatorTerms = emptyTerms()): OperatorTerms {
  out.c1 = 0; out.c2 = 1; out.c3 = 0; out.v = u; out.w = null; out.b = 0;
  return out;
}

/**
 * H(s) = k² + u + σ τ′ (−4k³ − 3{u,k} + c k): σ = 1 CD drive, σ = 0 bare, σ = −1 sign-flipped (physics.md §3).
 * c is the co-moving drift of the flow u_τ = 6uu_ξ − u_ξξξ − c u_ξ (flow/kdv.ts): −c u_ξ = [−c∂_ξ, −∂² + u] adds
 * −c∂_ξ = −ic k to the Lax operator B = i(4k³ + 3{u,k}), so A_τ gains +c k (the classical +c p of classical/cd.ts).
 */
export function cdTerms(u: Float64Array, tauPrime: number, sigma: number, out: OperatorTerms = emptyTerms(), drift = 0): OperatorTerms {
  const c = sigma * tauPrime;
  out.c1 = c * drift; out.c2 = 1; out.c3 = -4 * c; out.v = u; out.w = c === 0 ? null : u; out.b = -3 * c;
  return out;
}

/** A_τ = −(4k³ + 3{u,k}) + c k (physics.md §3; drift c as in cdTerms); `part` selects the p³ part (−4k³) or the
 *  potential part (−3{u,k}); the drift term belongs to the full operator only */
export function laxTerms(u: Float64Array, part: 'full' | 'cubic' | 'potential' = 'full', out: OperatorTerms = emptyTerms(), drift = 0): OperatorTerms {
  out.c1 = part === 'full' ? drift : 0; out.c2 = 0; out.v = null;
  out.c3 = part === 'potential' ? 0 : -4;
  out.w = part === 'cubic' ? null : u;
  out.b = part === 'cubic' ? 0 : -3;
  return out;
}

/**
 * Upper bound of the spectral norm of O on this grid: |c₁|k_max + |c₂|k_max² + |c₃|k_max³ + max|v| + 2|b| max|w| k_max
 * (triangle inequality, ‖{w,k}‖ ≤ 2‖w‖_∞‖k‖).
 */
export function normBound(grid: Grid, t: OperatorTerms): number {
  const km = grid.kMax;
  let vmax = 0;
  let wmax = 0;
  if (t.v) for (let j = 0; j < t.v.length; j++) vmax = Math.max(vmax, Math.abs(t.v[j]));
  if (t.w) for (let j = 0; j < t.w.length; j++) wmax = Math.max(wmax, Math.abs(t.w[j]));
  return Math.abs(t.c1) * km + Math.abs(t.c2) * km * km + Math.abs(t.c3) * km * km * km + vmax + 2 * Math.abs(t.b) * wmax * km;
}

export class SpectralOperator {
  readonly grid: Grid;
  readonly n: number;
  readonly fft: ComplexFFT;
  /** number of operator applications since construction (for statistics) */
  applications = 0;
  private readonly f1: Float64Array;
  private readonly f2: Float64Array;
  private readonly x1: Float64Array;
  private readonly x2: Float64Array;
  private readonly k2: Float64Array;
  private readonly k3: Float64Array;

  constructor(grid: Grid) {
    this.grid = grid;
    this.n = grid.n;
    this.fft = new ComplexFFT(grid.n);
    const n2 = 2 * grid.n;
    this.f1 = new Float64Array(n2);
    this.f2 = new Float64Array(n2);
    this.x1 = new Float64Array(n2);
    this.x2 = new Float64Array(n2);
    this.k2 = new Float64Array(grid.n);
    this.k3 = new Float64Array(grid.n);
    for (let j = 0; j < grid.n; j++) {
      this.k2[j] = grid.k[j] * grid.k[j];
      this.k3[j] = grid.kOdd[j] * grid.kOdd[j] * grid.kOdd[j];
    }
  }

  /** out = O ψ (out must differ from psi) */
  apply(t: OperatorTerms, psi: Float64Array, out: Float64Array): void {
    this.applications++;
    const n = this.n;
    const { f1, f2, x1, x2, k2, k3 } = this;
    const kOdd = this.grid.kOdd;
    const fft = this.fft;
    fft.forward(psi, f1);
    const hasW = t.w !== null && t.b !== 0;
    if (hasW) {
      const w = t.w as Float64Array;
      for (let j = 0; j < n; j++) {
        x1[2 * j] = w[j] * psi[2 * j];
        x1[2 * j + 1] = w[j] * psi[2 * j + 1];
      }
      fft.forward(x1, f2); // f2 = F(wψ)
    }
    const { c1, c2, c3, b } = t;
    // spectral part: (c₁k + c₂k² + c₃k³)F(ψ) + b k F(wψ)
    for (let j = 0; j < n; j++) {
      const kk = kOdd[j];
      const m = c1 * kk + c2 * k2[j] + c3 * k3[j];
      let re = m * f1[2 * j];
      let im = m * f1[2 * j + 1];
      if (hasW) {
        re += b * kk * f2[2 * j];
        im += b * kk * f2[2 * j + 1];
      }
      x2[2 * j] = re;
      x2[2 * j + 1] = im;
    }
    fft.inverse(x2, out);
    if (hasW) {
      const w = t.w as Float64Array;
      // k ψ in x space, then + b w (kψ)
      for (let j = 0; j < n; j++) {
        const kk = kOdd[j];
        f2[2 * j] = kk * f1[2 * j];
        f2[2 * j + 1] = kk * f1[2 * j + 1];
      }
      fft.inverse(f2, x1);
      for (let j = 0; j < n; j++) {
        out[2 * j] += b * w[j] * x1[2 * j];
        out[2 * j + 1] += b * w[j] * x1[2 * j + 1];
      }
    }
    if (t.v) {
      const v = t.v;
      for (let j = 0; j < n; j++) {
        out[2 * j] += v[j] * psi[2 * j];
        out[2 * j + 1] += v[j] * psi[2 * j + 1];
      }
    }
  }

  /** ⟨ψ|O|ψ⟩ (real for Hermitian O) */
  expectation(t: OperatorTerms, psi: Float64Array, scratch: Float64Array): number {
    this.apply(t, psi, scratch);
    return dotRe(psi, scratch);
  }
}

/** the real-to-complex copy lives in linalg/complex.ts; re-exported for callers of this module */
