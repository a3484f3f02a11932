/**
 * Is a given sequence u(ξ, λ_k) (natural units, physics.md §3) admissible for exact cubic counterdiabatic
 * driving? In natural units (ξ = x/ℓ, u = V/E₀, mE₀ = ħ²/2ℓ²) equation (★) of physics.md §2,
 *     ∂_λV = −3am V ∂_xV − c ∂_xV + (aħ²/4) ∂_x³V,
 * becomes, with â = aħ²/ℓ³ and ĉ = c/ℓ,
 *     u_λ = â (−(3/2) u u_ξ + ¼ u_ξξξ) − ĉ u_ξ                                   (★ₙ)
 * (â = −4, ĉ = 0 is the standard KdV u_τ = 6uu_ξ − u_ξξξ of physics.md §3). Per frame:
 *  - u_λ by Fornberg finite-difference weights (Math. Comp. 51, 699, 1988) on STENCIL_WIDTH neighbouring
 *    frames (non-uniform λ allowed, one-sided at the ends);
 *  - u_ξ, u_ξξξ by Fourier differentiation (Nyquist zeroed for odd orders, physics.md §5), the product as
 *    ½∂_ξ(u²) with the 2/3 rule (Orszag, J. Atmos. Sci. 28, 1074, 1971), exactly as the flow integrator;
 *  - â, ĉ by linear least squares (modified Gram–Schmidt on the two columns: Golub & Van Loan, Matrix
 *    Computations, 4th ed. 2013, §5.2.8), relative residual ‖u_λ − RHS‖/‖u_λ‖.
 * Isospectrality (no fit): bound-state energies of k² + u per frame (quantum/bound.ts) against the median
 * along the sequence (physics.md §5: the eigenvalues of an admissible sequence do not move).
 */
import type { Grid } from '../spectral/grid.ts';
import { RealGridOperators } from '../spectral/real-operators.ts';
import { boundEnergies, boxThreshold } from '../quantum/bound.ts';
import { fornbergWeights, stencilFor } from './fornberg.ts';

/** frames in the λ-stencil: fourth order on uniform frames, while five frames still fit short sequences */
export const STENCIL_WIDTH = 5;
/** a lower-order stencil whose difference from the main one indicates whether the frames resolve u_λ */
export const LOW_STENCIL_WIDTH = 3;
/** sin² of the angle between the two model columns below this: â and ĉ cannot be told apart (a single
 * soliton makes them exactly proportional, physics.md §4); ~1e3 × round-off of the column products */
export const DEGENERATE_SIN2 = 1e-10;
/** ‖u_λ‖ below this times ‖u‖/(λ span) counts as a static frame (round-off level, common practice) */
export const STATIC_RATE = 1e-12;

export interface FrameFit {
  index: number;
  lambda: number;
  /** fitted â = aħ²/ℓ³ */
  aHat: number;
  /** fitted ĉ = c/ℓ (ℓ per unit λ) */
  cHat: number;
  /** ‖u_λ − â B₁ − ĉ B₂‖ / ‖u_λ‖ (0 for a static frame) */
  residual: number;
  /** RMS of u_λ over the grid, E₀ per unit λ */
  rateRms: number;
  /** ‖u_λ(STENCIL_WIDTH) − u_λ(LOW_STENCIL_WIDTH)‖ / ‖u_λ‖: large means frames too far apart in λ */
  lambdaResolution: number;
  /** frame indices [start, end) of the λ-stencil */
  stencil: [number, number];
  /** â and ĉ not separable (columns nearly parallel): â set to 0 and the motion fitted as a translation */
  degenerate: boolean;
  /** u_λ vanishes: trivially admissible with â = ĉ = 0 */
  static: boolean;
}

/** u_λ at every frame from `width`-point Fornberg stencils (pure: frames in, new arrays out) */
export function lambdaDerivatives(lambda: readonly number[], frames: readonly Float64Array[], width: number): { rates: Float64Array[]; stencils: [number, number][] } {
  const count = frames.length;
  const n = frames[0].length;
  const rates: Float64Array[] = [];
  const stencils: [number, number][] = [];
  for (let k = 0; k < count; k++) {
    const { start, end } = stencilFor(k, count, width);
    const w = fornbergWeights(lambda[k], lambda.slice(start, end), 1)[1];
    const r = new Float64Array(n);
    for (let i = start; i < end; i++) {
      const wi = w[i - start];
      const f = frames[i];
      for (let j = 0; j < n; j++) r[j] += wi * f[j];
    }
    rates.push(r);
    stencils.push([start, end]);
  }
  return { rates, stencils };
}

/**
 * The two model columns of (★ₙ): B₁ = −(3/2)·½∂_ξ(u²) + ¼u_ξξξ and B₂ = −u_ξ, spectrally on the shared
 * operators of spectral/real-operators.ts (preallocated buffers; `columns` allocates nothing).
 */
export class KdvColumns {
  private readonly ops: RealGridOperators;
  private readonly grid: Grid;
  private readonly cutoff: number;
  private readonly spec: Float64Array;
  private readonly sq: Float64Array;
  private readonly sqSpec: Float64Array;
  constructor(grid: Grid) {
    this.grid = grid;
    this.ops = new RealGridOperators(grid);
    this.cutoff = Math.floor(grid.n / 3);
    this.spec = new Float64Array(grid.n + 2);
    this.sq = new Float64Array(grid.n);
    this.sqSpec = new Float64Array(grid.n + 2);
  }
  columns(u: Float64Array, b1: Float64Array, b2: Float64Array): void {
    const n = this.grid.n;
    const kh = this.grid.kHalf;
    // B₂ = −Du (negation is exact, so this equals transforming −ikû)
    this.ops.d1(u, b2);
    for (let j = 0; j < n; j++) b2[j] = -b2[j];
    const s = this.spec, sq = this.sqSpec;
    this.ops.fft.forward(u, s);
    for (let j = 0; j < n; j++) this.sq[j] = u[j] * u[j];
    this.ops.fft.forward(this.sq, sq);
    for (let m = 0; m <= n / 2; m++) {
      const k = m === n / 2 ? 0 : kh[m];
      // −(3/4) ik F[u²] (dealiased) − ¼ ik³ û
      const g = m <= this.cutoff ? -0.75 * k : 0;
      const d = -0.25 * k * k * k;
      const re = g * -sq[2 * m + 1] + d * -s[2 * m + 1];
      const im = g * sq[2 * m] + d * s[2 * m];
      sq[2 * m] = re;
      sq[2 * m + 1] = im;
    }
    this.ops.fft.inverse(sq, b1);
  }
}

function dot(a: Float64Array, b: Float64Array): number {
  let s = 0;
  for (let j = 0; j < a.length; j++) s += a[j] * b[j];
  return s;
}

/** Least-squares fit of (★ₙ) at every frame (see module doc). */
export function fitFrames(grid: Grid, lambda: readonly number[], frames: readonly Float64Array[]): FrameFit[] {
  const n = grid.n;
  const { rates, stencils } = lambdaDerivatives(lambda, frames, STENCIL_WIDTH);
  const low = lambdaDerivatives(lambda, frames, LOW_STENCIL_WIDTH).rates;
  const cols = new KdvColumns(grid);
  const b1 = new Float64Array(n), b2 = new Float64Array(n), q = new Float64Array(n), p = new Float64Array(n);
  const span = lambda[lambda.length - 1] - lambda[0];
  const fits: FrameFit[] = [];
  for (let k = 0; k < frames.length; k++) {
    const f = rates[k];
    const u = frames[k];
    const ff = dot(f, f);
    const uu = dot(u, u);
    let dl = 0;
    for (let j = 0; j < n; j++) dl += (f[j] - low[k][j]) ** 2;
    const base = { index: k, lambda: lambda[k], rateRms: Math.sqrt(ff / n), stencil: stencils[k] };
    if (Math.sqrt(ff) <= (STATIC_RATE * Math.sqrt(uu)) / span || ff === 0) {
      fits.push({ ...base, aHat: 0, cHat: 0, residual: 0, lambdaResolution: 0, degenerate: false, static: true });
      continue;
    }
    cols.columns(u, b1, b2);
    const n2 = Math.sqrt(dot(b2, b2));
    const n1 = Math.sqrt(dot(b1, b1));
    let aHat = 0, cHat = 0, degenerate = false;
    if (n2 === 0) {
      // u is constant in ξ: neither term can move it
      degenerate = true;
    } else {
      for (let j = 0; j < n; j++) q[j] = b2[j] / n2;
      const r12 = dot(b1, q);
      for (let j = 0; j < n; j++) p[j] = b1[j] - r12 * q[j];
      const pp = dot(p, p);
      const fq = dot(f, q);
      if (n1 === 0 || pp <= DEGENERATE_SIN2 * n1 * n1) {
        degenerate = true;
        cHat = fq / n2;
      } else {
        aHat = dot(f, p) / pp;
        cHat = (fq - aHat * r12) / n2;
      }
    }
    let rr = 0;
    for (let j = 0; j < n; j++) {
      const e = f[j] - aHat * b1[j] - cHat * b2[j];
      rr += e * e;
    }
    fits.push({ ...base, aHat, cHat, residual: Math.sqrt(rr / ff), lambdaResolution: Math.sqrt(dl / ff), degenerate, static: false });
  }
  return fits;
}

export interface SpectrumCheck {
  /** frames whose spectrum was computed */
  indices: number[];
  /** energies[i] for frame indices[i], ascending, E₀ */
  energies: number[][];
  /** bound-state threshold −(2π/L)² (E₀): a state decaying more slowly cannot be told from the box continuum */
  threshold: number;
  /** levels compared: the most that every checked frame has */
  levels: number;
  /** median over checked frames of each compared level, E₀ */
  reference: number[];
  /** per checked frame: max over compared levels of |E_n − reference_n|, E₀ */
  deviation: number[];
  /** per checked frame: number of bound states differs from the most common count */
  countChanged: boolean[];
  /** max over compared levels of (max − min along the sequence), E₀ */
  spread: number;
}

function median(v: number[]): number {
  const s = [...v].sort((a, b) => a - b);
  const h = s.length >> 1;
  return s.length % 2 ? s[h] : 0.5 * (s[h - 1] + s[h]);
}

/** Bound-state energies of k² + u at the chosen frames and their deviations from the sequence median. */
export function spectrumCheck(grid: Grid, frames: readonly Float64Array[], indices: readonly number[]): SpectrumCheck {
  const threshold = boxThreshold(grid.length);
  const energies = indices.map((i) => boundEnergies(grid, frames[i], threshold).energies);
  const counts = energies.map((e) => e.length);
  const tally = new Map<number, number>();
  for (const c of counts) tally.set(c, (tally.get(c) ?? 0) + 1);
  let common = counts[0];
  for (const [c, t] of tally) if (t > (tally.get(common) ?? 0)) common = c;
  const levels = Math.min(...counts);
  const reference = Array.from({ length: levels }, (_, lvl) => median(energies.map((e) => e[lvl])));
  const deviation = energies.map((e) => {
    let d = 0;
    for (let lvl = 0; lvl < levels; lvl++) d = Math.max(d, Math.abs(e[lvl] - reference[lvl]));
    return d;
  });
  let spread = 0;
  for (let lvl = 0; lvl < levels; lvl++) {
    const col = energies.map((e) => e[lvl]);
    spread = Math.max(spread, Math.max(...col) - Math.min(...col));
  }
  return { indices: [...indices], energies, threshold, levels, reference, deviation, countChanged: counts.map((c) => c !== common), spread };
}
