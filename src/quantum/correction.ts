/**
 * Size of the cubic counterdiabatic correction against time, from closed-form bounds (physics.md §1, §3).
 *
 * In natural units the correction is −λ̇(4k³ + 3{u, k}); its Weyl symbol is −λ̇(4p³ + 6up) (p = ħk/ℓ). At the
 * momentum scale p = ħ/ℓ (k = 1) the two parts are bounded by
 *
 *     cubic part      4|λ̇(s)|
 *     potential part  6|λ̇(s)| · max_ξ |u(ξ, λ(s))|
 *
 * in E₀; the total is their sum. `driveWithCorrection` drives a sequence with the correction only (no bare drive),
 * for sequences that are not the designed one (the classical sequence of the same start, compared by `compare`).
 */
import type { Grid } from '../spectral/grid.ts';
import type { Ramp, RampKind } from '../protocol/ramp.ts';
import { verifySequence, type StateResult } from './verify.ts';

export const CORRECTION_SIZE_DEFINITION =
  'at momentum p = ħ/ℓ: p³ part 4|λ̇|·E₀, potential part 6|λ̇|·max|V|/E₀·E₀ (the Weyl symbol of 3{u,k} is 6uk); total their sum';

/** correction sizes at equally spaced times (natural units: t₀ and E₀) */
export interface CorrectionSizes {
  time: number[];
  cubic: number[];
  potential: number[];
  total: number[];
}

/**
 * The bounds of the module doc at `samples` equally spaced times s ∈ [0, T] of the ramp, with u(·, λ) from
 * `potential` on a grid of `points` points.
 */
export function correctionSizes(ramp: Ramp, potential: (lambda: number, out: Float64Array) => void, points: number, samples: number): CorrectionSizes {
  const u = new Float64Array(points);
  const out: CorrectionSizes = { time: [], cubic: [], potential: [], total: [] };
  for (let i = 0; i < samples; i++) {
    const s = (ramp.duration * i) / (samples - 1);
    const rate = Math.abs(ramp.rate(s));
    potential(ramp.value(s), u);
    let umax = 0;
    for (const x of u) umax = Math.max(umax, Math.abs(x));
    out.time.push(s);
    out.cubic.push(4 * rate);
    out.potential.push(6 * rate * umax);
    out.total.push(4 * rate + 6 * rate * umax);
  }
  return out;
}

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
  });
  return { states: r.states, fidelity: r.drives[0].fidelity, excessEnergy: r.drives[0].excessEnergy };
}
