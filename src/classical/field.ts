/**
 * Potential sequences u(x, λ) as seen by classical trajectories: value and first two x-derivatives at any
 * point, for the λ last selected. Two kinds:
 *
 *  - `FourierProfile`: the band-limited (trigonometric) interpolant of grid samples, evaluated exactly at any x
 *    (Trefethen, Spectral Methods in MATLAB, SIAM 2000, ch. 3). Its derivatives are the exact derivatives of the
 *    same function, so Hamilton's equations built on it conserve the corresponding energy exactly.
 *  - `spectralSequence`: a FourierProfile of the flow's dense output u(·, λ) (flow/kdv.ts DenseFlow), rebuilt
 *    whenever λ changes.
 *
 * Natural units throughout (physics.md §3).
 */
import type { DenseFlow } from '../flow/dense.ts';
import { RealFFT } from '../spectral/fft.ts';
import type { Grid } from '../spectral/grid.ts';

/** modes whose amplitude is below this fraction of the largest one are skipped in point evaluations: they
 * contribute less than round-off to the sum (common practice) */
export const MODE_CUTOFF = 1e-17;

/** A profile in x: out[0..3] = f, f′, f″, f‴ at x. */
export interface Profile1D {
  evaluate(x: number, out: Float64Array): void;
  /** smallest and largest grid sample (a bracket for the values) */
  readonly min: number;
  readonly max: number;
}

/** A λ-dependent potential: `select(λ)` then `evaluate(x, out)` (out = u, u_x, u_xx, u_xxx at the selected λ). */
export interface SequenceField extends Profile1D {
  select(lambda: number): void;
  readonly lambda: number;
}

/**
 * Trigonometric interpolant f(x) = (1/N)[X₀ + 2 Σ_{m=1}^{M} Re(X_m e^{ik_m(x − x₀)})] of samples on a periodic
 * grid (Nyquist mode dropped, as for odd derivatives in spectral/grid.ts), with exact derivatives.
 */
export class FourierProfile implements Profile1D {
  readonly grid: Grid;
  private readonly fft: RealFFT;
  private readonly spec: Float64Array;
  private top = 0;
  min = 0;
  max = 0;
  constructor(grid: Grid, samples?: Float64Array) {
    this.grid = grid;
    this.fft = new RealFFT(grid.n);
    this.spec = new Float64Array(grid.n + 2);
    if (samples) this.set(samples);
  }
  /** replace the samples (allocates nothing) */
  set(samples: Float64Array): void {
    const n = this.grid.n;
    this.fft.forward(samples, this.spec);
    let big = 0;
    for (let m = 0; m < n / 2; m++) big = Math.max(big, Math.hypot(this.spec[2 * m], this.spec[2 * m + 1]));
    let top = 0;
    for (let m = 0; m < n / 2; m++) if (Math.hypot(this.spec[2 * m], this.spec[2 * m + 1]) > MODE_CUTOFF * big) top = m;
    this.top = top;
    let lo = Infinity, hi = -Infinity;
    for (let j = 0; j < n; j++) {
      lo = Math.min(lo, samples[j]);
      hi = Math.max(hi, samples[j]);
    }
    this.min = lo;
    this.max = hi;
  }
  evaluate(x: number, out: Float64Array): void {
    const g = this.grid;
    const s = this.spec;
    const dk = (2 * Math.PI) / g.length;
    const th = dk * (x - g.x[0]);
    const c1 = Math.cos(th), s1 = Math.sin(th);
    // e^{i m θ} by recurrence, re-anchored every RECUR_ANCHOR modes to keep round-off at ε
    let zr = 1, zi = 0;
    let f = s[0], f1 = 0, f2 = 0, f3 = 0;
    for (let m = 1; m <= this.top; m++) {
      if (m % RECUR_ANCHOR === 0) {
        zr = Math.cos(m * th);
        zi = Math.sin(m * th);
      } else {
        const t = zr * c1 - zi * s1;
        zi = zr * s1 + zi * c1;
        zr = t;
      }
      const re = s[2 * m], im = s[2 * m + 1];
      const val = re * zr - im * zi; // Re(X e^{ikx})
      const dv = -(re * zi + im * zr); // Im(X e^{ikx}) with sign: d/dθ Re(...) = −Im(...)
      const k = m * dk;
      const k2 = k * k;
      f += 2 * val;
      f1 += 2 * k * dv;
      f2 -= 2 * k2 * val;
      f3 -= 2 * k2 * k * dv;
    }
    const inv = 1 / g.n;
    out[0] = f * inv;
    out[1] = f1 * inv;
    out[2] = f2 * inv;
    out[3] = f3 * inv;
  }
}

/** recompute e^{imθ} directly every this many modes (bounds the recurrence's error growth; common practice) */
export const RECUR_ANCHOR = 64;

/** a SequenceField that evaluates `profile`; selecting a new λ first calls `load` (which may update the profile) */
function profileField(profile: Profile1D, start: number, load?: (lambda: number) => void): SequenceField {
  let current = start;
  return {
    get lambda() {
      return current;
    },
    get min() {
      return profile.min;
    },
    get max() {
      return profile.max;
    },
    select(lambda: number) {
      if (lambda === current) return;
      load?.(lambda);
      current = lambda;
    },
    evaluate(x: number, out: Float64Array) {
      profile.evaluate(x, out);
    },
  };
}

/** The sequence u(·, λ) of a flow run (dense output), as a SequenceField. */
export function spectralSequence(grid: Grid, dense: DenseFlow): SequenceField {
  const profile = new FourierProfile(grid);
  const buf = new Float64Array(grid.n);
  return profileField(profile, NaN, (lambda) => {
    dense.at(lambda, buf);
    profile.set(buf);
  });
}

/** A static profile as a (λ-independent) SequenceField. */
export function staticSequence(profile: Profile1D): SequenceField {
  return profileField(profile, 0);
}

/** Analytic profile from a function returning f, f′, f″, f‴ (tests, closed forms). */
export function analyticProfile(fn: (x: number, out: Float64Array) => void, min: number, max: number): Profile1D {
  return { evaluate: fn, min, max };
}

/** −d sech²(x/w) and its first three derivatives (closed form) */
export function sech2Profile(depth: number, width: number, center = 0): Profile1D {
  return analyticProfile(
    (x, out) => {
      const z = (x - center) / width;
      const t = Math.tanh(z);
      const s2 = 1 - t * t; // sech²
      const w = width;
      out[0] = -depth * s2;
      out[1] = ((2 * depth) / w) * s2 * t;
      out[2] = ((2 * depth) / (w * w)) * s2 * (1 - 3 * t * t);
      out[3] = ((2 * depth) / (w * w * w)) * s2 * (-8 * t + 12 * t * t * t);
    },
    -depth,
    0,
  );
}
