/**
 * Quantum against classical dispersion in scaled variables (physics.md §2–§3).
 *
 * With the depth V₀ and width w of the well, v = u/V₀, y = ξ/w and the scaled λ, T = τV₀/w, the natural-units
 * KdV flow u_τ = 6uu_ξ − u_ξξξ becomes
 *
 *     v_T = 6 v v_y − δ² v_yyy,      δ² = 1/(V₀w²) = ħ²/(2mV₀w²)   (natural units: ħ = 1, 2m = 1)
 *
 * and the classical (Hopf) flow is the same equation with δ = 0. Both start from the same scaled shape v₀(y), so
 * at fixed T their distance depends on δ alone; first-order perturbation theory in the dispersive term gives
 * distance ∝ δ² while T is below breaking and δ is small (the dispersive term is ∝ ħ²). The exponent is fitted by
 * ordinary least squares in log–log with the usual standard error of the slope (e.g. Press et al., Numerical
 * Recipes, 3rd ed. 2007, §15.2, with σ estimated from the residuals).
 */
import type { DenseFlow } from '../flow/dense.ts';
import { integrateFlow, type FlowEquation } from '../flow/kdv.ts';
import { makeGrid, type Grid } from '../spectral/grid.ts';
import { resample } from '../spectral/ops.ts';
import { makeRamp, type RampKind } from '../protocol/ramp.ts';
import { phaseSpaceCheck, shellStarts, suggestSteps, wellShape } from './cd.ts';
import { FourierProfile, spectralSequence } from './field.ts';
import { hopfBreaking } from './hopf.ts';

/** the 1 % criterion: relative max distance 0.01 (common practice) */
export const DISTANCE_THRESHOLD = 0.01;
/** bisection steps on the dense output for a threshold crossing (2⁻⁴⁰ of a sampling interval) */
export const CROSSING_BISECTIONS = 40;

export interface Distance {
  /** max|a − b| / max|b| */
  max: number;
  /** ‖a − b‖₂ / ‖b‖₂ */
  l2: number;
}

/** relative distance of a from the reference b (max and L² norms on the grid) */
export function relativeDistance(a: Float64Array, b: Float64Array): Distance {
  let dm = 0, bm = 0, d2 = 0, b2 = 0;
  for (let j = 0; j < a.length; j++) {
    const d = a[j] - b[j];
    dm = Math.max(dm, Math.abs(d));
    bm = Math.max(bm, Math.abs(b[j]));
    d2 += d * d;
    b2 += b[j] * b[j];
  }
  return { max: bm > 0 ? dm / bm : dm, l2: b2 > 0 ? Math.sqrt(d2 / b2) : Math.sqrt(d2) };
}

export interface DistanceCurve {
  lambda: number[];
  max: number[];
  l2: number[];
}

/** a potential sequence sampled on the grid: u(·, λ) into out */
export type Sampler = (lambda: number, out: Float64Array) => void;

/** the dense output of a flow run as a Sampler */
export function denseSampler(dense: DenseFlow): Sampler {
  return (lambda, out) => {
    dense.at(lambda, out);
  };
}

/** relative distance of sequence a from the reference b at each λ */
export function distanceCurve(n: number, a: Sampler, b: Sampler, lambdas: readonly number[]): DistanceCurve {
  const ua = new Float64Array(n), ub = new Float64Array(n);
  const out: DistanceCurve = { lambda: [], max: [], l2: [] };
  for (const l of lambdas) {
    a(l, ua);
    b(l, ub);
    const d = relativeDistance(ua, ub);
    out.lambda.push(l);
    out.max.push(d.max);
    out.l2.push(d.l2);
  }
  return out;
}

/**
 * First λ at which the relative max distance of a from b reaches `threshold`: the first sampled crossing of the
 * curve, refined by bisection on the samplers. null when the curve stays below the threshold.
 */
export function thresholdCrossing(n: number, a: Sampler, b: Sampler, curve: DistanceCurve, threshold = DISTANCE_THRESHOLD): number | null {
  const k = curve.max.findIndex((d) => d >= threshold);
  if (k < 0) return null;
  if (k === 0) return curve.lambda[0];
  const ua = new Float64Array(n), ub = new Float64Array(n);
  let lo = curve.lambda[k - 1], hi = curve.lambda[k];
  for (let i = 0; i < CROSSING_BISECTIONS; i++) {
    const mid = 0.5 * (lo + hi);
    a(mid, ua);
    b(mid, ub);
    if (relativeDistance(ua, ub).max >= threshold) hi = mid;
    else lo = mid;
  }
  return 0.5 * (lo + hi);
}

export interface PowerFit {
  /** slope of log y against log x */
  exponent: number;
  /** standard error of the slope */
  uncertainty: number;
  /** y ≈ prefactor · x^exponent */
  prefactor: number;
  /** rms of the log residuals */
  residual: number;
  points: number;
}

/** least-squares line through (log x, log y); standard error from the residuals (needs ≥ 3 points) */
export function fitPowerLaw(xs: readonly number[], ys: readonly number[]): PowerFit {
  const pts = xs.map((x, i) => [Math.log(x), Math.log(ys[i])] as const).filter(([a, b]) => Number.isFinite(a) && Number.isFinite(b));
  const n = pts.length;
  if (n < 2) return { exponent: NaN, uncertainty: NaN, prefactor: NaN, residual: NaN, points: n };
  const mx = pts.reduce((s, p) => s + p[0], 0) / n;
  const my = pts.reduce((s, p) => s + p[1], 0) / n;
  let sxx = 0, sxy = 0;
  for (const [a, b] of pts) {
    sxx += (a - mx) * (a - mx);
    sxy += (a - mx) * (b - my);
  }
  const slope = sxy / sxx;
  const icpt = my - slope * mx;
  let rss = 0;
  for (const [a, b] of pts) rss += (b - icpt - slope * a) ** 2;
  const uncertainty = n > 2 ? Math.sqrt(rss / (n - 2) / sxx) : NaN;
  return { exponent: slope, uncertainty, prefactor: Math.exp(icpt), residual: Math.sqrt(rss / n), points: n };
}

export interface ScaledProblem {
  /** grid in y = ξ/w */
  grid: Grid;
  /** v₀ = u₀/V₀ on it */
  v0: Float64Array;
  depth: number;
  width: number;
  /** δ² = 1/(V₀w²) of the natural-units problem */
  delta2: number;
  /** first breaking of the Hopf flow in scaled λ, T_b = 1/max(6 ∂_y v₀) */
  breaking: number;
}

/**
 * The scaled shape of a natural-units initial potential (y = ξ/w, v = u/V₀), on `points` grid points (spectral
 * resampling of the same samples when it differs from the grid's).
 */
export function scaledProblem(grid: Grid, u0: Float64Array, depth: number, width: number, points = grid.n): ScaledProblem {
  const g = makeGrid(grid.length / width, points);
  const v0 = (points === grid.n ? u0 : resample(u0, points)).map((u) => u / depth);
  return { grid: g, v0, depth, width, delta2: 1 / (depth * width * width), breaking: hopfBreaking(g, v0).lambda };
}

/** scaled λ T = τ V₀/w and back */
export function toScaledLambda(tau: number, depth: number, width: number): number {
  return (tau * depth) / width;
}
export function fromScaledLambda(T: number, depth: number, width: number): number {
  return (T * width) / depth;
}

export interface ScalingPoint {
  delta: number;
  delta2: number;
  /** relative distance of the classical (Hopf) from the quantum (KdV) sequence at the fixed scaled λ */
  distance: Distance;
  /** distance against scaled λ on [0, T*] */
  curve: DistanceCurve;
  /** scaled λ where the relative max distance reaches 1 % (null: not before T*) */
  lambda1pct: number | null;
  /** the KdV run for this δ (dense output in scaled variables) */
  dense: DenseFlow;
}

export interface ScalingStudy {
  lambdaScaled: number;
  breakingScaled: number;
  points: ScalingPoint[];
  fitMax: PowerFit;
  fitL2: PowerFit;
  classical: DenseFlow;
  /** spectral tail of the classical state at T* (flow/kdv.ts FlowOperator.tail): its resolution on the grid */
  classicalTail: number;
  /** largest spectral tail of the quantum states at T* */
  quantumTail: number;
}

export interface ScalingOptions {
  deltas: readonly number[];
  /** fixed scaled λ T* (must lie before the Hopf breaking T_b) */
  lambdaScaled: number;
  tolerance: number;
  /** samples of the distance curve on [0, T*] */
  curveSamples?: number;
}

/**
 * For each δ integrate v_T = 6vv_y − δ²v_yyy and the Hopf flow v_T = 6vv_y from v₀ to T* (flow/kdv.ts), measure
 * the relative distance (max and L²), its curve in T and the 1 % crossing, and fit distance ∝ δ^p.
 */
export function scalingStudy(problem: ScaledProblem, opts: ScalingOptions): ScalingStudy {
  const { grid, v0, breaking } = problem;
  const T = opts.lambdaScaled;
  if (!(T > 0 && T < breaking)) throw new RangeError(`scaled λ ${T} must lie in (0, T_b = ${breaking}) (before the classical flow breaks)`);
  const samples = opts.curveSamples ?? 21;
  const lambdas = Array.from({ length: samples }, (_, i) => (T * i) / (samples - 1));
  const hopfEq: FlowEquation = { alpha: -6, beta: 0, drift: 0 };
  // before breaking the Hopf solution is smooth; its resolution is reported through the spectral tail
  const hopf = integrateFlow(grid, hopfEq, v0, { tolerance: opts.tolerance, frames: [T], detectBreaking: false });
  const hopfEnd = hopf.frames[hopf.frames.length - 1];
  const points: ScalingPoint[] = [];
  let quantumTail = 0;
  for (const delta of opts.deltas) {
    const run = integrateFlow(grid, { alpha: -6, beta: delta * delta, drift: 0 }, v0, { tolerance: opts.tolerance, frames: [T] });
    quantumTail = Math.max(quantumTail, run.tail);
    // the classical sequence measured against the quantum one (the correct design for this δ)
    const distance = relativeDistance(hopfEnd, run.frames[run.frames.length - 1]);
    const curve = distanceCurve(grid.n, denseSampler(hopf.dense), denseSampler(run.dense), lambdas);
    const lambda1pct = thresholdCrossing(grid.n, denseSampler(hopf.dense), denseSampler(run.dense), curve);
    points.push({ delta, delta2: delta * delta, distance, curve, lambda1pct, dense: run.dense });
  }
  const ds = points.map((p) => p.delta);
  return {
    lambdaScaled: T,
    breakingScaled: breaking,
    points,
    fitMax: fitPowerLaw(ds, points.map((p) => p.distance.max)),
    fitL2: fitPowerLaw(ds, points.map((p) => p.distance.l2)),
    classical: hopf.dense,
    classicalTail: hopf.tail,
    quantumTail,
  };
}

export interface DriftPoint {
  delta: number;
  /** largest and mean over trajectories of max_s |H₀(s) − H₀(0)|, relative to the depth (scaled energy) */
  energyMax: number;
  energyMean: number;
  /** largest and mean relative action drift over trajectories */
  actionMax: number;
  actionMean: number;
}

export interface DriftSweep {
  /** scaled duration of the ramp 0 → T* */
  duration: number;
  steps: number[];
  trajectories: number;
  points: DriftPoint[];
  /** fits of the mean drifts against δ (expected exponent 2: dH₀/ds = −λ′u_ξξξ is the dispersive term) */
  energyFit: PowerFit;
  actionFit: PowerFit;
}

export interface DriftOptions {
  shells: number;
  phases: number;
  /** ramp duration in scaled time (units of w/√V₀ · t₀) */
  duration: number;
  ramp: RampKind;
}

/**
 * Classical consequence of the quantum sequence, δ by δ: trajectories on energy shells of p² + v₀ under the
 * classical CD Hamiltonian q² + v + T′(−4q³ − 6vq) (cd.ts) along each δ's KdV sequence (the scaled form of the
 * natural-units Hamiltonian: x = wy, p = √V₀ q, s = (w/√V₀)σ leave it unchanged), with the drifts of energy and
 * action per δ and their power-law fits.
 */
export function driftSweep(problem: ScaledProblem, study: ScalingStudy, opts: DriftOptions): DriftSweep {
  const { grid } = problem;
  const profile = new FourierProfile(grid, problem.v0);
  const starts = shellStarts(profile, grid.x, opts.shells, opts.phases);
  const ramp = makeRamp(opts.ramp, opts.duration, study.lambdaScaled);
  const shape = wellShape(profile, grid.x);
  const steps: number[] = [];
  const points: DriftPoint[] = study.points.map((pt) => {
    const field = spectralSequence(grid, pt.dense);
    const n = suggestSteps(shape, ramp);
    steps.push(n);
    const res = phaseSpaceCheck(field, ramp, starts, { steps: n, xMin: grid.x[0], xMax: grid.x[grid.n - 1], scanStep: grid.dx / 4 });
    const e = res.trajectories.map((t) => t.energyDriftMax);
    const a = res.trajectories.map((t) => t.actionDriftMax);
    const mean = (v: number[]) => v.reduce((s, x) => s + x, 0) / v.length;
    return { delta: pt.delta, energyMax: Math.max(...e), energyMean: mean(e), actionMax: Math.max(...a), actionMean: mean(a) };
  });
  const ds = points.map((p) => p.delta);
  return {
    duration: opts.duration,
    steps,
    trajectories: starts.length,
    points,
    energyFit: fitPowerLaw(ds, points.map((p) => p.energyMean)),
    actionFit: fitPowerLaw(ds, points.map((p) => p.actionMean)),
  };
}
