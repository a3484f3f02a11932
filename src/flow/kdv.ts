/**
 * Pseudo-spectral integrator for the generalised KdV / Hopf equation on a periodic grid
 *
 *     u_t + α u u_x + β u_xxx + c u_x = 0          (β = 0: dispersionless Hopf / inviscid Burgers)
 *
 * In Fourier space û_t = L û + N(û) with L = i(βk³ − ck) (k odd: Nyquist zeroed) and
 * N(û) = −(α/2) ik · P₂/₃ F[(F⁻¹û)²] (2/3-rule dealiasing, Orszag, J. Atmos. Sci. 28, 1074, 1971).
 * Time stepping: the embedded exponential Runge–Kutta pair ETD5(3) (integrate/etd-pair.ts; Whalen, Brio & Moloney,
 * J. Comput. Phys. 280, 579, 2015): six evaluations of N per step, the last (N at the new point) serving as the
 * next step's first stage and the dense output's rate, and an error estimate from the stages already computed; the
 * step factor comes from the shared controller (integrate/controller.ts) with the embedded order. Step sizes live on a geometric ladder so the exponential coefficients can be cached
 * (physics.md §5); steps are clipped to land exactly on requested frames. Unless the
 * caller declines it (`keepDense: false`), every accepted step is kept for dense output (cubic Hermite in λ with
 * u_λ from the right-hand side), so that the Schrödinger solver can ask for u at any λ.
 *
 * Frame: the integrator may work in a frame moving at c_f (`frameSpeed`), w(ξ, λ) = u(ξ + c_f λ, λ), which obeys the
 * same equation with drift c − c_f; frames are shifted back exactly (spectral/translate.ts) and the dense output
 * carries the frame. The stage values of an exponential integrator are polynomial in λ, so its error grows with the
 * λ-derivatives of N along the solution, |k v|^p for a structure moving at v: in the frame of the fastest soliton
 * the dominant ones shrink (two-soliton split of −6 sech², N = 1024: 240× smaller error at 800 fixed steps, measured).
 */
import { NumericalError } from '../core/errors.ts';
import { errorExponent, stepFactor } from '../integrate/controller.ts';
import { etdPairCoefficients, etdPairStep, etdPairWorkspace, WHALEN_ETD53, type EtdPairCoefficients, type EtdPairTable, type EtdPairWorkspace } from '../integrate/etd-pair.ts';
import { RealFFT } from '../spectral/fft.ts';
import type { Grid } from '../spectral/grid.ts';
import { translateHalfSpectrum } from '../spectral/translate.ts';
import { DenseFlow } from './dense.ts';


/** ladder of step sizes h = 2^(j/LADDER_DIVISIONS): eight rungs per octave lose at most 8 % of the step the
 *  controller asks for and keep the coefficient cache small */
export const LADDER_DIVISIONS = 8;
/** the embedded pair of the flow (integrate/etd-pair.ts) */
export const FLOW_PAIR: EtdPairTable = WHALEN_ETD53;
/** coefficient sets kept before the cache is emptied (ladder rungs and frame-landing steps; bounds memory) */
const COEFFICIENT_CACHE_SIZE = 256;
/** default cap on step attempts (a runaway guard far above any design run) */
const MAX_STEPS_DEFAULT = 2_000_000;
/** memory the dense output may hold by default: 1 GiB keeps a design well inside a 2-core, few-GB machine while the
 *  largest sane designs (N = 8192, 10⁴ steps: 0.9 GB) fit (common practice) */
export const DENSE_BYTES_DEFAULT = 2 ** 30;
/** a dispersionless flow is declared broken when the top of the retained band reaches this amplitude relative
 * to the largest mode: the truncated Fourier series no longer represents the steepening front (common practice) */
export const BREAKING_TAIL = 1e-6;
/** give up when the step falls below this fraction of the flow length (stalled controller) */
export const MIN_STEP_FRACTION = 1e-9;

export interface FlowEquation {
  alpha: number;
  beta: number;
  /** co-moving drift c */
  drift: number;
}

export interface FlowOptions {
  /** local error per step relative to max|u(0)| */
  tolerance: number;
  /** ascending λ values at which frames are stored; the last one is the flow's end */
  frames: readonly number[];
  maxSteps?: number;
  /** largest memory of the dense output in bytes (default DENSE_BYTES_DEFAULT); beyond it the flow fails with a
   *  NumericalError that states the cost instead of growing without bound */
  maxDenseBytes?: number;
  /** detect the gradient catastrophe (default: when β = 0) */
  detectBreaking?: boolean;
  /** keep the dense output (default true); without it `FlowRun.dense` holds only the start and memory stays
   *  proportional to the frames */
  keepDense?: boolean;
  onProgress?: (lambda: number, lambdaEnd: number) => void;
  /** speed c_f of the frame the integrator works in (module comment; default 0, the lab frame): frames and dense
   *  output are returned in the lab frame whatever it is; it changes only the cost and the error's make-up */
  frameSpeed?: number;
}

export interface FlowStats {
  accepted: number;
  rejected: number;
  nonlinearEvaluations: number;
  /** coefficient sets computed (distinct step sizes: ladder rungs and frame-landing steps) */
  coefficientSets: number;
  wallSeconds: number;
  /** sum of the local error estimates (embedded minus propagated solution, RMS): a conservative global error indicator */
  errorEstimate: number;
  minStep: number;
  maxStep: number;
}

export interface BreakingInfo {
  /** last λ the integrator reached */
  lambdaReached: number;
  /** breaking λ extrapolated from the numerical gradient along the steepest characteristic: λ + 1/max(−αu_x) */
  lambdaExtrapolated: number;
  reason: string;
}

export interface FlowRun {
  lambdas: number[];
  frames: Float64Array[];
  dense: DenseFlow;
  stats: FlowStats;
  breaking: BreakingInfo | null;
  /** spectral tail of the last state (FlowOperator.tail) */
  tail: number;
  /** sqrt of the spectral energy of u(0) beyond the retained band, relative to the rest (dropped at the start) */
  discardedTail: number;
}

/** Right-hand side pieces on a given grid: linear symbols and the dealiased nonlinear term. */
export class FlowOperator {
  readonly grid: Grid;
  readonly eq: FlowEquation;
  readonly modes: number;
  /** L = i·lim (the linear part is purely imaginary) */
  readonly lim: Float64Array;
  readonly fft: RealFFT;
  /** nonlinear prefactor −(α/2) k · mask (multiplies i·F[u²]) */
  private readonly gk: Float64Array;
  private readonly sb: Float64Array;
  readonly cutoff: number;
  evaluations = 0;

  constructor(grid: Grid, eq: FlowEquation) {
    this.grid = grid;
    this.eq = eq;
    const n = grid.n;
    this.modes = n / 2 + 1;
    this.fft = new RealFFT(n);
    this.lim = new Float64Array(this.modes);
    this.gk = new Float64Array(this.modes);
    this.cutoff = Math.floor(n / 3);
    for (let m = 0; m < this.modes; m++) {
      const k = m === n / 2 ? 0 : grid.kHalf[m];
      this.lim[m] = eq.beta * k * k * k - eq.drift * k;
      this.gk[m] = m <= this.cutoff ? -(eq.alpha / 2) * k : 0;
    }
    this.sb = new Float64Array(n + 2);
  }

  /** out = N(v) = −(α/2) ik P F[(F⁻¹v)²] */
  readonly nonlinear = (v: Float64Array, out: Float64Array): void => {
    this.evaluations++;
    const s = this.sb;
    this.fft.squareOf(v, s);
    const g = this.gk;
    // modes beyond the cut have g = 0: they are never written, so callers' buffers keep their zeros there
    for (let m = 0; m <= this.cutoff; m++) {
      // i g (a + ib) = −g b + i g a
      out[2 * m] = -g[m] * s[2 * m + 1];
      out[2 * m + 1] = g[m] * s[2 * m];
    }
  };

  /** û_t = L v + nv, written into out */
  timeDerivative(v: Float64Array, nv: Float64Array, out: Float64Array): void {
    for (let m = 0; m < this.modes; m++) {
      const li = this.lim[m];
      out[2 * m] = -li * v[2 * m + 1] + nv[2 * m];
      out[2 * m + 1] = li * v[2 * m] + nv[2 * m + 1];
    }
  }

  /**
   * Resolution indicator: the largest amplitude in the top tenth of the retained band (m in [0.9c, c]) relative
   * to the largest amplitude of all non-constant modes. A resolved smooth field decays to round-off there.
   */
  tail(v: Float64Array): number {
    let all = 0;
    let top = 0;
    const lo = Math.floor(0.9 * this.cutoff);
    for (let m = 1; m <= this.cutoff; m++) {
      const e = v[2 * m] * v[2 * m] + v[2 * m + 1] * v[2 * m + 1];
      if (e > all) all = e;
      if (m >= lo && e > top) top = e;
    }
    return all > 0 ? Math.sqrt(top / all) : 0;
  }
}

function ladderStep(j: number): number {
  return Math.pow(2, j / LADDER_DIVISIONS);
}

/** RMS over the physical grid of a half spectrum (Parseval), first `active` modes */
function rmsNorm(a: Float64Array, active: number, n: number): number {
  let s = 0;
  for (let m = 0; m < active; m++) {
    const dr = a[2 * m];
    const di = a[2 * m + 1];
    const w = m === 0 || m === n / 2 ? 1 : 2;
    s += w * (dr * dr + di * di);
  }
  return Math.sqrt(s) / n;
}

/**
 * Half spectrum of u0 restricted to the retained (dealiased) band m ≤ N/3. What the initial potential holds beyond
 * it is returned as `discardedTail` (sqrt of its spectral energy relative to the rest) and dropped: it would only
 * propagate linearly and alias into the products.
 */
function retainedSpectrum(op: FlowOperator, u0: Float64Array): { v: Float64Array; discardedTail: number } {
  const v = new Float64Array(2 * op.modes);
  op.fft.forward(u0, v);
  const active = op.cutoff + 1;
  let discarded = 0;
  let kept = 0;
  for (let m = 0; m < op.modes; m++) {
    const e = v[2 * m] * v[2 * m] + v[2 * m + 1] * v[2 * m + 1];
    if (m >= active) {
      discarded += e;
      v[2 * m] = 0;
      v[2 * m + 1] = 0;
    } else if (m > 0) kept += e;
  }
  return { v, discardedTail: kept > 0 ? Math.sqrt(discarded / kept) : 0 };
}

/**
 * Resolution of a potential u on the flow's grid: the share of its spectrum beyond the dealiased band
 * (`discardedTail`, as in retainedSpectrum) and the top-of-band indicator of what remains (FlowOperator.tail).
 */
export function spectralResolution(grid: Grid, eq: FlowEquation, u: Float64Array): { discardedTail: number; tail: number } {
  const op = new FlowOperator(grid, eq);
  const { v, discardedTail } = retainedSpectrum(op, u);
  return { discardedTail, tail: op.tail(v) };
}

/** coefficient sets of the flow's pair by step size (steps live on a ladder, so few distinct sizes occur) */
class CoefficientCache {
  private readonly cache = new Map<number, EtdPairCoefficients>();
  /** sets computed so far */
  computed = 0;
  constructor(private readonly lim: Float64Array) {}
  get(h: number): EtdPairCoefficients {
    let c = this.cache.get(h);
    if (!c) {
      c = etdPairCoefficients(FLOW_PAIR, h, this.lim);
      this.computed++;
      if (this.cache.size > COEFFICIENT_CACHE_SIZE) this.cache.clear();
      this.cache.set(h, c);
    }
    return c;
  }
}

/**
 * One attempt of the embedded pair (module comment): `attempt` writes y(t + h) into out and N of it into nOut and
 * returns the RMS of the embedded error estimate.
 */
class EmbeddedStepper {
  private readonly err: Float64Array;
  private readonly ws: EtdPairWorkspace;
  readonly coefficients: CoefficientCache;
  constructor(private readonly op: FlowOperator, private readonly active: number) {
    this.err = new Float64Array(2 * op.modes);
    this.ws = etdPairWorkspace(FLOW_PAIR, op.modes);
    this.coefficients = new CoefficientCache(op.lim.subarray(0, active));
  }
  attempt(h: number, v: Float64Array, nv: Float64Array, out: Float64Array, nOut: Float64Array): number {
    const { op, active, err } = this;
    etdPairStep(this.coefficients.get(h), op.nonlinear, v, nv, out, nOut, err, this.ws, active);
    return rmsNorm(err, active, op.grid.n);
  }
}

/**
 * Gradient catastrophe of a dispersionless flow: when the spectral tail exceeds BREAKING_TAIL the front is no longer
 * resolved; the breaking λ is extrapolated along the steepest characteristic, where 1/max(−αu_x) decreases linearly
 * to zero. Returns null while the field is resolved.
 */
function detectBreaking(op: FlowOperator, v: Float64Array, t: number, uxSpec: Float64Array, ux: Float64Array): BreakingInfo | null {
  const tail = op.tail(v);
  if (!(tail > BREAKING_TAIL)) return null;
  const { grid } = op;
  const n = grid.n;
  for (let m = 0; m < op.modes; m++) {
    const k = m === n / 2 ? 0 : grid.kHalf[m];
    uxSpec[2 * m] = -k * v[2 * m + 1];
    uxSpec[2 * m + 1] = k * v[2 * m];
  }
  op.fft.inverse(uxSpec, ux);
  let g = 0;
  for (let i = 0; i < n; i++) g = Math.max(g, -op.eq.alpha * ux[i]);
  return {
    lambdaReached: t,
    lambdaExtrapolated: g > 0 ? t + 1 / g : NaN,
    reason: `the dispersionless front steepened beyond the grid's resolution (spectral tail ${tail.toExponential(2)} > ${BREAKING_TAIL})`,
  };
}

/** Frames at the requested λ and the dense record of every accepted step. */
class FlowRecorder {
  readonly lambdas: number[] = [];
  readonly frames: Float64Array[] = [];
  readonly dense: DenseFlow;
  private readonly dv: Float64Array;
  private readonly maxPoints: number;
  private readonly shifted: Float64Array;
  constructor(private readonly op: FlowOperator, private readonly active: number, private readonly maxBytes: number, private readonly tEnd: number, private readonly keep: boolean, private readonly frameSpeed: number) {
    this.dense = new DenseFlow(op.grid.n, new RealFFT(op.grid.n), op.grid.length, frameSpeed);
    this.dv = new Float64Array(2 * op.modes);
    this.shifted = new Float64Array(2 * op.modes);
    this.maxPoints = Math.floor(maxBytes / DenseFlow.bytesPerPoint(active));
  }
  /** dense point (λ, ŵ, ∂_λŵ) in the integrator's frame; fails once the record would pass its memory budget */
  store(t: number, v: Float64Array, nv: Float64Array): void {
    if (!this.keep && this.dense.lambdas.length > 0) return;
    if (this.dense.lambdas.length >= this.maxPoints) {
      const perPoint = DenseFlow.bytesPerPoint(this.active);
      const projected = (this.dense.lambdas.length * perPoint * this.tEnd) / Math.max(t, Number.MIN_VALUE);
      throw new NumericalError(
        `the flow needs more memory than its budget: ${this.dense.lambdas.length} steps to λ = ${t.toPrecision(4)} of ${this.tEnd} ` +
          `hold ${(this.maxBytes / 2 ** 20).toFixed(0)} MiB of dense output (about ${(projected / 2 ** 30).toPrecision(3)} GiB to the end); ` +
          `a deeper or narrower trap, a longer flow or more grid points need more steps`,
      );
    }
    this.op.timeDerivative(v, nv, this.dv);
    this.dense.push(t, v, this.dv, this.active);
  }
  /** physical frame at λ, in the lab */
  frame(t: number, v: Float64Array): void {
    const out = new Float64Array(this.op.grid.n);
    this.shifted.set(v);
    translateHalfSpectrum(this.shifted, this.active, this.frameSpeed * t, this.op.grid.length);
    this.op.fft.inverse(this.shifted, out);
    this.lambdas.push(t);
    this.frames.push(out);
  }
}

/** initial step: a fraction of the nonlinear time scale 1/(|α| max|u| k_cut), as a ladder index */
function initialLadderIndex(op: FlowOperator, scale: number, tEnd: number): number {
  const kCut = (2 * Math.PI * op.cutoff) / op.grid.length;
  const nlRate = Math.abs(op.eq.alpha) * scale * kCut + 1e-300;
  return Math.floor(LADDER_DIVISIONS * Math.log2(Math.min(0.5 / nlRate, tEnd / 10)));
}

/** Integrate u_t + αuu_x + βu_xxx + cu_x = 0 from u0 (at λ = 0) through the requested frames. */
export function integrateFlow(grid: Grid, eq: FlowEquation, u0: Float64Array, opts: FlowOptions): FlowRun {
  const started = performance.now();
  const frameSpeed = opts.frameSpeed ?? 0;
  if (!Number.isFinite(frameSpeed)) throw new RangeError(`flow frame speed must be finite, got ${frameSpeed}`);
  const op = new FlowOperator(grid, { ...eq, drift: eq.drift - frameSpeed });
  const frames = [...opts.frames];
  const tEnd = frames[frames.length - 1];
  if (!(tEnd > 0)) throw new RangeError(`flow end λ must be positive, got ${tEnd}`);
  let scale = 0;
  for (let j = 0; j < grid.n; j++) scale = Math.max(scale, Math.abs(u0[j]));
  if (scale === 0) scale = 1;
  const { v, discardedTail } = retainedSpectrum(op, u0);
  const active = op.cutoff + 1;
  const recorder = new FlowRecorder(op, active, opts.maxDenseBytes ?? DENSE_BYTES_DEFAULT, tEnd, opts.keepDense ?? true, frameSpeed);
  const loop = runFlowLoop(op, v, frames, scale, recorder, opts);
  const ls = loop.stats;
  const stats: FlowStats = {
    accepted: ls.accepted, rejected: ls.rejected, nonlinearEvaluations: op.evaluations, coefficientSets: loop.coefficientSets,
    wallSeconds: (performance.now() - started) / 1000, errorEstimate: ls.errorEstimate, minStep: ls.minStep, maxStep: ls.maxStep,
  };
  return { lambdas: recorder.lambdas, frames: recorder.frames, dense: recorder.dense, stats, breaking: loop.breaking, tail: op.tail(loop.v), discardedTail };
}

interface LoopResult {
  v: Float64Array;
  breaking: BreakingInfo | null;
  coefficientSets: number;
  stats: Omit<FlowStats, 'nonlinearEvaluations' | 'coefficientSets' | 'wallSeconds'>;
}

/**
 * The driver: ladder steps, clipped to land exactly on each frame, accepted when the embedded estimate is
 * within tolerance·max|u(0)|; every accepted step is stored for dense output.
 */
function runFlowLoop(op: FlowOperator, v0: Float64Array, frames: readonly number[], scale: number, recorder: FlowRecorder, opts: FlowOptions): LoopResult {
  const modes = op.modes;
  const active = op.cutoff + 1;
  const tEnd = frames[frames.length - 1];
  const tolAbs = opts.tolerance * scale;
  const detect = opts.detectBreaking ?? op.eq.beta === 0;
  const maxSteps = opts.maxSteps ?? MAX_STEPS_DEFAULT;
  const exponent = errorExponent(FLOW_PAIR.embeddedOrder);
  let v = v0;
  let nv: Float64Array = new Float64Array(2 * modes);
  op.nonlinear(v, nv);
  let vNew: Float64Array = new Float64Array(2 * modes);
  let nvNew: Float64Array = new Float64Array(2 * modes);
  const ux = new Float64Array(op.grid.n);
  const uxSpec = new Float64Array(2 * modes);
  const stepper = new EmbeddedStepper(op, active);
  recorder.store(0, v, nv);
  let fi = 0;
  // frames at λ ≤ 0: the field the integrator actually evolves, u₀ restricted to the retained band
  for (; fi < frames.length && frames[fi] <= 0; fi++) recorder.frame(frames[fi], v);
  let j = initialLadderIndex(op, scale, tEnd);
  const stats = { accepted: 0, rejected: 0, errorEstimate: 0, minStep: Infinity, maxStep: 0 };
  let t = 0;
  let breaking: BreakingInfo | null = null;
  while (fi < frames.length) {
    if (stats.accepted + stats.rejected >= maxSteps) throw new NumericalError(`flow integrator exceeded ${maxSteps} steps at λ = ${t}`);
    const hLadder = ladderStep(j);
    const target = frames[fi];
    const clipped = t + hLadder >= target - 1e-14 * Math.max(1, target);
    const h = clipped ? target - t : hLadder;
    if (h < MIN_STEP_FRACTION * tEnd) {
      breaking = { lambdaReached: t, lambdaExtrapolated: NaN, reason: `step size fell below ${MIN_STEP_FRACTION * tEnd} at λ = ${t}` };
      break;
    }
    const err = stepper.attempt(h, v, nv, vNew, nvNew);
    const ratio = err / tolAbs;
    if (ratio <= 1 && Number.isFinite(ratio)) {
      [v, vNew] = [vNew, v];
      [nv, nvNew] = [nvNew, nv];
      t = clipped ? target : t + h;
      stats.accepted++;
      stats.errorEstimate += err;
      stats.minStep = Math.min(stats.minStep, h);
      stats.maxStep = Math.max(stats.maxStep, h);
      recorder.store(t, v, nv);
      if (clipped) {
        recorder.frame(t, v);
        fi++;
      }
      opts.onProgress?.(t, tEnd);
      breaking = detect ? detectBreaking(op, v, t, uxSpec, ux) : null;
      if (breaking) break;
      if (clipped && ratio < 1) continue; // a clipped step says little about the ladder step: keep it
    } else {
      stats.rejected++;
    }
    const hNext = (clipped ? h : hLadder) * stepFactor(ratio, exponent);
    j = Math.floor(LADDER_DIVISIONS * Math.log2(hNext));
  }
  return { v, breaking, coefficientSets: stepper.coefficients.computed, stats };
}

/** Natural-units KdV u_τ = 6uu_ξ − u_ξξξ (quantum, physics.md §3) and its dispersionless limit. */
export function naturalFlowEquation(dispersion: 'quantum' | 'classical', drift = 0): FlowEquation {
  return { alpha: -6, beta: dispersion === 'quantum' ? 1 : 0, drift };
}
