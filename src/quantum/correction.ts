/**
 * The cubic counterdiabatic correction applied to sequences other than the designed one: `driveWithCorrection`
 * drives a sequence with the correction −λ̇(4k³ + 3{u, k}) only (physics.md §3; no bare drive), for the classical
 * sequence of the same start compared by `compare`. The size of the correction is measured during verification
 * (quantum/verify.ts CdStrength).
 */
import type { Grid } from '../spectral/grid.ts';
import type { RampKind } from '../protocol/ramp.ts';
import { verifySequence, type StateResult } from './verify.ts';

export interface CorrectedDriveOptions {
  grid: Grid;
  /** u(·, λ) for λ ∈ [0, lambdaEnd] (natural units); called with λ clamped into that range */
  potential: (lambda: number, out: Float64Array) => void;
  lambdaEnd: number;
  ramp: RampKind;
  /** t₀ */
  duration: number;
  /** propagated states (default as in verifySequence) */
  states?: number;
  /** infidelity budget of the time stepping (default as in verifySequence) */
  tol?: number;
  /** fraction of the drive's work done (verifySequence's work meter) */
  onProgress?: (fraction: number) => void;
}

export interface CorrectedDrive {
  states: StateResult[];
  /** fidelity of each state against the eigenstates of H(lambdaEnd) */
  fidelity: number[];
  /** E₀ */
  excessEnergy: number[];
}

/** Schrödinger drive of a sequence over [0, lambdaEnd] with the cubic correction (σ = 1), no traces or size samples. */
export function driveWithCorrection(opts: CorrectedDriveOptions): CorrectedDrive {
  const { lambdaEnd, potential } = opts;
  const r = verifySequence({
    grid: opts.grid,
    potential: (l, out) => potential(Math.min(Math.max(l, 0), lambdaEnd), out),
    lambdaEnd,
    ramp: opts.ramp,
    duration: opts.duration,
    states: opts.states,
    tol: opts.tol,
    drives: ['cd'],
    traceSamples: 0,
    strengthSamples: 0,
    onProgress: opts.onProgress ? (f) => opts.onProgress?.(f) : undefined,
  });
  return { states: r.states, fidelity: r.drives[0].fidelity, excessEnergy: r.drives[0].excessEnergy };
}
