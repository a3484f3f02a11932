/** Dense output of the flow integrator (kdv.ts): every accepted step, queried at any λ. */
import { RealFFT } from '../spectral/fft.ts';
import { intervalIndex } from '../spectral/ops.ts';
import { translateHalfSpectrum } from '../spectral/translate.ts';

/**
 * Piecewise cubic Hermite interpolant in λ through the stored (λ_i, û_i, ∂_λû_i), kept as half spectra on the
 * retained band (a fifth of the memory of physical arrays, and no transform per step); a query combines the
 * four neighbouring spectra and transforms once.
 *
 * The spectra are those of the integrator's frame, moving at `frameSpeed` c (kdv.ts FlowOptions.frameSpeed): the
 * field w(ξ, λ) = u(ξ + cλ, λ) varies slowly there, so the interpolation in λ is made in that frame and a query is
 * carried to the lab by the shift theorem, û = e^{−ikcλ} ŵ and ∂_λû = e^{−ikcλ}(∂_λŵ − ikc ŵ).
 */
export class DenseFlow {
  readonly lambdas: number[] = [];
  private readonly values: Float64Array[] = [];
  private readonly rates: Float64Array[] = [];
  readonly points: number;
  readonly frameSpeed: number;
  private readonly fft: RealFFT;
  private readonly spec: Float64Array;
  private readonly valueSpec: Float64Array;
  private readonly length: number;
  /** length: the period L of the grid (needed for the frame's shift); frameSpeed: c (0: the lab frame) */
  constructor(points: number, fft: RealFFT, length: number, frameSpeed = 0) {
    this.points = points;
    this.fft = fft;
    this.length = length;
    this.frameSpeed = frameSpeed;
    this.spec = new Float64Array(points + 2);
    this.valueSpec = new Float64Array(points + 2);
  }
  /** bytes one stored point takes: value and rate, `active` complex modes each */
  static bytesPerPoint(active: number): number {
    return 2 * 2 * active * Float64Array.BYTES_PER_ELEMENT;
  }
  /** store copies of the first `active` modes of a half spectrum and its λ-derivative */
  push(lambda: number, v: Float64Array, vt: Float64Array, active: number): void {
    this.lambdas.push(lambda);
    this.values.push(v.slice(0, 2 * active));
    this.rates.push(vt.slice(0, 2 * active));
  }
  get start(): number {
    return this.lambdas[0];
  }
  get end(): number {
    return this.lambdas[this.lambdas.length - 1];
  }
  private locate(lambda: number): number {
    const ls = this.lambdas;
    if (!(lambda >= ls[0] - 1e-12 && lambda <= ls[ls.length - 1] + 1e-12)) {
      throw new RangeError(`λ = ${lambda} is outside the computed sequence [${ls[0]}, ${ls[ls.length - 1]}]`);
    }
    return intervalIndex(ls, lambda);
  }
  private combine(lambda: number, out: Float64Array, derivative: boolean, lab = true): Float64Array {
    const spec = this.spec;
    const c = lab ? this.frameSpeed : 0;
    this.interpolate(lambda, spec, derivative);
    const modes = this.values[0].length / 2;
    if (c !== 0) {
      if (derivative) {
        // ∂_λŵ − ikc ŵ, k_m = 2πm/L
        const w = this.valueSpec;
        this.interpolate(lambda, w, false);
        const dk = (2 * Math.PI) / this.length;
        for (let m = 0; m < modes; m++) {
          const kc = m * dk * c;
          spec[2 * m] += kc * w[2 * m + 1];
          spec[2 * m + 1] -= kc * w[2 * m];
        }
      }
      translateHalfSpectrum(spec, modes, c * lambda, this.length);
    }
    this.fft.inverse(spec, out);
    return out;
  }
  /** the stored spectra (or their λ-derivatives) interpolated at λ, in the integrator's frame */
  private interpolate(lambda: number, spec: Float64Array, derivative: boolean): void {
    spec.fill(0);
    if (this.lambdas.length === 1) {
      spec.set(derivative ? this.rates[0] : this.values[0]);
    } else {
      const i = this.locate(lambda);
      const h = this.lambdas[i + 1] - this.lambdas[i];
      const t = (lambda - this.lambdas[i]) / h;
      const t2 = t * t;
      const t3 = t2 * t;
      let a0, b0, a1, b1;
      if (derivative) {
        a0 = (6 * t2 - 6 * t) / h;
        b0 = 3 * t2 - 4 * t + 1;
        a1 = (-6 * t2 + 6 * t) / h;
        b1 = 3 * t2 - 2 * t;
      } else {
        a0 = 2 * t3 - 3 * t2 + 1;
        b0 = (t3 - 2 * t2 + t) * h;
        a1 = -2 * t3 + 3 * t2;
        b1 = (t3 - t2) * h;
      }
      const u0 = this.values[i], d0 = this.rates[i], u1 = this.values[i + 1], d1 = this.rates[i + 1];
      for (let j = 0; j < u0.length; j++) spec[j] = a0 * u0[j] + b0 * d0[j] + a1 * u1[j] + b1 * d1[j];
    }
  }
  /** u(·, λ) into out (length N) */
  at(lambda: number, out: Float64Array): Float64Array {
    return this.combine(lambda, out, false);
  }
  /** ∂_λ u(·, λ) into out */
  rateAt(lambda: number, out: Float64Array): Float64Array {
    return this.combine(lambda, out, true);
  }
  /** w(·, λ) = u(· + cλ, λ) in the integrator's frame (c = frameSpeed) into out */
  atInFrame(lambda: number, out: Float64Array): Float64Array {
    return this.combine(lambda, out, false, false);
  }
  /** the stored spectra as plain data (shared, not copied), for a worker thread to rebuild the interpolant */
  data(): DenseFlowData {
    return { points: this.points, length: this.length, frameSpeed: this.frameSpeed, lambdas: this.lambdas, values: this.values, rates: this.rates };
  }
  /** the interpolant of `data` (arrays shared) */
  static fromData(d: DenseFlowData): DenseFlow {
    const flow = new DenseFlow(d.points, new RealFFT(d.points), d.length, d.frameSpeed);
    flow.lambdas.push(...d.lambdas);
    flow.values.push(...d.values);
    flow.rates.push(...d.rates);
    return flow;
  }
  /** bytes held by the stored spectra */
  get bytes(): number {
    return this.values.reduce((s, a) => s + 2 * a.byteLength, 0);
  }
}

/** a DenseFlow as plain data (structured-clone safe) */
export interface DenseFlowData {
  points: number;
  /** period L of the grid */
  length: number;
  /** speed of the frame the spectra are stored in */
  frameSpeed: number;
  lambdas: number[];
  values: Float64Array[];
  rates: Float64Array[];
}

/** the potential of a designed sequence as plain data: the dense flow read at λ clamped to [lo, hi] */
export interface SequenceSource {
  dense: DenseFlowData;
  lo: number;
  hi: number;
}

/** u(ξ; λ) of a sequence source, λ clamped to its range; `inFrame`: w(ξ; λ) = u(ξ + cλ; λ) in the frame of the flow
 *  (c = dense.frameSpeed) */
export function sequencePotential(src: SequenceSource, inFrame = false): (lambda: number, out: Float64Array) => void {
  const flow = DenseFlow.fromData(src.dense);
  return (l, out) => {
    const lambda = Math.min(Math.max(l, src.lo), src.hi);
    if (inFrame) flow.atInFrame(lambda, out);
    else flow.at(lambda, out);
  };
}
