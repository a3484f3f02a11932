/**
 * Time-dependent Schrödinger propagation i ∂_s ψ = H(s) ψ on the periodic grid (natural units, physics.md §3),
 * for the KdV drive H(s) = k² + u(λ(s)) + σ λ'(s) (−4k³ − 3{u,k}) (σ = +1 CD, 0 bare, −1 sign-flipped) or any
 * Hamiltonian of the form O(s) = c₁(s)k + c₂(s)k² + c₃(s)k³ + v(s) + b(s){w(s), k} supplied as a callback.
 *
 * The one-step scheme is looked up by name in a registry (scheme.ts); the core registry holds 'etd4'
 * (etd4.ts, exponential time differencing RK4 with the k-diagonal part exact). Every `Propagator` instantiates
 * its own scheme buffers, so propagations on different instances may run interleaved.
 *
 * Error control 'local': step doubling (Hairer, Nørsett & Wanner, Solving ODEs I, 2nd ed. 1993, §II.4). One step
 * of h and two of h/2 are compared, err = max over states of the part of ψ_h − ψ_{h/2,h/2} orthogonal to the
 * state (the only part that changes a fidelity; a global phase error does not); the two-half-step result is kept.
 * The budget is an infidelity `tol` caused by time stepping: the orthogonal amplitude error δ = √tol is spread over
 * the interval, err ≤ δ·h/(s₁ − s₀) per step, so Σ err ≤ δ; the step factor comes from the shared controller
 * (integrate/controller.ts) with the exponent of an error per unit step. This is conservative: on the two-soliton
 * case (N = 512, etd4) tol = 1e-6 gave a true worst infidelity 1.6e-11 and tol = 1e-8 gave 1e-14.
 * Error control 'global': see `PropagateOptions.errorControl`.
 */
import { NumericalError } from '../core/errors.ts';
import { ladderStart } from './cost.ts';
import type { Grid } from '../spectral/grid.ts';
import { errorExponent, stepFactor } from '../integrate/controller.ts';
import { KrylovExp } from '../integrate/krylov.ts';
import { norm2, perpendicularNorm } from '../linalg/complex.ts';
import type { Ramp } from '../protocol/ramp.ts';
import { etd4Scheme } from './etd4.ts';
import { ETD43_SCHEME, ETD53_SCHEME } from './etd-pair-scheme.ts';
import { cdTerms, SpectralOperator } from './hamiltonian.ts';
import { GaussianBlur } from '../spectral/blur.ts';
import { SchemeRegistry, type DrivenHamiltonian, type EmbeddedStepScheme, type SchemeDefinition, type StepScheme } from './scheme.ts';

export type { DrivenHamiltonian } from './scheme.ts';

/** a scheme name (the registry decides which exist) */
export type Scheme = string;

/** the production registry: 'etd53' (the default; etd-pair-scheme.ts, Whalen, Brio & Moloney, J. Comput. Phys. 280,
 *  579, 2015), 'etd43' (Krogstad 2005 with the same embedding) and 'etd4' (etd4.ts; Cox & Matthews, J. Comput. Phys.
 *  176, 430, 2002, eq. (26)–(29)) */
export const CORE_SCHEMES = new SchemeRegistry([ETD53_SCHEME, ETD43_SCHEME, etd4Scheme()]);
/** the scheme used when none is named: the fifth-order pair (measured on the two-soliton split, N = 512, 8 states:
 *  infidelity 4.6e-8 in 250 steps where etd4 needs about 850 steps) */
export const DEFAULT_SCHEME = 'etd53';

/** fraction of the per-step error budget given to each Krylov exponential (the rest is time stepping) */
const KRYLOV_SHARE = 0.02;
/** floor for the Krylov tolerance (round-off level of a unit vector after a few hundred FFTs) */
const KRYLOV_TOL_FLOOR = 1e-13;
/** global error control: first level, largest level, smallest convergence ratio trusted (a 4th-order method
 *  gives 16 asymptotically; below 2 the levels are not converging yet) */
export const GLOBAL_INITIAL_STEPS = 64;
const GLOBAL_MAX_STEPS = 1 << 16;
const GLOBAL_MIN_RATIO = 2;
/** two successive levels whose states agree to this relative amplitude agree to round-off (a few hundred FFTs of
 *  unit vectors, as KRYLOV_TOL_FLOOR): no ratio is measurable and the finer level is accepted with that difference
 *  as its error (common practice) */
const GLOBAL_ROUNDOFF_AGREEMENT = 1e-12;
/** the round-off floor grows with the steps taken: ≈ 4.5 ulp of a unit vector per step (measured: 8192 steps of a
 *  converged painted drive left two levels 1.1e-12 … 6.5e-12 apart, never decreasing; common practice) */
const ROUNDOFF_PER_STEP = 1e-15;
/** predicted next level: margin on the predicted count, and the smallest growth (keeps f^p − 1 well conditioned) */
const GLOBAL_MARGIN = 1.2;
const GLOBAL_MIN_GROWTH = 1.25;
/** default Krylov dimension cap */
const KRYLOV_DIM_DEFAULT = 40;
/** default infidelity budget of the time stepping */
const TOL_DEFAULT = 1e-8;
/** first step of the local control: this fraction of the interval */
const INITIAL_STEP_FRACTION = 1 / 50;
/** a uniform point of the fixed-step grid closer than this fraction of a step to the current time counts as reached
 *  (a sample time at the same point, up to round-off, ends the step there) */
const UNIFORM_SNAP = 1e-9;
/** smallest step of the local control, relative to the interval */
const MIN_STEP_FRACTION = 1e-9;

/** potential callback in natural units: fill out[j] = u(ξ_j; λ) */
export type PotentialFn = (lambda: number, out: Float64Array) => void;

/**
 * The KdV drive of physics.md §3: H(s) = k² + u(λ(s)) + σ λ'(s)(−4k³ − 3{u,k} + c k); λ = τ is the KdV time and c
 * the co-moving drift of the flow (hamiltonian.ts cdTerms). σ = 1: exact CD for a KdV-admissible sequence;
 * σ = 0: bare ramp; σ = −1: sign-flipped correction.
 */
export function kdvDrive(grid: Grid, potential: PotentialFn, ramp: Ramp, sigma: number, drift = 0, errors: DriveErrors = NO_ERRORS): DrivenHamiltonian {
  const u = new Float64Array(grid.n);
  if (errors.depth === 0 && errors.shift === 0 && errors.psf === 0 && errors.noise === null) {
    return {
      grid,
      terms(s, out) {
        potential(ramp.value(s), u);
        cdTerms(u, ramp.rate(s), sigma * (1 + errors.scale), out, drift);
      },
    };
  }
  // the lab's potential (labPotential); the correction built for the design, λ̇A[u] at s + δs (held at the ends)
  const uA = new Float64Array(grid.n);
  const lab = labPotential(grid, potential, errors);
  return {
    grid,
    terms(s, out) {
      const sA = Math.min(Math.max(s + errors.shift, 0), ramp.duration);
      lab(ramp.value(s), u);
      potential(ramp.value(sA), uA);
      cdTerms(u, ramp.rate(sA), sigma * (1 + errors.scale), out, drift);
      if (out.w) out.w = uA;
    },
  };
}

/**
 * Errors a lab makes in building the drive: `scale` ε, the correction A → (1 + ε)A; `depth` δ, the painted potential
 * (1 + δ)V (a static calibration error; the correction stays the design's); `shift` δs (t₀), the correction running
 * late (δs > 0) or early, λ̇A evaluated at s + δs and held at the ends of the ramp; `psf` w (ℓ), the optics' Gaussian
 * point-spread function (1/e² radius) blurring the painted potential (spectral/blur.ts; 0: none).
 */
export interface DriveErrors {
  scale: number;
  depth: number;
  shift: number;
  psf: number;
  /** one shot's static potential noise δV(ξ) (E₀) as the atoms see it (spectral/random-field.ts), or null */
  noise: Float64Array | null;
}
export const NO_ERRORS: DriveErrors = { scale: 0, depth: 0, shift: 0, psf: 0, noise: null };

/** the potential the lab paints for the design's u: blur_w((1 + δ)u) + δV (DriveErrors depth, psf and noise) */
export function labPotential(grid: Grid, design: PotentialFn, errors: DriveErrors): PotentialFn {
  const noise = errors.noise;
  if (errors.depth === 0 && errors.psf === 0 && noise === null) return design;
  const blur = errors.psf > 0 ? new GaussianBlur(grid, errors.psf) : null;
  const raw = new Float64Array(grid.n);
  return (lambda, out) => {
    design(lambda, blur ? raw : out);
    const target = blur ? raw : out;
    for (let j = 0; j < target.length; j++) target[j] *= 1 + errors.depth;
    if (blur) blur.apply(raw, out);
    if (noise) for (let j = 0; j < out.length; j++) out[j] += noise[j];
  };
}

/** the step controls of `PropagateOptions.errorControl` */
export type ErrorControl = 'local' | 'global';

export interface PropagateOptions {
  /** a scheme name of the propagator's registry (default DEFAULT_SCHEME) */
  scheme?: Scheme;
  /** infidelity budget from time stepping (default 1e-8) */
  tol?: number;
  /** fixed number of equal steps: no error control (for order checks) */
  fixedSteps?: number;
  initialStep?: number;
  maxStep?: number;
  minStep?: number;
  krylovMaxDim?: number;
  /** times at which onSample is called with the current states (steps are cut to land on them) */
  sampleTimes?: readonly number[];
  onSample?: (s: number, states: readonly Float64Array[]) => void;
  onProgress?: (fraction: number) => void;
  /**
   * 'local' (default): step doubling with the per-step budget described in the module comment.
   * 'global': uniform steps n₀, 2n₀, 4n₀, … until the final states converge: with the perpendicular differences
   * d_k between levels k−1 and k and ρ = min(d_{k−1}/d_k, 2^p) (p the scheme's order; ≥ 2 required, at least three levels), the error of the finest
   * level is estimated as d_k/(ρ − 1) (geometric tail; Aitken-type, cf. Richardson extrapolation, Hairer, Nørsett
   * & Wanner 1993, §II.4) and accepted when it is ≤ √tol. Once the observed order p = log₂ρ (at most the scheme's
   * order) is known, the next level is the predicted count ×1.2 (growth f ∈ [1.25, 2]) and its error is d/(f^p − 1).
   * Samples are reported from the accepted level only.
   */
  errorControl?: ErrorControl;
  /** first level of the global control (default: quantum/cost.ts ladderStart(expectedSteps), else 64 steps) */
  initialSteps?: number;
  /** largest level of the global control (default 65,536 steps): when it is reached before the estimate meets the
   *  budget, the propagation fails with a NumericalError instead of returning an unconverged result */
  maxSteps?: number;
  /** global control: the expected accepted level (e.g. quantum/cost.ts estimateSchrodingerSteps); progress counts
   *  the steps done against the ladder up to it (default: three levels) */
  expectedSteps?: number;
}

/**
 * Steps of the global ladder expected in all when `done` steps of earlier levels (`levelsRun` of them) are finished
 * and a level of n steps is running: this level, then doublings until at least three levels have run and the
 * expected accepted level is reached.
 */
export function expectedLadderSteps(done: number, levelsRun: number, n: number, expected: number): number {
  let total = done + n;
  let level = n;
  for (let count = levelsRun + 1; count < 3 || level < expected; count++) {
    level *= 2;
    total += level;
  }
  return total;
}

export interface PropagationStats {
  scheme: Scheme;
  errorEstimator: 'step-doubling' | 'none (fixed steps)' | 'global step halving' | 'embedded pair';
  /** global control: the step counts tried */
  levels?: number[];
  steps: number;
  rejected: number;
  matvecs: number;
  krylovCalls: number;
  krylovSubsteps: number;
  krylovMaxDimUsed: number;
  minStep: number;
  maxStep: number;
  /** Σ of the step-doubling differences (a conservative bound: before the asymptotic regime the kept half-step
   *  result is not 2⁴ − 1 times better), 2-norm, max over states; its square bounds the infidelity */
  estimatedAmplitudeError: number;
  /** max over states and steps of |‖ψ‖ − ‖ψ₀‖| */
  maxNormDrift: number;
  wallMs: number;
}

export interface PropagationResult {
  states: Float64Array[];
  stats: PropagationStats;
}

export interface PropagatorOptions {
  krylovMaxDim?: number;
  /** the schemes this propagator can run (default CORE_SCHEMES) */
  schemes?: SchemeRegistry;
}

/**
 * A reusable propagator for one grid: the operator, the Krylov exponential and each scheme's buffers belong to the
 * instance; `step` and `propagate` allocate only per call (result arrays), never per matrix-vector product.
 */
export class Propagator {
  readonly grid: Grid;
  readonly op: SpectralOperator;
  readonly krylov: KrylovExp;
  readonly schemes: SchemeRegistry;
  private readonly instances = new Map<string, { def: SchemeDefinition; scheme: StepScheme }>();
  private readonly embeddedInstances = new Map<string, EmbeddedStepScheme>();

  constructor(grid: Grid, options: PropagatorOptions = {}) {
    this.grid = grid;
    this.op = new SpectralOperator(grid);
    this.krylov = new KrylovExp(2 * grid.n, options.krylovMaxDim ?? KRYLOV_DIM_DEFAULT);
    this.schemes = options.schemes ?? CORE_SCHEMES;
  }

  /** the instance of a registered scheme bound to this propagator's buffers (created on first use) */
  private instance(name: Scheme): { def: SchemeDefinition; scheme: StepScheme } {
    let it = this.instances.get(name);
    if (!it) {
      const def = this.schemes.get(name);
      it = { def, scheme: def.create({ grid: this.grid, op: this.op, krylov: this.krylov }) };
      this.instances.set(name, it);
    }
    return it;
  }

  /** the embedded-pair instance of a scheme that has one (created on first use) */
  private embedded(name: Scheme): EmbeddedStepScheme | null {
    const def = this.schemes.get(name);
    if (!def.embedded) return null;
    let it = this.embeddedInstances.get(name);
    if (!it) {
      it = def.embedded.create({ grid: this.grid, op: this.op, krylov: this.krylov });
      this.embeddedInstances.set(name, it);
    }
    return it;
  }

  /** pure step: returns new states ψ(s + h) (inputs untouched) */
  step(H: DrivenHamiltonian, scheme: Scheme, s: number, h: number, states: readonly Float64Array[], tolK: number): Float64Array[] {
    const out = states.map((p) => Float64Array.from(p));
    this.instance(scheme).scheme.step(H, s, h, out, tolK);
    return out;
  }

  /** propagate all states from s0 to s1 (see module comment for the error control) */
  propagate(H: DrivenHamiltonian, initial: readonly Float64Array[], s0: number, s1: number, opts: PropagateOptions = {}): PropagationResult {
    const t0 = performance.now();
    const scheme: Scheme = opts.scheme ?? DEFAULT_SCHEME;
    this.instance(scheme);
    const tol = opts.tol ?? TOL_DEFAULT;
    if (!(tol > 0) || tol >= 1) throw new RangeError(`propagator: tol ${tol} must be in (0, 1)`);
    if (!(s1 - s0 > 0)) throw new RangeError(`propagator: end time ${s1} must exceed start time ${s0}`);
    for (const p of initial) if (p.length !== 2 * this.grid.n) throw new RangeError(`propagator: state length ${p.length} must be 2N = ${2 * this.grid.n}`);
    if (opts.errorControl === 'global' && !opts.fixedSteps) return this.propagateGlobal(H, initial, s0, s1, opts, scheme, tol, t0);
    if (opts.errorControl !== undefined && opts.errorControl !== 'global' && opts.errorControl !== 'local') {
      throw new RangeError(`propagator: errorControl "${String(opts.errorControl)}" is not known; allowed: local, global`);
    }
    const embedded = opts.fixedSteps ? null : this.embedded(scheme);
    if (embedded) return this.propagateEmbedded(H, embedded, initial, s0, s1, opts, scheme, tol, t0);
    return this.propagateLocal(H, initial, s0, s1, opts, scheme, tol, t0);
  }

  /**
   * One pass with the scheme's embedded estimate: a trial step is accepted when its orthogonal error estimate is
   * ≤ √tol·h/(s₁ − s₀) (the per-unit-step budget of the module comment); the propagated solution is the pair's
   * higher-order one, so the sum of the estimates bounds the true error from above.
   */
  private propagateEmbedded(H: DrivenHamiltonian, stepper: EmbeddedStepScheme, initial: readonly Float64Array[], s0: number, s1: number,
    opts: PropagateOptions, scheme: Scheme, tol: number, t0: number): PropagationResult {
    const order = this.schemes.get(scheme).embedded?.order ?? 1;
    const exponent = errorExponent(order, true);
    const span = s1 - s0;
    const apps0 = this.op.applications;
    const states = initial.map((p) => Float64Array.from(p));
    const norms0 = states.map(norm2);
    const delta = Math.sqrt(tol);
    const samples = new SampleEmitter(opts, s0, s1);
    const stats: PropagationStats = {
      scheme, errorEstimator: 'embedded pair', steps: 0, rejected: 0, matvecs: 0, krylovCalls: 0, krylovSubsteps: 0, krylovMaxDimUsed: 0,
      minStep: Infinity, maxStep: 0, estimatedAmplitudeError: 0, maxNormDrift: 0, wallMs: 0,
    };
    stepper.reset();
    samples.emit(s0, states);
    const maxStep = opts.maxStep ?? span;
    const minStep = opts.minStep ?? span * MIN_STEP_FRACTION;
    let h = Math.min(opts.initialStep ?? span * INITIAL_STEP_FRACTION, maxStep);
    let s = s0;
    while (s < s1 - 1e-14 * span) {
      const hTry = samples.clip(s, Math.min(h, s1 - s));
      const err = stepper.attempt(H, s, hTry, states);
      if (!Number.isFinite(err)) throw new NumericalError(`Schrödinger propagation (${scheme}) produced non-finite states at s = ${s}`);
      const next = controlStep(err, hTry, h, (delta * hTry) / span, exponent, minStep, maxStep);
      h = next.h;
      if (!next.accept) {
        stats.rejected++;
        continue;
      }
      stepper.accept(states);
      stats.estimatedAmplitudeError += err;
      s += hTry;
      recordStep(stats, hTry, states, norms0);
      samples.emit(s, states);
      opts.onProgress?.(Math.min(1, (s - s0) / span));
    }
    stats.matvecs = this.op.applications - apps0;
    stats.wallMs = performance.now() - t0;
    return { states, stats };
  }

  /** see PropagateOptions.errorControl = 'global' */
  private propagateGlobal(H: DrivenHamiltonian, initial: readonly Float64Array[], s0: number, s1: number, opts: PropagateOptions,
    scheme: Scheme, tol: number, t0: number): PropagationResult {
    const delta = Math.sqrt(tol);
    let n = opts.initialSteps ?? (opts.expectedSteps ? ladderStart(opts.expectedSteps) : GLOBAL_INITIAL_STEPS);
    if (!Number.isInteger(n) || n < 1) throw new RangeError(`propagator: initialSteps ${n} must be a positive integer`);
    const maxSteps = opts.maxSteps ?? GLOBAL_MAX_STEPS;
    const levels: number[] = [];
    let prev: PropagationResult | null = null;
    let prevDiff = Infinity;
    let total = 0;
    let matvecs = 0;
    const maxOrder = this.instance(scheme).def.order;
    let order = 0; // observed order p (set once the doubling ladder converges; observed orders above the scheme's are not trusted)
    let shown = 0; // progress reported so far: the expected total can grow, the fraction never goes back
    const report = (steps: number, expectedTotal: number) => {
      shown = Math.max(shown, Math.min(0.99, steps / expectedTotal));
      opts.onProgress?.(shown);
    };
    for (;;) {
      const cap: Array<{ s: number; states: Float64Array[] }> = [];
      const done = total;
      const expectedTotal = expectedLadderSteps(done, levels.length, n, opts.expectedSteps ?? 0);
      const res = this.propagateLocal(H, initial, s0, s1, {
        ...opts, scheme, tol, fixedSteps: n, errorControl: 'local',
        onSample: opts.onSample ? (s, sts) => cap.push({ s, states: sts.map((x) => Float64Array.from(x)) }) : undefined,
        onProgress: opts.onProgress ? (f) => report(done + f * n, expectedTotal) : undefined,
      }, scheme, tol, performance.now());
      const ratio = levels.length ? n / levels[levels.length - 1] : 2;
      levels.push(n);
      total += n;
      matvecs += res.stats.matvecs;
      let accept = false;
      let estimate = Infinity;
      if (prev) {
        let d = 0;
        for (let i = 0; i < res.states.length; i++) d = Math.max(d, perpendicularDifference(prev.states[i], res.states[i]) / norm2(initial[i]));
        if (!Number.isFinite(d)) throw new NumericalError(`Schrödinger propagation produced non-finite states at ${n} steps`);
        // agreement to round-off counts only between different discretisations (more steps taken)
        if (d <= Math.max(GLOBAL_ROUNDOFF_AGREEMENT, ROUNDOFF_PER_STEP * res.stats.steps) && res.stats.steps > prev.stats.steps) {
          estimate = d;
          accept = true;
        } else if (ratio === 2 && levels.length >= 3 && levels[levels.length - 2] === 2 * levels[levels.length - 3]) {
          // two doublings in a row: ρ = d_{k−1}/d_k, error of the finest level ≈ d_k/(ρ − 1); update the order
          // the ratio is not trusted beyond the scheme's order: a pre-asymptotic ladder can converge faster for a while
          const rho = Math.min(prevDiff / d, 2 ** maxOrder);
          if (rho >= GLOBAL_MIN_RATIO) {
            estimate = d / (rho - 1);
            order = Math.log2(rho);
          }
        } else if (order > 0) {
          // after a predicted level with ratio f: error ≈ d/(f^p − 1), p from the ladder
          estimate = d / (Math.pow(ratio, order) - 1);
        }
        accept = accept || estimate <= delta;
        prevDiff = d;
      }
      prev = res;
      if (!accept && n >= maxSteps) {
        throw new NumericalError(
          `Schrödinger propagation did not reach its time-stepping budget: after ${levels.join('/')} steps the estimated ` +
            `amplitude error is ${Number.isFinite(estimate) ? estimate.toExponential(2) : 'not yet estimable'} against √tol = ${delta.toExponential(2)} ` +
            `(infidelity budget ${tol}); the largest level is ${maxSteps} steps`,
        );
      }
      if (accept) {
        for (const c of cap) opts.onSample?.(c.s, c.states);
        opts.onProgress?.(1);
        const st = res.stats;
        st.errorEstimator = 'global step halving';
        st.levels = levels;
        st.matvecs = matvecs;
        st.estimatedAmplitudeError = estimate;
        st.wallMs = performance.now() - t0;
        return { states: res.states, stats: st };
      }
      // next level: doubling until the order is known, then the predicted count (with margin) for the budget
      const f = order > 0 && Number.isFinite(estimate) ? Math.min(2, Math.max(GLOBAL_MIN_GROWTH, GLOBAL_MARGIN * Math.pow(estimate / delta, 1 / order))) : 2;
      n = Math.ceil(n * f);
    }
  }

  /** fixed steps, or step doubling with the per-step budget of the module comment */
  private propagateLocal(H: DrivenHamiltonian, initial: readonly Float64Array[], s0: number, s1: number, opts: PropagateOptions,
    scheme: Scheme, tol: number, t0: number): PropagationResult {
    const { def, scheme: stepper } = this.instance(scheme);
    const exponent = errorExponent(def.order, true);
    const span = s1 - s0;
    const kStats0 = { ...this.krylov.stats };
    const apps0 = this.op.applications;
    const states = initial.map((p) => Float64Array.from(p));
    const norms0 = states.map(norm2);
    const a = states.map((p) => new Float64Array(p.length));
    const b = states.map((p) => new Float64Array(p.length));
    const delta = Math.sqrt(tol);
    const samples = new SampleEmitter(opts, s0, s1);
    const stats: PropagationStats = {
      scheme, errorEstimator: opts.fixedSteps ? 'none (fixed steps)' : 'step-doubling', steps: 0, rejected: 0, matvecs: 0,
      krylovCalls: 0, krylovSubsteps: 0, krylovMaxDimUsed: 0, minStep: Infinity, maxStep: 0, estimatedAmplitudeError: 0,
      maxNormDrift: 0, wallMs: 0,
    };
    samples.emit(s0, states);
    let s = s0;
    const maxStep = opts.maxStep ?? span;
    const minStep = opts.minStep ?? span * MIN_STEP_FRACTION;
    let h = opts.fixedSteps ? span / opts.fixedSteps : Math.min(opts.initialStep ?? span * INITIAL_STEP_FRACTION, maxStep);
    // fixed steps: the uniform points s0 + k·h with the sample times inserted, so that refining the uniform grid
    // refines every level of the global control even where samples are denser than the steps
    let next = 1;
    while (s < s1 - 1e-14 * span) {
      let hTry: number;
      if (opts.fixedSteps) {
        while (next < opts.fixedSteps && s0 + next * h <= s + UNIFORM_SNAP * h) next++;
        hTry = samples.clip(s, (next >= opts.fixedSteps ? s1 : s0 + next * h) - s);
      } else hTry = samples.clip(s, Math.min(h, s1 - s));
      const tolK = Math.max(KRYLOV_TOL_FLOOR, (KRYLOV_SHARE * delta * hTry) / span);
      if (opts.fixedSteps) {
        stepper.step(H, s, hTry, states, tolK);
      } else {
        for (let i = 0; i < states.length; i++) {
          a[i].set(states[i]);
          b[i].set(states[i]);
        }
        stepper.step(H, s, hTry, a, tolK);
        stepper.step(H, s, hTry / 2, b, tolK / 2);
        stepper.step(H, s + hTry / 2, hTry / 2, b, tolK / 2);
        let err = 0;
        for (let i = 0; i < states.length; i++) err = Math.max(err, perpendicularDifference(a[i], b[i]) / norms0[i]);
        const next = controlStep(err, hTry, h, (delta * hTry) / span, exponent, minStep, maxStep);
        h = next.h;
        if (!next.accept) {
          stats.rejected++;
          continue;
        }
        for (let i = 0; i < states.length; i++) states[i].set(b[i]);
        stats.estimatedAmplitudeError += err;
      }
      s += hTry;
      recordStep(stats, hTry, states, norms0);
      samples.emit(s, states);
      opts.onProgress?.(Math.min(1, (s - s0) / span));
    }
    const ks = this.krylov.stats;
    stats.matvecs = this.op.applications - apps0;
    stats.krylovCalls = ks.calls - kStats0.calls;
    stats.krylovSubsteps = ks.substeps - kStats0.substeps;
    stats.krylovMaxDimUsed = ks.maxDimUsed;
    stats.wallMs = performance.now() - t0;
    return { states, stats };
  }
}

/** the requested sample times in [s0, s1], reported once each when the integration reaches them */
class SampleEmitter {
  private readonly times: number[];
  private next = 0;
  private readonly span: number;
  constructor(private readonly opts: PropagateOptions, s0: number, s1: number) {
    this.times = [...(opts.sampleTimes ?? [])].filter((x) => x >= s0 && x <= s1).sort((x, y) => x - y);
    this.span = s1 - s0;
  }
  /** the step from s shortened to land on the next sample time */
  clip(s: number, h: number): number {
    const t = this.times;
    return this.next < t.length && t[this.next] > s ? Math.min(h, t[this.next] - s) : h;
  }
  emit(s: number, states: readonly Float64Array[]): void {
    const t = this.times;
    while (this.next < t.length && t[this.next] <= s + 1e-12 * this.span) {
      this.opts.onSample?.(t[this.next], states);
      this.next++;
    }
  }
}

/** convenience: one-shot propagation with a fresh Propagator on the given registry */
export function propagate(H: DrivenHamiltonian, initial: readonly Float64Array[], s0: number, s1: number, opts: PropagateOptions = {}, schemes: SchemeRegistry = CORE_SCHEMES): PropagationResult {
  return new Propagator(H.grid, { krylovMaxDim: opts.krylovMaxDim, schemes }).propagate(H, initial, s0, s1, opts);
}

/**
 * ‖d − ⟨b̂|d⟩ b̂‖ with d = a − b, b̂ = b/‖b‖: the part of the difference orthogonal to the state. Only this part
 * changes the fidelity 1 − |⟨ψ_exact|ψ⟩|² ≈ ‖d_⊥‖² (a global phase error does not), so it is the error the
 * infidelity budget has to control.
 */
export function perpendicularDifference(a: Float64Array, b: Float64Array): number {
  return perpendicularNorm(a, b, true);
}

/**
 * The step control shared by every local controller: accept when err ≤ allowed (or the step is already the
 * smallest); the next step from the shared controller (integrate/controller.ts); a step cut short by a sample time
 * or the end does not shrink the next one.
 */
function controlStep(err: number, hTry: number, h: number, allowed: number, exponent: number, minStep: number, maxStep: number): { accept: boolean; h: number } {
  const factor = stepFactor(err / allowed, exponent);
  if (err > allowed && hTry > minStep) return { accept: false, h: Math.max(minStep, hTry * factor) };
  return { accept: true, h: hTry < h ? Math.max(h, Math.min(maxStep, hTry * factor)) : Math.min(maxStep, hTry * factor) };
}

/** an accepted step of size hTry into the statistics (steps, step range, norm drift) */
function recordStep(stats: PropagationStats, hTry: number, states: readonly Float64Array[], norms0: readonly number[]): void {
  stats.steps++;
  stats.minStep = Math.min(stats.minStep, hTry);
  stats.maxStep = Math.max(stats.maxStep, hTry);
  for (let i = 0; i < states.length; i++) stats.maxNormDrift = Math.max(stats.maxNormDrift, Math.abs(norm2(states[i]) - norms0[i]));
}
