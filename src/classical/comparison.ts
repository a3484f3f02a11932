/**
 * Building blocks of the quantum (KdV) against classical (Hopf) comparison of one trap (physics.md §2–§4): the
 * exact classical sequence sampled on a grid, a check of the pseudo-spectral Hopf run against it, and the
 * classical phase-space check of the cubic CD Hamiltonian (cd.ts) along both sequences.
 */
import type { DenseFlow } from '../flow/dense.ts';
import type { Ramp } from '../protocol/ramp.ts';
import type { Grid } from '../spectral/grid.ts';
import { CURVATURE_SAFETY, phaseSpaceCheck, suggestSteps, wellShape, type ShellStart, type TrajectoryReport } from './cd.ts';
import { spectralSequence, type Profile1D } from './field.ts';
import { characteristicsSequence, hopfCharacteristics, hopfCurvatureGrowth } from './hopf.ts';
import type { Sampler } from './scaling.ts';

/** period 2π/ω of small oscillations (H = p² + u, m = ½) at the bottom of the deepest well of a profile */
export function smallOscillationPeriod(profile: Profile1D, xs: Float64Array): number {
  return (2 * Math.PI) / wellShape(profile, xs).omega;
}

/**
 * The exact Hopf sequence u(x_j − cλ, λ) at the grid points (characteristics, hopf.ts) with a co-moving drift c;
 * `breaking` is its first breaking λ (the sampler throws BreakingError at or past it).
 */
export function characteristicsSampler(grid: Grid, profile: Profile1D, drift: number, breaking: number): Sampler {
  const shifted = new Float64Array(grid.n);
  return (l, out) => {
    for (let j = 0; j < grid.n; j++) shifted[j] = grid.x[j] - drift * l;
    hopfCharacteristics(profile, shifted, l, out, breaking);
  };
}

/**
 * max_j |u_spectral − u_exact| / max|u₀| at `points` equally spaced λ on [0, reached]: the pseudo-spectral Hopf run
 * against the exact characteristics solution over the range the grid resolves.
 */
export function characteristicsCheck(grid: Grid, spectral: DenseFlow, exact: Sampler, u0: Float64Array, reached: number, points: number): { lambda: number[]; max_error: number[] } {
  const check = { lambda: [] as number[], max_error: [] as number[] };
  let peak = 0;
  for (const v of u0) peak = Math.max(peak, Math.abs(v));
  const ua = new Float64Array(grid.n), ub = new Float64Array(grid.n);
  for (let i = 0; i < points; i++) {
    const l = (reached * i) / (points - 1);
    spectral.at(l, ua);
    exact(l, ub);
    let err = 0;
    for (let j = 0; j < grid.n; j++) err = Math.max(err, Math.abs(ua[j] - ub[j]));
    check.lambda.push(l);
    check.max_error.push(err / peak);
  }
  return check;
}

export interface PhaseSpaceComparisonOptions {
  grid: Grid;
  /** the initial potential u₀ */
  profile: Profile1D;
  drift: number;
  /** the KdV run (dense output) */
  quantum: DenseFlow;
  /** ramp 0 → λ_ramp, with λ_ramp before the Hopf breaking */
  ramp: Ramp;
  /** first breaking λ of the Hopf sequence */
  lambdaBreak: number;
  starts: readonly ShellStart[];
}

export interface PhaseSpaceComparison {
  onClassical: { trajectories: TrajectoryReport[]; steps: number };
  onQuantum: { trajectories: TrajectoryReport[]; steps: number };
}

/**
 * Trajectories from the same starts under the classical CD Hamiltonian along the exact Hopf sequence and along the
 * KdV sequence. The step count follows the curvature of u₀ grown by the Hopf steepening at the ramp's end
 * (hopfCurvatureGrowth), at least CURVATURE_SAFETY.
 */
export function phaseSpaceComparison(opts: PhaseSpaceComparisonOptions, onHalf?: () => void): PhaseSpaceComparison {
  const { grid, profile, drift, ramp } = opts;
  const shape = wellShape(profile, grid.x);
  const steps = suggestSteps(shape, ramp, Math.max(CURVATURE_SAFETY, hopfCurvatureGrowth(ramp.lambdaEnd, opts.lambdaBreak)));
  const box = { xMin: grid.x[0], xMax: grid.x[grid.n - 1], scanStep: grid.dx / 4, drift, steps };
  const onClassical = phaseSpaceCheck(characteristicsSequence(profile, drift), ramp, opts.starts, box);
  onHalf?.();
  const onQuantum = phaseSpaceCheck(spectralSequence(grid, opts.quantum), ramp, opts.starts, box);
  return { onClassical, onQuantum };
}
