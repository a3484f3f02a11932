/**
 * Starts built from the outcome a lab asks for: the reflectionless trap nearest to the user's (flow/reflectionless.ts)
 * and the check of a finished design against its exact N-soliton sequence (flow/targets.ts, flow/solitons.ts).
 */
import type { Grid } from '../spectral/grid.ts';
import { fitReflectionless, type ReflectionlessFit } from '../flow/reflectionless.ts';
import { boundStates } from '../quantum/spectrum-track.ts';
import { UserError } from '../core/errors.ts';
import { findWells } from '../flow/wells.ts';
import { nSolitonPotential } from '../flow/solitons.ts';
import type { Config } from '../io/config.ts';
import { targetSequenceOf } from '../io/target.ts';
import type { UnitSystem } from '../units/scales.ts';

/** the reflectionless potential with the bound states of u (converged, quantum/bound.ts) and the nearest shape */
export function fitToTrap(grid: Grid, u: Float64Array): ReflectionlessFit {
  const energies = boundStates(grid, u).energies;
  if (energies.length === 0) throw new UserError('initial.from: the trap has no bound state below the box threshold, so it has no reflectionless counterpart; deepen or widen it, or enlarge grid.length');
  return fitReflectionless(grid, u, energies.map((e) => Math.sqrt(-e)));
}

/** one well of the outcome: where and how deep the exact sequence puts it at λ_end, and where the flow put it */
export interface OutcomeWell {
  requested_position: number;
  reached_position: number;
  requested_depth: number;
  reached_depth: number;
}

/** the exact sequence a design must reproduce at λ_end (natural units) */
export interface ExactEnd {
  kind: 'reflectionless' | 'target';
  /** u at λ_end on the grid, from the Kay–Moses formula */
  potential: Float64Array;
  notes: string[];
  fit: ReflectionlessFit | null;
}

/**
 * Compare the last frame of a design with its exact end: the wells of both (flow/wells.ts: minima refined on the
 * Fourier interpolant), each exact well matched to the nearest well found; positions to `positionTol` of the
 * narrowest width 1/κ_max, depths to `depthTol` of each depth, and as many wells. Natural units in and out.
 */
export function compareWithExact(grid: Grid, last: Float64Array, exact: ExactEnd, kappaMax: number, positionTol: number, depthTol: number) {
  const found = findWells(grid, last);
  const wells = findWells(grid, exact.potential).map(({ position: p, depth: requestedDepth }) => {
    const near = found.reduce<(typeof found)[number] | null>((best, w) => (best === null || Math.abs(w.position - p) < Math.abs(best.position - p) ? w : best), null);
    return { requestedPosition: p, reachedPosition: near?.position ?? null, requestedDepth, reachedDepth: near?.depth ?? null };
  });
  // with no well found there is nothing to measure: the errors are null and the outcome is not met
  const worst = (e: (w: (typeof wells)[number]) => number | null) => (found.length === 0 ? null : Math.max(0, ...wells.map((w) => e(w) ?? 0)));
  const positionError = worst((w) => (w.reachedPosition === null ? null : Math.abs(w.reachedPosition - w.requestedPosition) * kappaMax));
  const depthError = worst((w) => (w.reachedDepth === null ? null : Math.abs(w.reachedDepth - w.requestedDepth) / w.requestedDepth));
  let diff = 0;
  let depth = 0;
  for (let j = 0; j < grid.n; j++) {
    diff = Math.max(diff, Math.abs(last[j] - exact.potential[j]));
    depth = Math.max(depth, -exact.potential[j]);
  }
  const met = found.length === wells.length && positionError !== null && depthError !== null && positionError <= positionTol && depthError <= depthTol;
  return { wells, positionError, depthError, exactDistance: diff / depth, wellsFound: found.length, met };
}

/**
 * The exact end of a design whose start is built from an outcome (null for the other starts): the target's
 * N-soliton sequence, or the Kay–Moses solution of the reflectionless fit in the frame of the flow's drift c,
 * u(ξ, τ) = u_KM(ξ − cτ, τ). `trap` is the user's trap (initial.from) on the grid.
 */
export function exactEndOf(config: Config, units: UnitSystem, grid: Grid, trap: Float64Array): ExactEnd | null {
  const init = config.initial;
  const tau = config.flow.lambda_end;
  if (init.kind === 'target') {
    const seq = targetSequenceOf(init, units, tau);
    return { kind: 'target', potential: seq.potential(grid.x, seq.tauEnd), notes: seq.notes, fit: null };
  }
  if (init.kind !== 'reflectionless') return null;
  const fit = fitToTrap(grid, trap);
  const c = units.lengthToNatural(config.flow.drift);
  return {
    kind: 'reflectionless', potential: nSolitonPotential(fit.solitons, Float64Array.from(grid.x, (v) => v - c * tau), tau), fit,
    notes: [`reflectionless trap with the ${fit.solitons.length} bound states of initial.from (Kay & Moses 1956), centres fitted in ${fit.iterations} Levenberg–Marquardt steps`],
  };
}
