/**
 * Shared set-up of a job from a validated config: the unit system, the natural-units grid and the initial
 * potential u(ξ, 0). Everything numerical below this layer works in natural units (physics.md §3).
 */
import { NumericalError, UserError } from '../core/errors.ts';
import { unitSystemOf, type Config } from '../io/config.ts';
import { readSamplesFile } from '../io/samples.ts';
import { makeGrid, type Grid } from '../spectral/grid.ts';
import { resample } from '../spectral/ops.ts';
import { naturalFlowEquation, spectralResolution, type FlowEquation } from '../flow/kdv.ts';
import { nSolitonPotential, solitonFrameSpeed } from '../flow/solitons.ts';
import { boundStates } from '../quantum/spectrum-track.ts';
import { sech2Trap, wellScale, wellsTrap } from '../flow/traps.ts';
import { dispersionNumber, type UnitSystem } from '../units/scales.ts';
import { targetSequenceOf } from '../io/target.ts';
import { fitToTrap } from './outcome.ts';

export interface JobContext {
  config: Config;
  units: UnitSystem;
  /** natural-units grid (lengths in ℓ) */
  grid: Grid;
  /** user-unit positions of the grid points */
  xUser: Float64Array;
  /** u(ξ, 0) in E₀ */
  u0: Float64Array;
  /** depth (E₀) and curvature width (ℓ) of the deepest well, for δ² */
  depth: number;
  width: number;
  delta2: number;
  speciesLabel: string | null;
  warnings: string[];
}

/** a potential is "decayed" at the box edge when it is below this fraction of its extremum (common practice) */
export const EDGE_DECAY = 1e-6;
/** at or above this fraction of its extremum at the box edge the potential is not a trap in the box: energies are
 *  measured from V = 0 far from the wells (bound states lie below 0), so a level floor there is refused */
export const EDGE_REFUSE = 0.5;
/** a spectral tail above this (relative amplitude at the top of the grid's band) means the sampled potential is not
 * the potential asked for: relative errors of 0.1 % or more everywhere downstream (common practice) */
export const UNRESOLVED_TAIL = 1e-3;
/** sample x positions must match the config's box to this fraction of a grid step */
export const SAMPLE_GRID_MATCH = 1e-6;

/** u(ξ, 0) from the config's `initial` section, in natural units (shapes: flow/traps.ts, flow/solitons.ts) */
export function initialPotential(config: Config, units: UnitSystem, grid: Grid): Float64Array {
  const init = config.initial;
  const L = units.lengthToNatural;
  const E = units.energyToNatural;
  const x = grid.x;
  switch (init.kind) {
    case 'sech2':
      return sech2Trap(E(init.depth), L(init.width), L(init.center), x);
    case 'wells':
      return wellsTrap(
        init.wells.map((w) => ({ shape: w.shape, depth: E(w.depth), width: L(w.width), center: L(w.center) })),
        x,
      );
    case 'solitons': {
      const perLength = L(1); // natural lengths per user length
      return nSolitonPotential(
        init.solitons.map((s) => ({ kappa: s.kappa / perLength, center: L(s.center) })),
        x,
        0,
      );
    }
    case 'samples': {
      const s = readSamplesFile(init.file);
      const m = s.values.length;
      if (m < 4 || (m & (m - 1)) !== 0) {
        throw new UserError(`${init.file}: holds ${m} samples; spectral resampling needs a power of two ≥ 4 (the box is periodic, x_j = -L/2 + jL/M)`);
      }
      if (s.x) {
        const length = config.grid.length;
        const step = length / m;
        if (Math.abs(s.x[0] + length / 2) > SAMPLE_GRID_MATCH * step || Math.abs(s.x[1] - s.x[0] - step) > SAMPLE_GRID_MATCH * step) {
          throw new UserError(
            `${init.file}: x must run over the config's box, x_j = -L/2 + jL/M with L = grid.length = ${length} and M = ${m} rows ` +
              `(x_0 = ${-length / 2}, step ${step}); the file has x_0 = ${s.x[0]}, step ${s.x[1] - s.x[0]}`,
          );
        }
      }
      const natural = s.values.map((v) => E(v));
      return m === grid.n ? natural : resample(natural, grid.n);
    }
    case 'reflectionless':
      return fitToTrap(grid, initialPotential({ ...config, initial: init.from }, units, grid)).potential;
    case 'target':
      return targetSequenceOf(init, units, config.flow.lambda_end).potential(grid.x, 0);
  }
}

/** the frame speed of a designed sequence's flow (flow/solitons.ts solitonFrameSpeed from the bound states of u0);
 *  design, export and compare integrate the same flow in the same frame */
export function sequenceFrameSpeed(grid: Grid, eq: FlowEquation, u0: Float64Array): number {
  return eq.beta === 0 ? 0 : solitonFrameSpeed(eq, boundStates(grid, u0).energies);
}

/** the λ of the stored frames: flow.frames points evenly spaced on [0, flow.lambda_end] */
export function frameLambdas(flow: Config['flow']): number[] {
  return Array.from({ length: flow.frames }, (_, i) => (flow.lambda_end * i) / (flow.frames - 1));
}

/** every configured well or soliton centre must lie in the periodic box [−L/2, L/2] (user length unit) */
function checkCentresInBox(config: Config): void {
  const half = config.grid.length / 2;
  const init = config.initial;
  const centres: Array<[string, number]> =
    init.kind === 'sech2' ? [['initial.center', init.center]]
      : init.kind === 'wells' ? init.wells.map((w, i) => [`initial.wells[${i}].center`, w.center])
        : init.kind === 'solitons' ? init.solitons.map((s, i) => [`initial.solitons[${i}].center`, s.center])
          : [];
  for (const [key, c] of centres) {
    if (!(Math.abs(c) <= half)) throw new UserError(`${config.meta.source}: ${key} = ${c} is not allowed: must lie inside the box, −${half} … ${half} (± grid.length/2)`);
  }
}

/** the keys that shape the initial potential, with their values, for messages */
function initialKeys(config: Config): string {
  const init = config.initial;
  switch (init.kind) {
    case 'sech2':
      return `initial.depth ${init.depth}, initial.width ${init.width}`;
    case 'wells':
      return init.wells.map((w, i) => `initial.wells[${i}].depth ${w.depth}, .width ${w.width}`).join('; ');
    case 'solitons':
      return init.solitons.map((w, i) => `initial.solitons[${i}].kappa ${w.kappa}`).join(', ');
    case 'samples':
      return `initial.file ${init.file}`;
    case 'reflectionless':
      return `initial.from (kind ${init.from.kind})`;
    case 'target':
      return `initial.depths ${init.depths.join(', ')}`;
  }
}

/** what to change when the grid does not resolve the potential (exit 1: the result would be meaningless) */
export function resolutionAdvice(config: Config, units: UnitSystem, initial: boolean): string {
  const g = config.grid;
  const widthKey = initial && config.initial.kind === 'sech2' ? `, or widen initial.width (${config.initial.width} ${units.labels.length})` : '';
  return `the grid spacing is ${(g.length / g.points).toPrecision(3)} ${units.labels.length} (grid.length ${g.length} / grid.points ${g.points}): raise grid.points or shorten grid.length${widthKey}`;
}

/** refuse an initial potential that the grid does not resolve (spectral indicators of flow/kdv.ts) */
function requireResolved(config: Config, units: UnitSystem, grid: Grid, u0: Float64Array): void {
  const eq = naturalFlowEquation(config.flow.dispersion, units.lengthToNatural(config.flow.drift));
  const { discardedTail, tail } = spectralResolution(grid, eq, u0);
  const worst = Math.max(discardedTail, tail);
  if (worst > UNRESOLVED_TAIL) {
    throw new NumericalError(
      `the grid does not resolve the initial potential of ${config.meta.source}: its spectral tail is ${worst.toExponential(2)} (> ${UNRESOLVED_TAIL}), ` +
        `so any sequence computed on it would be wrong; ${resolutionAdvice(config, units, true)}`,
    );
  }
}

export function makeContext(config: Config): JobContext {
  checkCentresInBox(config);
  const units = unitSystemOf(config.units);
  const grid = makeGrid(units.lengthToNatural(config.grid.length), config.grid.points);
  const u0 = initialPotential(config, units, grid);
  const warnings: string[] = [];
  let peak = 0;
  for (const v of u0) {
    if (!Number.isFinite(v)) throw new UserError(`initial potential has a non-finite value (${v}): check initial.* in ${config.meta.source}`);
    peak = Math.max(peak, Math.abs(v));
  }
  const edge = Math.max(Math.abs(u0[0]), Math.abs(u0[u0.length - 1]));
  if (peak > 0 && edge >= EDGE_REFUSE * peak) {
    throw new UserError(
      `${config.meta.source}: the initial potential is ${(edge / peak).toPrecision(3)} of its extremum at the box edge: it does not decay inside the box ` +
        `(${initialKeys(config)}, grid.length ${config.grid.length}); isotrap measures energies from V = 0 far from the wells, so widen the box, narrow the wells, or shift sampled values so V → 0 at the edges`,
    );
  }
  if (peak > 0 && edge > EDGE_DECAY * peak) {
    warnings.push(
      `the initial potential is ${(edge / peak).toExponential(1)} of its extremum at the box edge (> ${EDGE_DECAY}): ` +
        'the periodic box joins the edges, so enlarge grid.length or move the wells inward',
    );
  }
  const { depth, width } = wellScale(grid, u0);
  if (!(depth > 0)) throw new UserError(`${config.meta.source}: the initial potential has no well on the grid (its minimum is ${units.energyFromNatural(-depth)} ${units.labels.energy} ≥ 0; ${initialKeys(config)}): isotrap designs traps, so at least one sampled value must be negative`);
  requireResolved(config, units, grid, u0);
  const delta2 = Number.isFinite(width) ? dispersionNumber(depth, width) : NaN;
  const speciesLabel = config.units.system === 'lab' ? config.units.label : null;
  const xUser = grid.x.map((xi) => units.lengthFromNatural(xi));
  return { config, units, grid, xUser, u0, depth, width, delta2, speciesLabel, warnings };
}
