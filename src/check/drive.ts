/**
 * Schrödinger test of counterdiabatic corrections for a sequence u(ξ, λ_k) that need not be admissible (natural
 * units, physics.md §3): i ∂_s ψ = [k² + u(ξ, λ(s)) + λ′(s) (a(λ) k³ + ½{g(ξ, λ), k})] ψ, propagated by the
 * project's propagator (quantum/propagator.ts, ETD4 with the k-diagonal part exact by default) over a ramp λ(s)
 * from the first frame to the last, for the lowest levels of the first frame. Compared side by side:
 *  - the variational correction (check/variational.ts),
 *  - the exact cubic correction of the fitted flow (check/rates.ts),
 *  - no correction.
 * Fidelity: weight in the degenerate eigenspace of the last frame's H (physics.md §5); excess energy
 * ⟨H_f⟩ − E_f; optional thermal ensemble (quantum/observables.ts).
 *
 * Between frames, u is the cubic Hermite interpolant in λ through the frames and their rates (given, e.g. from the
 * flow fit of check/rates.ts, or Fornberg λ-derivatives; physics.md §5, dense output), so u_λ is continuous; the correction
 * coefficients a(λ), θ(λ) are interpolated LINEARLY between the frames where they were fitted (second order in the
 * frame spacing; g(ξ, λ) = Σ θ_c(λ) φ_c(ξ, λ) uses the interpolated u for the u-term), and held constant outside.
 */
import type { Grid } from '../spectral/grid.ts';
import { intervalIndex } from '../spectral/ops.ts';
import { groupDegenerate, lowestEigenpairs, type EigenMethod } from '../quantum/eigen.ts';
import { complexFromReal } from '../linalg/complex.ts';
import { SpectralOperator, type OperatorTerms } from '../quantum/hamiltonian.ts';
import { eigenspaceFidelity, excessEnergy, groupOf, thermalSummary, type ThermalSummary } from '../quantum/observables.ts';
import { Propagator, type DrivenHamiltonian, type Scheme } from '../quantum/propagator.ts';
import { estimateSchrodingerSteps, ladderSteps } from '../quantum/cost.ts';
import { makeRamp, type Ramp, type RampKind } from '../protocol/ramp.ts';
import { lambdaDerivatives, STENCIL_WIDTH } from './fornberg.ts';
import { BLOCK_MARGIN, DEGENERACY_TOL, evaluateG, legendreTable, type VariationalFit } from './variational.ts';

/** default infidelity budget of the time stepping (verify's default) */
export const DEFAULT_STEP_TOL = 1e-8;

/** λ-dependent coefficients of A = a k³ + ½{g, k}, g = Σ θ_c φ_c over [u, 1, P₁ … P_K], at knots λ_i */
export interface CorrectionSchedule {
  label: string;
  lambda: number[];
  a: number[];
  coefficients: number[][];
}

/** the variational correction as a schedule */
export function variationalSchedule(fit: VariationalFit): CorrectionSchedule {
  return { label: 'variational', lambda: fit.frames.map((f) => f.lambda), a: fit.frames.map((f) => f.a), coefficients: fit.frames.map((f) => [...f.coefficients]) };
}

/** index i and fraction t of λ in [λ_i, λ_{i+1}] of ascending knots (clamped to the ends) */
function locate(knots: readonly number[], lambda: number): { i: number; t: number } {
  const n = knots.length;
  if (n === 1 || lambda <= knots[0]) return { i: 0, t: 0 };
  if (lambda >= knots[n - 1]) return { i: Math.max(0, n - 2), t: 1 };
  const lo = intervalIndex(knots, lambda);
  return { i: lo, t: (lambda - knots[lo]) / (knots[lo + 1] - knots[lo]) };
}

/** u(ξ, λ) by cubic Hermite interpolation through frames and their λ-derivatives (clamped outside) */
export class SequenceInterpolant {
  readonly lambda: readonly number[];
  readonly frames: readonly Float64Array[];
  readonly rates: readonly Float64Array[];
  constructor(lambda: readonly number[], frames: readonly Float64Array[], rates?: readonly Float64Array[]) {
    if (frames.length < 2 || lambda.length !== frames.length) throw new RangeError(`sequence: ${frames.length} frames with ${lambda.length} λ values: need at least 2 and one λ per frame`);
    this.lambda = lambda;
    this.frames = frames;
    this.rates = rates ?? lambdaDerivatives(lambda, frames, Math.min(STENCIL_WIDTH, frames.length)).rates;
  }
  /** u(·, λ) into out (allocation-free) */
  at(lambda: number, out: Float64Array): Float64Array {
    const { i, t } = locate(this.lambda, lambda);
    const h = this.lambda[i + 1] - this.lambda[i];
    const t2 = t * t, t3 = t2 * t;
    const a0 = 2 * t3 - 3 * t2 + 1, b0 = (t3 - 2 * t2 + t) * h, a1 = -2 * t3 + 3 * t2, b1 = (t3 - t2) * h;
    const u0 = this.frames[i], d0 = this.rates[i], u1 = this.frames[i + 1], d1 = this.rates[i + 1];
    for (let j = 0; j < out.length; j++) out[j] = a0 * u0[j] + b0 * d0[j] + a1 * u1[j] + b1 * d1[j];
    return out;
  }
  /** ∂_λu(·, λ) of the same interpolant into out (at the clamped λ outside the frames; allocation-free) */
  rateAt(lambda: number, out: Float64Array): Float64Array {
    const { i, t } = locate(this.lambda, lambda);
    const h = this.lambda[i + 1] - this.lambda[i];
    const t2 = t * t;
    const a0 = (6 * t2 - 6 * t) / h, b0 = 3 * t2 - 4 * t + 1, a1 = -a0, b1 = 3 * t2 - 2 * t;
    const u0 = this.frames[i], d0 = this.rates[i], u1 = this.frames[i + 1], d1 = this.rates[i + 1];
    for (let j = 0; j < out.length; j++) out[j] = a0 * u0[j] + b0 * d0[j] + a1 * u1[j] + b1 * d1[j];
    return out;
  }
}

/**
 * The driven Hamiltonian k² + u(λ(s)) + λ′(s)(a k³ + ½{g, k}) with λ(s) = λ₀ + ramp(s); schedule null: no correction.
 * `terms` reuses internal buffers (allocation-free).
 */
export function correctionDrive(grid: Grid, seq: SequenceInterpolant, schedule: CorrectionSchedule | null, ramp: Ramp, lambda0: number): DrivenHamiltonian {
  const u = new Float64Array(grid.n);
  const g = new Float64Array(grid.n);
  const K = schedule ? schedule.coefficients[0].length - 2 : 0;
  const legendre = legendreTable(grid, K);
  const theta = new Array<number>(K + 2).fill(0);
  let aNow = 0;
  const interpolate = (lambda: number): void => {
    if (!schedule) return;
    const { i, t } = locate(schedule.lambda, lambda);
    const j = Math.min(i + 1, schedule.lambda.length - 1);
    aNow = (1 - t) * schedule.a[i] + t * schedule.a[j];
    const ci = schedule.coefficients[i], cj = schedule.coefficients[j];
    for (let c = 0; c < theta.length; c++) theta[c] = (1 - t) * ci[c] + t * cj[c];
  };
  return {
    grid,
    terms(s: number, out: OperatorTerms): void {
      const lambda = lambda0 + ramp.value(s);
      const rate = ramp.rate(s);
      seq.at(lambda, u);
      out.c1 = 0;
      out.c2 = 1;
      out.v = u;
      if (!schedule || rate === 0) {
        out.c3 = 0;
        out.w = null;
        out.b = 0;
        return;
      }
      interpolate(lambda);
      evaluateG(theta, u, legendre, g);
      out.c3 = rate * aNow;
      out.w = g;
      out.b = 0.5 * rate;
    },
  };
}

export interface CompareOptions {
  grid: Grid;
  lambda: readonly number[];
  frames: readonly Float64Array[];
  /** λ-derivatives of the frames (default: Fornberg, STENCIL_WIDTH points) */
  rates?: readonly Float64Array[];
  /** corrections to run; null = no correction */
  drives: { label: string; schedule: CorrectionSchedule | null }[];
  /** propagated levels: the lowest `states` of the first frame */
  states: number;
  /** temperature (E₀) for the thermal ensemble summary */
  temperature?: number;
  /** ramp duration (t₀) */
  duration: number;
  ramp?: RampKind;
  /** infidelity budget of the time stepping */
  tol?: number;
  scheme?: Scheme;
  eigenMethod?: EigenMethod;
  /** fraction of the propagation done, each drive weighted by its estimated steps (quantum/cost.ts) */
  onProgress?: (fraction: number) => void;
}

export interface DriveComparison {
  label: string;
  fidelity: number[];
  excessEnergy: number[];
  minFidelity: number;
  thermal: ThermalSummary | null;
  steps: number;
  seconds: number;
}

export interface ComparisonResult {
  ramp: RampKind;
  duration: number;
  lambdaStart: number;
  lambdaEnd: number;
  states: { index: number; energyStart: number; energyEnd: number; degeneracyEnd: number }[];
  drives: DriveComparison[];
  interpolation: string;
}

/** the estimated accepted level of each drive (quantum/cost.ts: corrected drives have the stiffer first-order term) */
function expectedLevels(opts: CompareOptions, lambdaSpan: number, ramp: RampKind): number[] {
  let maxAbsU = 0;
  for (const f of opts.frames) for (let j = 0; j < f.length; j++) maxAbsU = Math.max(maxAbsU, Math.abs(f[j]));
  const size = { points: opts.grid.n, length: opts.grid.length, maxAbsU, lambdaEnd: lambdaSpan, ramp, duration: opts.duration, tol: opts.tol ?? DEFAULT_STEP_TOL };
  return opts.drives.map((d) => estimateSchrodingerSteps(size, d.schedule !== null));
}

/** propagate the lowest levels of the first frame under each drive and compare at the last frame (module doc) */
export function compareCorrections(opts: CompareOptions): ComparisonResult {
  const { grid, lambda, frames } = opts;
  const M = opts.states;
  if (!Number.isInteger(M) || M < 1 || M + BLOCK_MARGIN > grid.n) throw new RangeError(`variational: states = ${M} is not allowed: must be an integer in 1 … ${grid.n - BLOCK_MARGIN}`);
  if (!(Number.isFinite(opts.duration) && opts.duration > 0)) throw new RangeError(`variational: duration = ${opts.duration} is not allowed: must be a finite number > 0`);
  const kind = opts.ramp ?? 'sin2';
  const seq = new SequenceInterpolant(lambda, frames, opts.rates);
  const l0 = lambda[0], l1 = lambda[lambda.length - 1];
  const ramp = makeRamp(kind, opts.duration, l1 - l0);
  const uStart = frames[0], uEnd = frames[frames.length - 1];
  const e0 = lowestEigenpairs(grid, uStart, M + BLOCK_MARGIN, { method: opts.eigenMethod });
  const e1 = lowestEigenpairs(grid, uEnd, M + BLOCK_MARGIN, { method: opts.eigenMethod });
  const groups = groupDegenerate(e1.energies, DEGENERACY_TOL);
  const init = e0.vectors.slice(0, M).map(complexFromReal);
  const prop = new Propagator(grid);
  const op = new SpectralOperator(grid);
  const scratch = new Float64Array(2 * grid.n);
  const expected = expectedLevels(opts, l1 - l0, kind);
  const weights = expected.map(ladderSteps);
  const total = weights.reduce((a, b) => a + b, 0);
  let done = 0;
  const drives: DriveComparison[] = opts.drives.map(({ label, schedule }, di) => {
    const t0 = performance.now();
    const H = correctionDrive(grid, seq, schedule, ramp, l0);
    const res = prop.propagate(H, init, 0, opts.duration, {
      tol: opts.tol ?? DEFAULT_STEP_TOL, scheme: opts.scheme, errorControl: 'global', expectedSteps: expected[di],
      onProgress: opts.onProgress ? (f) => opts.onProgress?.((done + f * weights[di]) / total) : undefined,
    });
    done += weights[di];
    const fidelity = res.states.map((p, i) => eigenspaceFidelity(p, e1.vectors, groupOf(groups, i)));
    const excess = res.states.map((p, i) => excessEnergy(op, uEnd, p, e1.energies[i], scratch));
    const thermal = opts.temperature !== undefined ? thermalSummary(e0.energies.slice(0, M), fidelity, excess, opts.temperature, grid.length) : null;
    return { label, fidelity, excessEnergy: excess, minFidelity: Math.min(...fidelity), thermal, steps: res.stats.steps, seconds: (performance.now() - t0) / 1000 };
  });
  return {
    ramp: kind, duration: opts.duration, lambdaStart: l0, lambdaEnd: l1,
    states: Array.from({ length: M }, (_, i) => ({ index: i, energyStart: e0.energies[i], energyEnd: e1.energies[i], degeneracyEnd: groupOf(groups, i).length })),
    drives,
    interpolation: `u: cubic Hermite in λ through the frames and their ${opts.rates ? 'given rates' : 'Fornberg λ-derivatives'}; correction coefficients a, θ: linear in λ between the fitted frames`,
  };
}
