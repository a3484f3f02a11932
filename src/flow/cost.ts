/**
 * Cost of a flow run before it starts (pure functions of the run's sizes; natural units of physics.md §3).
 *
 * Steps. The linear (dispersive) part of u_τ + αuu_ξ + βu_ξξξ = 0 is integrated exactly by the exponential
 * Runge–Kutta pair of flow/kdv.ts (Whalen, Brio & Moloney, J. Comput. Phys. 280, 579, 2015), so the step is limited by the explicit nonlinear part, whose fastest rate on the
 * retained band is |α|·max|u|·k_cut (k_cut = 2π⌊N/3⌋/L, the 2/3-rule band edge): the accepted steps keep
 * h·|α|·max|u|·k_cut ≈ FLOW_STEP_NUMBER, so a flow to λ_end takes about
 *
 *     steps ≈ λ_end·|α|·max|u₀|·k_cut / FLOW_STEP_NUMBER.
 *
 * Work. Each accepted step costs six evaluations of the nonlinear term (two FFTs of N points each); the work is
 * counted in grid-point steps (steps × N) and converted to time with FLOW_SECONDS_PER_POINT_STEP.
 *
 * Memory. The dense output holds value and rate of the ⌊N/3⌋ + 1 retained modes per accepted step
 * (DenseFlow.bytesPerPoint); the frames are held and written as FRAME_VALUE_BYTES per value.
 */
import { DenseFlow } from './dense.ts';

/** h·|α|·max|u₀|·k_cut of the accepted steps at tolerance 1e-9 in the lab frame: measured 0.05–0.4 (N = 128
 *  … 2048, sech² depths 2 and 6; grids that do not resolve the solitons at the low end), common practice. A design
 *  integrates in the frame of its fastest soliton (kdv.ts `frameSpeed`) and takes 1.5–15× fewer steps (measured, N =
 *  128 … 8192), so for it the estimate is an upper bound */
export const FLOW_STEP_NUMBER = 0.15;
/** wall time per grid-point step (six evaluations of the nonlinear term, own real FFT): 0.21–0.27 µs measured for
 *  N = 1024 … 8192 on a 2-core machine under load 2–3, rounded up */
export const FLOW_SECONDS_PER_POINT_STEP = 0.3e-6;
/** bytes per frame value held and written by `design`: the frame (8), the converted copy (8), the .npy buffer (8)
 *  and the .csv text (about 24 characters of two bytes each: 48) */
export const FRAME_VALUE_BYTES = 72;

export interface FlowSize {
  /** grid points N */
  points: number;
  /** box length L (natural units) */
  length: number;
  /** max|u₀| (E₀) */
  maxAbsU: number;
  /** end of the flow (KdV time) */
  lambdaEnd: number;
  /** |α| of u_τ + αuu_ξ + βu_ξξξ = 0 (6 in natural units) */
  alpha?: number;
}

/** the band edge k_cut = 2π⌊N/3⌋/L of the 2/3 rule (flow/kdv.ts) */
export function bandEdge(points: number, length: number): number {
  return (2 * Math.PI * Math.floor(points / 3)) / length;
}

/** estimated accepted steps to λ_end (module comment), at least 1 */
export function estimateFlowSteps(s: FlowSize): number {
  const rate = (s.alpha ?? 6) * s.maxAbsU * bandEdge(s.points, s.length);
  return Math.max(1, Math.ceil((s.lambdaEnd * rate) / FLOW_STEP_NUMBER));
}

/** bytes of the dense output of a flow with `steps` accepted steps on N points (every step and the start) */
export function denseOutputBytes(points: number, steps: number): number {
  return (steps + 1) * DenseFlow.bytesPerPoint(Math.floor(points / 3) + 1);
}

export interface DesignCost {
  steps: number;
  /** grid-point steps of the flow */
  pointSteps: number;
  /** estimated wall time of the flow on a 2-core laptop, s (the design's spectrum track, at most 11 frames of
   *  60–75 ms each, adds about a second) */
  seconds: number;
  /** frames held and written, bytes */
  frameBytes: number;
  /** dense output, bytes (0 when the run keeps none) */
  denseBytes: number;
}

/** the cost of a design: the flow, its frames and (when kept) its dense output */
export function estimateDesignCost(s: FlowSize & { frames: number; keepDense: boolean }): DesignCost {
  const steps = estimateFlowSteps(s);
  const pointSteps = steps * s.points;
  return {
    steps,
    pointSteps,
    seconds: pointSteps * FLOW_SECONDS_PER_POINT_STEP,
    frameBytes: s.frames * s.points * FRAME_VALUE_BYTES,
    denseBytes: s.keepDense ? denseOutputBytes(s.points, steps) : 0,
  };
}
