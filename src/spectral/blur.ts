/**
 * Optical blur of a painted potential: convolution with the normalised Gaussian point-spread function of 1/e²
 * intensity radius w, p(x) = √(2/π)/w · exp(−2x²/w²) (the intensity profile of a focused Gaussian beam; Saleh &
 * Teich, Fundamentals of Photonics, 2nd ed. 2007, §3.1), applied on the periodic grid by its Fourier multiplier
 * p̂(k) = exp(−k²w²/8). A Gaussian exp(−2x²/a²) becomes (a/√(a² + w²))·exp(−2x²/(a² + w²)).
 */
import { RealFFT } from './fft.ts';
import type { Grid } from './grid.ts';

export class GaussianBlur {
  readonly radius: number;
  private readonly fft: RealFFT;
  private readonly spec: Float64Array;
  private readonly mult: Float64Array;
  /** radius: the PSF's 1/e² radius in the grid's length unit (> 0) */
  constructor(grid: Grid, radius: number) {
    if (!(radius > 0 && Number.isFinite(radius))) throw new RangeError(`blur: radius = ${radius} must be a finite number > 0`);
    this.radius = radius;
    this.fft = new RealFFT(grid.n);
    this.spec = new Float64Array(grid.n + 2);
    this.mult = Float64Array.from(grid.kHalf, (k) => Math.exp(-(k * k * radius * radius) / 8));
  }
  /** out = p * f (may be f itself) */
  apply(f: Float64Array, out: Float64Array): Float64Array {
    const s = this.spec;
    this.fft.forward(f, s);
    for (let m = 0; m < this.mult.length; m++) {
      s[2 * m] *= this.mult[m];
      s[2 * m + 1] *= this.mult[m];
    }
    this.fft.inverse(s, out);
    return out;
  }
}
