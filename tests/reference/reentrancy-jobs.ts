/**
 * Small propagation and flow jobs for the re-entrancy test (tests/reentrancy.test.ts), importable from the test
 * and from worker threads. Each variant differs in its soliton and start vectors, so mixed-up state would show.
 */
import { makeRng } from '../../src/core/rng.ts';
import { integrateFlow, naturalFlowEquation } from '../../src/flow/kdv.ts';
import { oneSoliton } from '../../src/flow/solitons.ts';
import { makeRamp } from '../../src/protocol/ramp.ts';
import { kdvDrive, Propagator, type DrivenHamiltonian, type PropagateOptions } from '../../src/quantum/propagator.ts';
import { makeGrid, type Grid } from '../../src/spectral/grid.ts';

const DURATION = 0.5;
const LAMBDA_END = 0.1;
const STEPS = 24;

export interface PropagationJob {
  grid: Grid;
  H: DrivenHamiltonian;
  init: Float64Array[];
  options: PropagateOptions;
}

export function propagationJob(variant: number): PropagationJob {
  const grid = makeGrid(12, 32);
  const kappa = 0.8 + 0.3 * variant;
  const potential = (tau: number, out: Float64Array): void => {
    for (let j = 0; j < grid.n; j++) out[j] = oneSoliton(kappa, -1, grid.x[j], tau);
  };
  const rng = makeRng(11 + variant);
  const init = [0, 1].map(() => Float64Array.from({ length: 2 * grid.n }, () => rng() - 0.5));
  const H = kdvDrive(grid, potential, makeRamp('sin2', DURATION, LAMBDA_END), 1);
  return { grid, H, init, options: { errorControl: 'global', tol: 1e-6 } };
}

/** the job's propagation with the global step-halving control and one sample time, reported to onSample */
export function runPropagation(variant: number, onSample: () => void = () => undefined): Float64Array[] {
  const job = propagationJob(variant);
  return new Propagator(job.grid).propagate(job.H, job.init, 0, DURATION, { ...job.options, sampleTimes: [DURATION / 2], onSample }).states;
}

/** a propagation advanced one fixed step per call of `next` (through the pure step API) */
export function stepper(variant: number): { next(): boolean; states(): Float64Array[] } {
  const job = propagationJob(variant);
  const prop = new Propagator(job.grid);
  let states = job.init;
  let i = 0;
  const h = DURATION / STEPS;
  return {
    next(): boolean {
      if (i >= STEPS) return false;
      states = prop.step(job.H, 'etd4', i * h, h, states, 0);
      i++;
      return true;
    },
    states: () => states,
  };
}

/** a short KdV flow of a soliton; `onProgress` is passed through */
export function runFlow(variant: number, onProgress?: () => void): Float64Array[] {
  const grid = makeGrid(20, 64);
  const u0 = grid.x.map((x) => oneSoliton(1 + 0.2 * variant, -2, x, 0));
  return integrateFlow(grid, naturalFlowEquation('quantum'), u0, { tolerance: 1e-8, frames: [0, 0.02, 0.04], onProgress }).frames;
}

/** everything a worker computes for one variant */
export function runAll(variant: number): { propagation: Float64Array[]; flow: Float64Array[] } {
  return { propagation: runPropagation(variant), flow: runFlow(variant) };
}
