/**
 * The designed continuum sequence u(ξ, λ) sampled on lattice sites ξ_j (natural units).
 *
 * The flow integrator's dense output is a piecewise cubic Hermite interpolant in λ through stored nodes
 * (λ_i, u_i, ∂_λu_i) on the periodic Fourier grid (flow/kdv.ts). Sampling is linear, so sampling the node values
 * and their λ-derivatives at the sites once, by exact trigonometric interpolation of the band-limited grid data
 * (u(ξ) = (1/N) Σ_m X_m e^{ik_m(ξ − ξ₀)}, Trefethen, Spectral Methods in MATLAB, 2000, ch. 3), and then applying
 * the same Hermite formula on the sites gives exactly the site values of the dense output, at O(M) cost per
 * query instead of O(N·M). The Nyquist mode enters as its cosine (the real interpolant).
 */
import { RealFFT } from '../spectral/fft.ts';
import type { Grid } from '../spectral/grid.ts';
import { intervalIndex } from '../spectral/ops.ts';

/** what the lattice needs from a designed sequence (DenseFlow of flow/kdv.ts satisfies it) */
export interface DenseSequence {
  readonly lambdas: readonly number[];
  at(lambda: number, out: Float64Array): Float64Array;
  rateAt(lambda: number, out: Float64Array): Float64Array;
}

/** Trigonometric interpolation of grid data (length N) at arbitrary points; buffers preallocated. */
export class TrigSampler {
  readonly grid: Grid;
  readonly points: Float64Array;
  private readonly fft: RealFFT;
  private readonly spec: Float64Array;
  private readonly rot: Float64Array;

  constructor(grid: Grid, points: Float64Array) {
    this.grid = grid;
    this.points = points;
    this.fft = new RealFFT(grid.n);
    this.spec = new Float64Array(grid.n + 2);
    this.rot = new Float64Array(2 * points.length);
    const k1 = (2 * Math.PI) / grid.length;
    const x0 = grid.x[0];
    for (let j = 0; j < points.length; j++) {
      this.rot[2 * j] = Math.cos(k1 * (points[j] - x0));
      this.rot[2 * j + 1] = Math.sin(k1 * (points[j] - x0));
    }
  }

  /** out_j = interpolant of `values` at points_j */
  sample(values: Float64Array, out: Float64Array): Float64Array {
    const n = this.grid.n;
    const half = n / 2;
    const spec = this.spec;
    this.fft.forward(values, spec);
    for (let j = 0; j < this.points.length; j++) {
      const cr = this.rot[2 * j], ci = this.rot[2 * j + 1];
      let wr = cr, wi = ci;
      let sum = 0;
      for (let m = 1; m < half; m++) {
        sum += spec[2 * m] * wr - spec[2 * m + 1] * wi;
        const t = wr * cr - wi * ci;
        wi = wr * ci + wi * cr;
        wr = t;
      }
      // wr = cos(k_{N/2}(ξ − ξ₀)) after the loop
      out[j] = (spec[0] + 2 * sum + spec[2 * half] * wr) / n;
    }
    return out;
  }
}

/** u and ∂_λu of a designed sequence on lattice sites, with the flow's Hermite interpolation in λ. */
export class LatticeSequence {
  readonly sites: Float64Array;
  readonly lambdas: Float64Array;
  private readonly values: Float64Array[];
  private readonly rates: Float64Array[];

  constructor(sites: Float64Array, lambdas: Float64Array, values: Float64Array[], rates: Float64Array[]) {
    this.sites = sites;
    this.lambdas = lambdas;
    this.values = values;
    this.rates = rates;
  }

  /** sample a designed sequence (dense output on the Fourier grid) at the sites, node by node */
  static fromDense(grid: Grid, dense: DenseSequence, sites: Float64Array): LatticeSequence {
    const sampler = new TrigSampler(grid, sites);
    const buf = new Float64Array(grid.n);
    const values: Float64Array[] = [];
    const rates: Float64Array[] = [];
    for (const l of dense.lambdas) {
      values.push(sampler.sample(dense.at(l, buf), new Float64Array(sites.length)));
      rates.push(sampler.sample(dense.rateAt(l, buf), new Float64Array(sites.length)));
    }
    return new LatticeSequence(sites, Float64Array.from(dense.lambdas), values, rates);
  }

  /** nodes from a closed form u(ξ, λ) and ∂_λu(ξ, λ) (exact solutions in tests) */
  static fromFunction(sites: Float64Array, lambdas: ArrayLike<number>, u: (xi: number, l: number) => number, rate: (xi: number, l: number) => number): LatticeSequence {
    const ls = Float64Array.from(lambdas);
    const values = Array.from(ls, (l) => sites.map((x) => u(x, l)));
    const rates = Array.from(ls, (l) => sites.map((x) => rate(x, l)));
    return new LatticeSequence(sites, ls, values, rates);
  }

  get end(): number {
    return this.lambdas[this.lambdas.length - 1];
  }

  private locate(lambda: number): number {
    return intervalIndex(this.lambdas, lambda);
  }

  /** u(ξ_j, λ) into out (λ clamped to the computed range) */
  at(lambda: number, out: Float64Array): Float64Array {
    const ls = this.lambdas;
    if (ls.length === 1) {
      out.set(this.values[0]);
      return out;
    }
    const l = Math.min(Math.max(lambda, ls[0]), ls[ls.length - 1]);
    const i = this.locate(l);
    const h = ls[i + 1] - ls[i];
    const t = (l - ls[i]) / h;
    const t2 = t * t, t3 = t2 * t;
    const a0 = 2 * t3 - 3 * t2 + 1, b0 = (t3 - 2 * t2 + t) * h, a1 = -2 * t3 + 3 * t2, b1 = (t3 - t2) * h;
    const u0 = this.values[i], d0 = this.rates[i], u1 = this.values[i + 1], d1 = this.rates[i + 1];
    for (let j = 0; j < out.length; j++) out[j] = a0 * u0[j] + b0 * d0[j] + a1 * u1[j] + b1 * d1[j];
    return out;
  }
}

/** Sites of an open chain of spacing h centred in the box [−L/2, L/2): M = ⌊L/h⌋, ξ_j = (j − (M − 1)/2) h. */
export function chainSites(length: number, h: number): Float64Array {
  const M = Math.floor(length / h + 1e-9);
  const out = new Float64Array(M);
  for (let j = 0; j < M; j++) out[j] = (j - (M - 1) / 2) * h;
  return out;
}
