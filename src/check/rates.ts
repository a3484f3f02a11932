/**
 * The rate ∂_λu of a sequence and its exact cubic correction from the flow fit (physics.md §3, §9). With τ(λ)
 * the monotone time map through the fitted τ_k (check/timemap.ts) and c the fitted drift,
 *
 *     ∂_λu = τ′(λ) (6uu_ξ − u_ξξξ − c u_ξ),        A_λ = τ′(λ) (−4k³ + ½{−6u + c, k})
 *
 * (natural units; A_τ = −(4k³ + 3{u, k}) of physics.md §3 plus the translation c k of physics.md §2, scaled by
 * dτ/dλ). At a frame touched by a passing interval the rate is the flow's, exact at any frame spacing; at a frame
 * whose intervals all fail there is no flow to take it from, and the Fornberg λ-derivative (check/fornberg.ts)
 * through the neighbouring frames is used instead. The drift of a frame is the mean of its intervals' drifts.
 */
import type { Grid } from '../spectral/grid.ts';
import { lambdaDerivatives, STENCIL_WIDTH } from './fornberg.ts';
import { flowRate, type SequenceIntervalFit } from './flowfit.ts';
import { monotoneTimeMap } from './timemap.ts';
import type { CorrectionSchedule } from './drive.ts';

export interface FrameRates {
  /** ∂_λu at every frame, E₀ per unit λ */
  rates: Float64Array[];
  /** the rate came from the flow (a passing interval touches the frame), else from finite differences */
  fromFlow: boolean[];
  /** dτ/dλ at every frame (Fritsch–Carlson slopes of τ(λ)) */
  tauRate: number[];
  /** drift c per unit τ at every frame */
  drift: number[];
}

/** ∂_λu per frame from the flow fit (module doc); lambda strictly increasing, tau the fitted τ_k. */
export function frameRates(grid: Grid, lambda: readonly number[], tau: readonly number[], frames: readonly Float64Array[], intervals: readonly Pick<SequenceIntervalFit, 'drift' | 'pass'>[]): FrameRates {
  const count = frames.length;
  if (intervals.length !== count - 1 || lambda.length !== count || tau.length !== count) throw new RangeError(`frameRates: ${count} frames with ${lambda.length} λ, ${tau.length} τ and ${intervals.length} intervals`);
  const tauRate = Array.from(monotoneTimeMap(lambda, tau).slopes);
  const near = (k: number) => [intervals[k - 1], intervals[k]].filter((it) => it !== undefined);
  const drift = frames.map((_, k) => {
    const its = near(k);
    return its.reduce((s, it) => s + it.drift, 0) / its.length;
  });
  const fromFlow = frames.map((_, k) => near(k).some((it) => it.pass));
  let fd: Float64Array[] | null = null;
  const rates = frames.map((u, k) => {
    if (fromFlow[k]) return flowRate(grid, u, drift[k]).map((v) => tauRate[k] * v);
    fd ??= lambdaDerivatives(lambda, frames, Math.min(STENCIL_WIDTH, count)).rates;
    return fd[k];
  });
  return { rates, fromFlow, tauRate, drift };
}

/** the exact cubic correction of the fitted flow (module doc) as a schedule with K Legendre slots */
export function cubicSchedule(lambda: readonly number[], r: FrameRates, legendre: number): CorrectionSchedule {
  return {
    label: 'fitted cubic',
    lambda: [...lambda],
    a: r.tauRate.map((s) => -4 * s),
    coefficients: r.tauRate.map((s, k) => [-6 * s, s * r.drift[k], ...new Array<number>(legendre).fill(0)]),
  };
}
