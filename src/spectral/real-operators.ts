/**
 * Buffered real spectral operators on a periodic grid (physics.md §5): the Fourier derivative D (Nyquist mode
 * zeroed for odd orders), D³, k² and H = k² + u, and the real antisymmetric form of ½{φ, k}. Allocation-free
 * counterparts of the convenience operators in ops.ts, for inner loops.
 */
import { RealFFT } from './fft.ts';
import type { Grid } from './grid.ts';

/**
 * Real operators on the grid: D (Fourier derivative, Nyquist zeroed), D³, H = k² + u (Nyquist kept, as
 * quantum/eigen.ts). Buffers are allocated once; methods allocate nothing.
 */
export class RealGridOperators {
  readonly grid: Grid;
  readonly fft: RealFFT;
  private readonly spec: Float64Array;
  private readonly tmp: Float64Array;
  constructor(grid: Grid) {
    this.grid = grid;
    this.fft = new RealFFT(grid.n);
    this.spec = new Float64Array(grid.n + 2);
    this.tmp = new Float64Array(grid.n);
  }
  /** out = D^order f for order 1 or 3 (symbol (ik)^order, Nyquist zeroed), or out = k² f for order 2 */
  private spectral(f: Float64Array, out: Float64Array, order: 1 | 2 | 3): void {
    const n = this.grid.n;
    const s = this.spec, kh = this.grid.kHalf;
    this.fft.forward(f, s);
    for (let m = 0; m <= n / 2; m++) {
      const re = s[2 * m], im = s[2 * m + 1];
      if (order === 2) {
        const k2 = kh[m] * kh[m];
        s[2 * m] = k2 * re;
        s[2 * m + 1] = k2 * im;
        continue;
      }
      const k = m === n / 2 ? 0 : kh[m];
      // (ik)(re + i im) = −k im + i k re;  (ik)³ = −ik³: k³ im − i k³ re
      const c = order === 1 ? k : -k * k * k;
      s[2 * m] = -c * im;
      s[2 * m + 1] = c * re;
    }
    this.fft.inverse(s, out);
  }
  d1(f: Float64Array, out: Float64Array): void {
    this.spectral(f, out, 1);
  }
  d3(f: Float64Array, out: Float64Array): void {
    this.spectral(f, out, 3);
  }
  /** out = (H − e) f, H = k² + u */
  shiftedH(u: Float64Array, e: number, f: Float64Array, out: Float64Array): void {
    this.spectral(f, out, 2);
    for (let j = 0; j < f.length; j++) out[j] += (u[j] - e) * f[j];
  }
  /** out = B_φ f = −½(φ Df + D(φ f)) (the real antisymmetric form of ½{φ, k} = iB_φ) */
  anticommutator(phi: Float64Array, f: Float64Array, out: Float64Array): void {
    const t = this.tmp;
    for (let j = 0; j < f.length; j++) t[j] = phi[j] * f[j];
    this.d1(t, out);
    this.d1(f, t);
    for (let j = 0; j < f.length; j++) out[j] = -0.5 * (out[j] + phi[j] * t[j]);
  }
}

/**
 * y = F⁻¹[m(k) F[x]] for a real, even symbol m (diagonal in Fourier space: k², (k² + σ)⁻¹, a blur kernel's
 * transform); the one home of a real spectral multiplier. Buffers allocated once; `apply` allocates nothing and
 * may write into x itself.
 */
export class FourierMultiplier {
  private readonly fft: RealFFT;
  private readonly spec: Float64Array;
  private readonly symbol: Float64Array;
  constructor(grid: Grid, symbol: (k: number) => number) {
    this.fft = new RealFFT(grid.n);
    this.spec = new Float64Array(grid.n + 2);
    this.symbol = Float64Array.from(grid.kHalf, symbol);
  }
  apply(x: Float64Array, y: Float64Array): Float64Array {
    const s = this.spec, m = this.symbol;
    this.fft.forward(x, s);
    for (let i = 0; i < m.length; i++) {
      s[2 * i] *= m[i];
      s[2 * i + 1] *= m[i];
    }
    this.fft.inverse(s, y);
    return y;
  }
}
