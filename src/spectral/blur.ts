/**
 * Optical blur of a painted potential: convolution with the normalised Gaussian point-spread function of 1/e²
 * intensity radius w, p(x) = √(2/π)/w · exp(−2x²/w²) (the intensity profile of a focused Gaussian beam; Saleh &
 * Teich, Fundamentals of Photonics, 2nd ed. 2007, §3.1), applied on the periodic grid by its Fourier multiplier
 * p̂(k) = exp(−k²w²/8). A Gaussian exp(−2x²/a²) becomes (a/√(a² + w²))·exp(−2x²/(a² + w²)).
 */
import type { Grid } from './grid.ts';
import { FourierMultiplier } from './real-operators.ts';

export class GaussianBlur {
  readonly radius: number;
  private readonly multiplier: FourierMultiplier;
  /** radius: the PSF's 1/e² radius in the grid's length unit (> 0) */
  constructor(grid: Grid, radius: number) {
    if (!(radius > 0 && Number.isFinite(radius))) throw new RangeError(`blur: radius = ${radius} must be a finite number > 0`);
    this.radius = radius;
    this.multiplier = new FourierMultiplier(grid, (k) => Math.exp(-(k * k * radius * radius) / 8));
  }
  /** out = p * f (may be f itself) */
  apply(f: Float64Array, out: Float64Array): Float64Array {
    return this.multiplier.apply(f, out);
  }
}
