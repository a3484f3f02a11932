/**
 * The classical (Hopf, ħ → 0) sequence of a start u₀, driven quantum mechanically with the cubic correction of the
 * KdV design over the part of the ramp on which it exists (physics.md §1, §4): the flow is integrated until it
 * breaks (or reaches λ_end), the ramp of the configured shape is cut at the time it reaches the last λ the
 * sequence has, and the lowest states are driven with the correction over that shorter ramp.
 */
import { integrateFlow, naturalFlowEquation } from '../flow/kdv.ts';
import { makeRamp, type RampKind } from '../protocol/ramp.ts';
import { driveWithCorrection } from '../quantum/correction.ts';
import type { Grid } from '../spectral/grid.ts';

export interface ClassicalDriveOptions {
  grid: Grid;
  u0: Float64Array;
  /** flow tolerance of the Hopf integration */
  flowTolerance: number;
  lambdaEnd: number;
  ramp: RampKind;
  /** t₀: duration of the full ramp 0 → lambdaEnd */
  duration: number;
  states: number;
  /** infidelity budget of the time stepping */
  tol?: number;
}

export interface ClassicalDrive {
  /** extrapolated breaking λ of the Hopf run (NaN when it did not break) */
  lambdaBreak: number;
  /** last λ the Hopf run resolved (lambdaEnd when it did not break) */
  lambdaReached: number;
  /** t₀: the time at which the full ramp reaches lambdaReached */
  timeReached: number;
  fidelity: number[];
}

/** see the module doc */
export function driveClassicalSequence(opts: ClassicalDriveOptions): ClassicalDrive {
  const { grid, lambdaEnd } = opts;
  const flow = integrateFlow(grid, naturalFlowEquation('classical'), opts.u0, { tolerance: opts.flowTolerance, frames: [lambdaEnd] });
  const reach = flow.breaking ? flow.breaking.lambdaReached : lambdaEnd;
  const tReach = makeRamp(opts.ramp, opts.duration, lambdaEnd).timeAt(reach);
  const drive = driveWithCorrection({
    grid,
    potential: (l, out) => flow.dense.at(l, out),
    lambdaEnd: reach,
    ramp: opts.ramp,
    duration: tReach,
    states: opts.states,
    tol: opts.tol,
  });
  return { lambdaBreak: flow.breaking?.lambdaExtrapolated ?? NaN, lambdaReached: reach, timeReached: tReach, fidelity: drive.fidelity };
}
