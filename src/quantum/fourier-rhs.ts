/**
 * The Fourier-space right-hand side shared by the Schrödinger schemes that treat a k-diagonal part exactly
 * (etd4.ts, etd-pair-scheme.ts): for the operator terms O = c₁k + c₂k² + c₃k³ + v + b{w, k} (hamiltonian.ts) and a reference
 * diagonal D_ref = r₁k + r₂k² + r₃k³ handled by the scheme,
 *
 *     out = −i[(D_O − D_ref) ŷ + (v y + b{w, k} y)^],      y = F⁻¹ŷ,
 *
 * with odd powers of k on grid.kOdd (physics.md §5). With a mean field γ (`meanField`, scheme.ts) v becomes
 * v + γ|y|², the Gross–Pitaevskii term evaluated on the stage state (physics.md §10). Four FFTs when w ∝ v (the
 * KdV drive) and γ = 0, five otherwise. The buffers are allocated once (`FourierRhs`); `apply` allocates nothing.
 */
import type { ComplexFFT } from '../spectral/fft.ts';
import type { Grid } from '../spectral/grid.ts';
import type { OperatorTerms, SpectralOperator } from './hamiltonian.ts';
import type { TermsBuffer } from './terms-buffer.ts';

/** the reference diagonal D_ref = r1·k + r2·k² + r3·k³ a scheme integrates exactly */
export interface DiagonalReference {
  r1: number;
  r2: number;
  r3: number;
}

export class FourierRhs {
  readonly grid: Grid;
  readonly op: SpectralOperator;
  readonly fft: ComplexFFT;
  readonly k2: Float64Array;
  readonly k3: Float64Array;
  /** scratch: y in x space, (ky) in x space, two product buffers, F(w·y) */
  private readonly x: Float64Array;
  private readonly kx: Float64Array;
  private readonly p: Float64Array;
  private readonly r: Float64Array;
  private readonly qHat: Float64Array;
  /** γ of the mean-field term γ|y|²y; a scheme sets it from its Hamiltonian before the stages */
  meanField = 0;

  constructor(grid: Grid, op: SpectralOperator) {
    const n = grid.n;
    this.grid = grid;
    this.op = op;
    this.fft = op.fft;
    this.k2 = Float64Array.from(grid.k, (k) => k * k);
    this.k3 = Float64Array.from(grid.kOdd, (k) => k * k * k);
    const z = () => new Float64Array(2 * n);
    this.x = z(); this.kx = z(); this.p = z(); this.r = z(); this.qHat = z();
  }

  /** out = −i[(D_t − D_ref) ŷ + (B_t y)^] for the loaded terms t (module comment) */
  apply(t: TermsBuffer, ref: DiagonalReference, yHat: Float64Array, out: Float64Array): void {
    const tt = t.t;
    const v = tt.v;
    const w = tt.w;
    const prop = t.wOverV !== null && v !== null && this.meanField === 0 ? t.wOverV : null;
    if (v !== null && w !== null && prop !== null) this.applyProportional(v, w, tt.b, prop, tt, ref, yHat, out);
    else this.applyGeneral(tt, prop, ref, yHat, out);
    this.op.applications++;
  }

  /** x = F⁻¹ŷ and, when `derivative`, kx = F⁻¹(kŷ) (p is scratch) */
  private toPosition(yHat: Float64Array, derivative: boolean): void {
    const { fft, x, kx, p } = this;
    const kOdd = this.grid.kOdd;
    fft.inverse(yHat, x);
    if (!derivative) return;
    for (let j = 0; j < this.grid.n; j++) {
      const kk = kOdd[j];
      p[2 * j] = kk * yHat[2 * j];
      p[2 * j + 1] = kk * yHat[2 * j + 1];
    }
    fft.inverse(p, kx);
  }

  private applyGeneral(tt: OperatorTerms, prop: number | null, ref: DiagonalReference, yHat: Float64Array, out: Float64Array): void {
    const n = this.grid.n;
    const { fft, x, kx, p, r, qHat, k2, k3 } = this;
    const kOdd = this.grid.kOdd;
    const v = tt.v;
    const w = tt.w;
    const bw = tt.b;
    const gamma = this.meanField;
    const hasV = v !== null || gamma !== 0;
    this.toPosition(yHat, w !== null);
    // x-space products: p = (v + γ|y|²)·y, r = w·(k y), and (only if w is not ∝ v) q = w·y into kx after use
    for (let j = 0; j < n; j++) {
      const yr = x[2 * j];
      const yi = x[2 * j + 1];
      if (hasV) {
        const vj = (v ? v[j] : 0) + gamma * (yr * yr + yi * yi);
        p[2 * j] = vj * yr;
        p[2 * j + 1] = vj * yi;
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
    // transforms: P̂ → x, R̂ → p, Q̂ → qHat
    if (hasV) fft.forward(p, x);
    if (w) {
      fft.forward(r, p);
      if (prop === null) fft.forward(kx, qHat);
    }
    const dc1 = tt.c1 - ref.r1;
    const dc2 = tt.c2 - ref.r2;
    const dc3 = tt.c3 - ref.r3;
    for (let j = 0; j < n; j++) {
      const kk = kOdd[j];
      const m = dc1 * kk + dc2 * k2[j] + dc3 * k3[j];
      let re = m * yHat[2 * j];
      let im = m * yHat[2 * j + 1];
      if (hasV) {
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
  }

  /** w = prop·v (the KdV drive): branch-free loops, four FFTs */
  private applyProportional(v: Float64Array, w: Float64Array, bw: number, prop: number, tt: OperatorTerms, ref: DiagonalReference, yHat: Float64Array, out: Float64Array): void {
    const n = this.grid.n;
    const { fft, x, kx, p, r, k2, k3 } = this;
    const kOdd = this.grid.kOdd;
    this.toPosition(yHat, true);
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
    const dc1 = tt.c1 - ref.r1;
    const dc2 = tt.c2 - ref.r2;
    const dc3 = tt.c3 - ref.r3;
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
  }
}
