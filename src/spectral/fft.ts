/**
 * Fast Fourier transforms on top of fft.js (radix-4, complex, interleaved re/im).
 *
 * RealFFT keeps the half spectrum X_k, k = 0 … N/2, of a real signal, using fft.js's real-input transform
 * in both directions (the inverse through the Hartley transform, see below).
 * Conventions: forward X_k = Σ_j x_j e^{-2πijk/N} (unnormalised); inverse carries the 1/N.
 * Every buffer is allocated once in the constructor: forward/inverse allocate nothing.
 */
import FFT from 'fft.js';

export class ComplexFFT {
  readonly n: number;
  private readonly fft: FFT;
  constructor(n: number) {
    this.n = n;
    this.fft = new FFT(n);
  }
  /** out = DFT(inp); both interleaved, length 2N, distinct buffers */
  forward(inp: Float64Array, out: Float64Array): void {
    this.fft.transform(out, inp);
  }
  /** out = IDFT(inp) including the 1/N */
  inverse(inp: Float64Array, out: Float64Array): void {
    this.fft.inverseTransform(out, inp);
  }
}

export class RealFFT {
  readonly n: number;
  private readonly fft: FFT;
  private readonly full: Float64Array;
  private readonly hartley: Float64Array;

  constructor(n: number) {
    if (n < 4 || (n & (n - 1)) !== 0) throw new RangeError(`RealFFT size must be a power of two ≥ 4, got ${n}`);
    this.n = n;
    this.fft = new FFT(n);
    this.full = new Float64Array(2 * n);
    this.hartley = new Float64Array(n);
  }

  /** spec (interleaved, length N+2: modes 0 … N/2) = DFT of the real signal x (length N) */
  forward(x: Float64Array, spec: Float64Array): void {
    const full = this.full;
    this.fft.realTransform(full, x);
    for (let i = 0; i < this.n + 2; i++) spec[i] = full[i];
  }

  /**
   * x (length N) = inverse DFT of the Hermitian half spectrum spec (length N+2); spec is not modified.
   * Uses the Hartley transform, which is its own inverse (Bracewell, The Hartley Transform, 1986):
   * H_k = Re X_k − Im X_k, and x_n = (1/N)(Re G_n − Im G_n) with G = DFT(H), H real, so that the fast
   * real-input transform serves both directions.
   */
  inverse(spec: Float64Array, x: Float64Array): void {
    const n = this.n;
    const h = n / 2;
    const H = this.hartley;
    for (let k = 0; k <= h; k++) H[k] = spec[2 * k] - spec[2 * k + 1];
    for (let k = h + 1; k < n; k++) H[k] = spec[2 * (n - k)] + spec[2 * (n - k) + 1];
    const G = this.full;
    this.fft.realTransform(G, H);
    const inv = 1 / n;
    for (let m = 0; m <= h; m++) x[m] = (G[2 * m] - G[2 * m + 1]) * inv;
    for (let m = h + 1; m < n; m++) x[m] = (G[2 * (n - m)] + G[2 * (n - m) + 1]) * inv;
  }
}
