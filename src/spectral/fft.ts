/**
 * Fast Fourier transforms on top of fft.js (radix-4, complex, interleaved re/im).
 *
 * RealFFT packs a real signal of length N into a complex one of length N/2 and unpacks the half spectrum
 * X_k, k = 0 … N/2 (Press, Teukolsky, Vetterling & Flannery, Numerical Recipes, 3rd ed. 2007, §12.3.2).
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
  private readonly half: number;
  private readonly fft: FFT;
  private readonly z: Float64Array;
  private readonly zHat: Float64Array;
  /** twiddles W^k = e^{-2πik/N}, k = 0 … N/2 */
  private readonly wr: Float64Array;
  private readonly wi: Float64Array;

  constructor(n: number) {
    if (n < 4 || (n & (n - 1)) !== 0) throw new RangeError(`RealFFT size must be a power of two ≥ 4, got ${n}`);
    this.n = n;
    this.half = n / 2;
    this.fft = new FFT(this.half);
    this.z = new Float64Array(n);
    this.zHat = new Float64Array(n);
    this.wr = new Float64Array(this.half + 1);
    this.wi = new Float64Array(this.half + 1);
    for (let k = 0; k <= this.half; k++) {
      this.wr[k] = Math.cos((2 * Math.PI * k) / n);
      this.wi[k] = -Math.sin((2 * Math.PI * k) / n);
    }
  }

  /** spec (interleaved, length N+2: modes 0 … N/2) = DFT of the real signal x (length N) */
  forward(x: Float64Array, spec: Float64Array): void {
    const h = this.half;
    const z = this.z;
    for (let m = 0; m < h; m++) {
      z[2 * m] = x[2 * m];
      z[2 * m + 1] = x[2 * m + 1];
    }
    const Z = this.zHat;
    this.fft.transform(Z, z);
    const wr = this.wr;
    const wi = this.wi;
    for (let k = 0; k <= h; k++) {
      const a = k === h ? 0 : k;
      const b = k === 0 || k === h ? 0 : h - k;
      const zr = Z[2 * a];
      const zi = Z[2 * a + 1];
      const cr = Z[2 * b];
      const ci = -Z[2 * b + 1];
      // E = (Z_k + conj Z_{-k})/2, O = (Z_k - conj Z_{-k})/(2i)
      const er = 0.5 * (zr + cr);
      const ei = 0.5 * (zi + ci);
      const or = 0.5 * (zi - ci);
      const oi = -0.5 * (zr - cr);
      spec[2 * k] = er + wr[k] * or - wi[k] * oi;
      spec[2 * k + 1] = ei + wr[k] * oi + wi[k] * or;
    }
  }

  /** x (length N) = inverse DFT of the Hermitian half spectrum spec (length N+2); spec is not modified */
  inverse(spec: Float64Array, x: Float64Array): void {
    const h = this.half;
    const Z = this.zHat;
    const wr = this.wr;
    const wi = this.wi;
    for (let k = 0; k < h; k++) {
      const xr = spec[2 * k];
      const xi = spec[2 * k + 1];
      const yr = spec[2 * (h - k)];
      const yi = -spec[2 * (h - k) + 1];
      // E = (X_k + conj X_{h-k})/2, O = (X_k - conj X_{h-k}) W^{-k} / 2
      const er = 0.5 * (xr + yr);
      const ei = 0.5 * (xi + yi);
      const dr = 0.5 * (xr - yr);
      const di = 0.5 * (xi - yi);
      const or = dr * wr[k] + di * wi[k];
      const oi = di * wr[k] - dr * wi[k];
      // Z = E + iO
      Z[2 * k] = er - oi;
      Z[2 * k + 1] = ei + or;
    }
    const z = this.z;
    this.fft.inverseTransform(z, Z);
    for (let m = 0; m < h; m++) {
      x[2 * m] = z[2 * m];
      x[2 * m + 1] = z[2 * m + 1];
    }
  }
}
