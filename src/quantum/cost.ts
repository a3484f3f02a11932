/**
 * Cost of the Schrödinger proof (quantum/verify.ts) before it starts, as pure functions of its sizes (natural units,
 * physics.md §3). Work is counted in matrix-vector products with H (two N-point FFTs each, time ∝ N log₂N).
 *
 * Eigen solves (quantum/eigen.ts: Chebyshev-filtered Lanczos, at most 400 Krylov vectors per run, full
 * reorthogonalisation, locking and restarts). One run finds about EIGEN_LEVELS_PER_RUN levels for about
 * EIGEN_MATVECS_BASE products; beyond that each restart finds only a few more levels while it reorthogonalises
 * against all locked ones, so the count grows steeply:
 *
 *     matvecs ≈ EIGEN_MATVECS_BASE · max(1, levels / EIGEN_LEVELS_PER_RUN)^EIGEN_GROWTH.
 *
 * A verify solves the ends of the sequence and every interior fidelity-trace sample (traceSamples − 2 more solves),
 * each for the propagated states plus two (a degenerate pair cut at the top).
 *
 * Propagation (quantum/etd-pair-scheme.ts: the fifth-order ETD5(3) pair with the k-diagonal part exact). The explicit
 * part is the potential and, for a corrected drive, the first-order part of the correction −3λ̇{u, k}, whose fastest
 * rate is r = max|u| + 6|λ̇|_max·max|u|·k_max (k_max = πN/L; r = max|u| for the bare drive). The accepted level is
 * n* ≈ T·r/SCHRODINGER_STEP_NUMBER·(TOL_REFERENCE/tol)^(1/10) (a fifth-order error ∝ h⁵ must reach the amplitude
 * √tol); the global step-halving control (quantum/propagator.ts) starts its doubling ladder at `ladderStart(n*)`, a
 * power of two near a quarter of n*, so about 1.75n* steps in all, each SCHRODINGER_MATVECS_PER_STEP products per state.
 *
 * Memory: the propagated states (2N doubles each) are held STATE_COPIES times (scheme buffers, step-doubling copies,
 * and the copy the global control keeps at each sample time), the eigen solver's Krylov basis and every trace basis.
 */
import type { ErrorControl } from './propagator.ts';
import { makeRamp, type RampKind } from '../protocol/ramp.ts';
import { densePointsFor, MAX_KRYLOV_DEFAULT } from './eigen.ts';

/** products of one eigen solve of up to EIGEN_LEVELS_PER_RUN levels: measured 3,900–6,000 (N = 256, 10–45 levels) */
export const EIGEN_MATVECS_BASE = 6000;
/** levels one Lanczos run of 400 vectors finds (measured: 2 restarts up to 45 levels, 22 at 60) */
export const EIGEN_LEVELS_PER_RUN = 45;
/** growth exponent beyond one run: measured 82,000 products for 60 levels against 4,000 for 45 (N = 256) */
export const EIGEN_GROWTH = 9;
/** T·r per accepted step of the global control with etd53: measured 3.3 (N = 512, −6sech² split to λ = 0.5 in 2 t₀,
 *  8 states: infidelity 4.6e-8 at 250 steps, scaled to tol 1e-8 by the order) */
export const SCHRODINGER_STEP_NUMBER = 3.3;
/** the infidelity budget the step number was measured at */
export const TOL_REFERENCE = 1e-8;
/** products per state and step of the ETD5(3) pair: six stages, the last (FSAL) one reused */
export const SCHRODINGER_MATVECS_PER_STEP = 6;
/** the smallest first level of the doubling ladder (a coarser level is never resolved; common practice) */
export const LADDER_MIN_START = 8;
/** wall time of one product per N log₂N on a 2-core laptop: measured 24–38 ns in propagation (N = 1024 / 256) and
 *  10–52 ns in eigen solves (whose product count grows with the filter degree ∝ N while each product gets cheaper) */
export const SECONDS_PER_MATVEC_POINT = 3e-8;
/** cores of the laptop the wall-time estimates describe (the drives and trace bases run on worker threads) */
export const LAPTOP_CORES = 2;
/** copies of every propagated state held at once: scheme and step-doubling buffers (~10) plus the copy the global
 *  control keeps at each sample time (10 trace and 33 strength samples) */
export const STATE_COPIES = 55;

export interface VerifySize {
  points: number;
  length: number;
  /** max|u| over the sequence (E₀) */
  maxAbsU: number;
  lambdaEnd: number;
  ramp: RampKind;
  /** protocol duration T (t₀) */
  duration: number;
  /** propagated states */
  states: number;
  /** infidelity budget of the time stepping */
  tol: number;
  /** drives with the correction (cd, flipped) and without (bare) */
  correctedDrives: number;
  bareDrives: number;
  traceSamples: number;
  /** the start potential (for the grid of the dense eigen solves, eigen.ts densePointsFor); without it, all N points */
  u0?: ArrayLike<number>;
  /** shots of a shot-to-shot noise study (verify.errors.noise_shots): the whole verify runs once per shot (default 1) */
  shots?: number;
  /** a condensate (verify.interaction): three one-state drives and its painted field, in the calling thread, once */
  condensate?: boolean;
  /** step control of the drives (verify.step_control; default 'global', the doubling ladder) */
  stepControl?: ErrorControl;
}

/** the condensate's painted field (quantum/painted.ts: 64–128 nonlinear ground states of its density series, each
 *  warm-started) in products with H: measured 1.9 s ≈ 6000 products at N = 1024 on configs/rb87-condensate.yaml */
export const CONDENSATE_FIELD_MATVECS = 6000;

export interface VerifyCost {
  /** products of the condensate's drives and field (0 without verify.interaction) */
  condensateMatvecs: number;
  /** products of one eigen solve */
  eigenMatvecs: number;
  /** eigen solves (ends and interior trace samples) */
  eigenSolves: number;
  /** estimated accepted level n* of the global control and the steps of all its levels, corrected drive */
  acceptedSteps: number;
  ladderSteps: number;
  /** products of one corrected and of one bare drive */
  correctedMatvecs: number;
  bareMatvecs: number;
  /** all products, and their wall time on a 2-core laptop (s) */
  matvecs: number;
  seconds: number;
  /** memory held, bytes */
  bytes: number;
}

/** wall seconds per N³ of the dense Householder solve (linalg/symmetric-lowest.ts): measured 9.9 s at N = 2048 and
 *  1.7 s at N = 1024 with 200 levels (the reduction dominates; the back-transformation adds 2N²·levels) */
export const HOUSEHOLDER_SECONDS_PER_CUBE = 1.2e-9;
/** the dense solve holds the matrix and its reflections, 1.5 N² doubles: not above this many points */
export const HOUSEHOLDER_MAX_POINTS = 4096;

/** products of one Lanczos eigen solve of `levels` levels (module comment) */
function lanczosMatvecs(levels: number): number {
  return EIGEN_MATVECS_BASE * Math.pow(Math.max(1, levels / EIGEN_LEVELS_PER_RUN), EIGEN_GROWTH);
}

/** seconds of one product with H on N points (SECONDS_PER_MATVEC_POINT · N log₂N) */
function matvecSeconds(points: number): number {
  return SECONDS_PER_MATVEC_POINT * points * Math.log2(points);
}

/** the eigen method for `levels` levels on N points: Lanczos while one run finds them all (measured fast there), the
 *  dense Householder solve beyond when the model says it is cheaper; the dense solve runs on `densePoints` ≤ N
 *  (eigen.ts densePointsFor: the coarse grid that holds the levels) */
export function eigenMethodFor(points: number, levels: number, densePoints = points): 'lanczos' | 'householder' {
  if (points > HOUSEHOLDER_MAX_POINTS || levels <= EIGEN_LEVELS_PER_RUN) return 'lanczos';
  return HOUSEHOLDER_SECONDS_PER_CUBE * densePoints ** 3 < lanczosMatvecs(levels) * matvecSeconds(points) ? 'householder' : 'lanczos';
}

/** one eigen solve of `levels` levels on N points by the method eigenMethodFor picks, in products with H (the dense
 *  solve's time expressed as products) */
export function eigenSolveMatvecs(levels: number, points: number, densePoints = points): number {
  const lanczos = lanczosMatvecs(levels);
  return eigenMethodFor(points, levels, densePoints) === 'householder' ? (HOUSEHOLDER_SECONDS_PER_CUBE * densePoints ** 3) / matvecSeconds(points) : lanczos;
}

/** the first level of the doubling ladder for an expected accepted level: the power of two at or below a quarter of
 *  it (two doublings reach it, the three levels the control needs), at least LADDER_MIN_START */
export function ladderStart(accepted: number): number {
  return Math.max(LADDER_MIN_START, 2 ** Math.floor(Math.log2(Math.max(1, accepted / 4))));
}

/** steps of the one-pass control (errorControl 'local': embedded estimate, per-unit-step budget) relative to the
 *  accepted level of the global control at the same budget: measured 5.3 (1361 against 256 steps, two-soliton split,
 *  N = 512, 8 states, lab frame) and 4.5 (580 against 128 in the soliton's frame) */
export const ONE_PASS_STEP_FACTOR = 5;

/** steps a drive takes in all for an expected accepted level: the doubling ladder (global control) or one pass */
export function driveSteps(accepted: number, control: ErrorControl = 'global'): number {
  return control === 'local' ? Math.ceil(accepted * ONE_PASS_STEP_FACTOR) : ladderSteps(accepted);
}

/** steps of a doubling ladder from ladderStart(accepted) up to the first level ≥ accepted (at least three levels) */
export function ladderSteps(accepted: number): number {
  let total = 0;
  let level = ladderStart(accepted);
  for (let count = 1; ; count++) {
    total += level;
    if (count >= 3 && level >= accepted) return total;
    level *= 2;
  }
}

/** largest |λ̇| of the ramp, from samples (every ramp's rate is smooth with one maximum) */
function peakRate(kind: RampKind, duration: number, lambdaEnd: number): number {
  const ramp = makeRamp(kind, duration, lambdaEnd);
  let peak = 0;
  for (let i = 0; i <= 64; i++) peak = Math.max(peak, Math.abs(ramp.rate((duration * i) / 64)));
  return peak;
}

/** the estimated accepted step count n* of the global control (module comment), at least LADDER_MIN_START */
export function estimateSchrodingerSteps(s: Pick<VerifySize, 'points' | 'length' | 'maxAbsU' | 'lambdaEnd' | 'ramp' | 'duration' | 'tol'>, corrected: boolean): number {
  const kMax = (Math.PI * s.points) / s.length;
  const rate = s.maxAbsU + (corrected ? 6 * peakRate(s.ramp, s.duration, s.lambdaEnd) * s.maxAbsU * kMax : 0);
  const n = ((s.duration * rate) / SCHRODINGER_STEP_NUMBER) * Math.pow(TOL_REFERENCE / s.tol, 1 / 10);
  return Math.max(LADDER_MIN_START, Math.ceil(n));
}

/** the whole cost of a verify (module comment) */
export function estimateVerifyCost(s: VerifySize): VerifyCost {
  const levels = Math.min(s.points, s.states + 2);
  const eigenMatvecs = eigenSolveMatvecs(levels, s.points, s.u0 ? densePointsFor(s.u0, levels) : s.points);
  const eigenSolves = 2 + Math.max(0, s.traceSamples - 2);
  const acceptedSteps = estimateSchrodingerSteps(s, true);
  const ladder = driveSteps(acceptedSteps, s.stepControl);
  const correctedMatvecs = ladder * SCHRODINGER_MATVECS_PER_STEP * s.states;
  const bareMatvecs = driveSteps(estimateSchrodingerSteps(s, false), s.stepControl) * SCHRODINGER_MATVECS_PER_STEP * s.states;
  // the condensate: cubic and painted drives of one state at the corrected ladder, the bare one at the bare ladder
  const condensateMatvecs = s.condensate ? (2 * correctedMatvecs + bareMatvecs) / s.states + CONDENSATE_FIELD_MATVECS : 0;
  const matvecs = eigenSolves * eigenMatvecs + s.correctedDrives * correctedMatvecs + s.bareDrives * bareMatvecs;
  const perMatvec = matvecSeconds(s.points);
  const vector = s.points * Float64Array.BYTES_PER_ELEMENT;
  const bytes = s.states * 2 * vector * STATE_COPIES + MAX_KRYLOV_DEFAULT * vector + eigenSolves * levels * vector;
  // the two end solves run in turn; the drives and the trace bases share the laptop's cores (quantum/verify.ts)
  const parallel = Math.max(0, eigenSolves - 2) * eigenMatvecs + s.correctedDrives * correctedMatvecs + s.bareDrives * bareMatvecs;
  const shots = s.shots ?? 1;
  const seconds = (shots * (2 * eigenMatvecs + parallel / LAPTOP_CORES) + condensateMatvecs) * perMatvec;
  return { eigenMatvecs, eigenSolves, acceptedSteps, ladderSteps: ladder, correctedMatvecs, bareMatvecs, condensateMatvecs, matvecs: shots * matvecs + condensateMatvecs, seconds, bytes };
}

/** semiclassical count of the bound states of u on a grid of spacing dx: ⌈∫√(−u)₊ dξ / π⌉ (the quantisation
 *  condition ∮p dξ = 2π(n + ½) with p = √(−u) at E = 0; Quantum Mechanics: Non-relativistic Theory, §48) */
export function boundStateEstimate(u: ArrayLike<number>, dx: number): number {
  let action = 0;
  for (let j = 0; j < u.length; j++) if (u[j] < 0) action += Math.sqrt(-u[j]) * dx;
  return Math.ceil(action / Math.PI);
}
