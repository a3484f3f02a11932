/**
 * Shared set-up of a job from a validated config: the unit system, the natural-units grid and the initial
 * potential u(ξ, 0). Everything numerical below this layer works in natural units (physics.md §3).
 */
import { UserError } from '../core/errors.ts';
import { unitSystemOf, type Config } from '../io/config.ts';
import { readSamplesFile } from '../io/samples.ts';
import { makeGrid, type Grid } from '../spectral/grid.ts';
import { derivative, resample } from '../spectral/ops.ts';
import { nSolitonPotential } from '../flow/solitons.ts';
import { dispersionNumber, type UnitSystem } from '../units/scales.ts';

/** a potential is "decayed" at the box edge when it is below this fraction of its extremum (common practice) */
export const EDGE_DECAY = 1e-6;
/** sample x positions must match the config's box to this fraction of a grid step */
export const SAMPLE_GRID_MATCH = 1e-6;

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

const sech2 = (z: number) => {
  const c = Math.cosh(z);
  return 1 / (c * c);
};

/** u(ξ, 0) from the config's `initial` section, in natural units */
export function initialPotential(config: Config, units: UnitSystem, grid: Grid): Float64Array {
  const init = config.initial;
  const L = units.lengthToNatural;
  const E = units.energyToNatural;
  const x = grid.x;
  switch (init.kind) {
    case 'sech2': {
      const d = E(init.depth), w = L(init.width), c = L(init.center);
      return x.map((xi) => -d * sech2((xi - c) / w));
    }
    case 'wells': {
      const u = new Float64Array(grid.n);
      for (const well of init.wells) {
        const d = E(well.depth), w = L(well.width), c = L(well.center);
        for (let j = 0; j < grid.n; j++) {
          const z = (x[j] - c) / w;
          // sech² well of half-width w, or Gaussian with standard deviation w
          u[j] -= d * (well.shape === 'sech2' ? sech2(z) : Math.exp(-0.5 * z * z));
        }
      }
      return u;
    }
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
  }
}

/** deepest well: depth and the curvature width w = sqrt(2 d / u″) (exact for d sech²(x/w)) */
export function wellScale(grid: Grid, u: Float64Array): { depth: number; width: number } {
  let j0 = 0;
  for (let j = 1; j < u.length; j++) if (u[j] < u[j0]) j0 = j;
  const depth = -u[j0];
  const d2 = derivative(grid, u, 2)[j0];
  const width = depth > 0 && d2 > 0 ? Math.sqrt((2 * depth) / d2) : NaN;
  return { depth, width };
}

export function makeContext(config: Config): JobContext {
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
  if (peak > 0 && edge > EDGE_DECAY * peak) {
    warnings.push(
      `the initial potential is ${(edge / peak).toExponential(1)} of its extremum at the box edge (> ${EDGE_DECAY}): ` +
        'the periodic box joins the edges, so enlarge grid.length or move the wells inward',
    );
  }
  const { depth, width } = wellScale(grid, u0);
  if (!(depth > 0)) throw new UserError(`the initial potential has no well (its minimum is ${units.energyFromNatural(-depth)} ${units.labels.energy} ≥ 0): isotrap designs traps, so at least one value must be negative`);
  const delta2 = Number.isFinite(width) ? dispersionNumber(depth, width) : NaN;
  const speciesLabel = config.units.system === 'lab' ? config.units.label : null;
  const xUser = grid.x.map((xi) => units.lengthFromNatural(xi));
  return { config, units, grid, xUser, u0, depth, width, delta2, speciesLabel, warnings };
}
