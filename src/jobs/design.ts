/**
 * `design`: integrate the KdV (quantum) or Hopf (classical) flow from the configured trap and collect the
 * diagnostics a physicist checks before trusting a sequence (physics.md §2–§5).
 */
import { join } from 'node:path';
import type { Config } from '../io/config.ts';
import { writeCsv } from '../io/csv.ts';
import { prepareOutputDir, writeFileAtomic } from '../io/files.ts';
import { encodeNpy } from '../io/npy.ts';
import { integrateFlow, naturalFlowEquation, type FlowRun } from '../flow/kdv.ts';
import { invariantDrift, invariants, type Invariants } from '../flow/invariants.ts';
import { findWells } from '../flow/wells.ts';
import { lowestEigenpairs } from '../quantum/eigen.ts';
import { derivative, resample, spectrum } from '../spectral/ops.ts';
import { makeGrid, type Grid } from '../spectral/grid.ts';
import { DISPERSION_EXPLANATION } from '../units/scales.ts';
import { makeContext, type JobContext } from './context.ts';

/** a spectral tail (top-of-band amplitude relative to the largest mode) above this means the sequence carries
 * relative errors of about that size from the grid (common practice for this kind of indicator) */
export const TAIL_WARNING = 1e-7;
/** first guess for how many eigenpairs hold all bound states (doubled until one is unbound) */
const BOUND_SEARCH_START = 8;

export const DESIGN_FILES = ['potential.npy', 'potential.csv', 'sequence.json'] as const;

export interface SolitonPrediction {
  /** κ in natural units (1/ℓ) */
  kappa: number;
  /** κ in 1/(user length) */
  kappa_user: number;
  /** bound-state energy −κ² of the initial potential, user energy unit */
  energy: number;
  /** soliton depth 2κ², user energy unit */
  depth: number;
  /** soliton speed 4κ², user length per unit λ */
  speed: number;
}

export interface BoundStates {
  energies: number[];
  threshold: number;
  method: string;
}

export interface DesignResult {
  ctx: JobContext;
  run: FlowRun;
  bound: BoundStates;
  predicted: SolitonPrediction[];
  wellsFound: { position: number; depth: number; kappa_user: number }[];
  invariantsFirst: Invariants;
  invariantsLast: Invariants;
  drift: ReturnType<typeof invariantDrift>;
  /** classical flow: characteristics breaking λ = 1/max(6 ∂_ξu₀) (physics.md §4) */
  breakingPredicted: number | null;
  warnings: string[];
  summary: DesignSummary;
}

export interface DesignSummary {
  name: string;
  dispersion: 'quantum' | 'classical';
  frames: number;
  points: number;
  lambda_end: number;
  lambda_reached: number;
  complete: boolean;
  max_invariant_drift: number;
  predicted_solitons: { kappa: number; depth: number; speed: number }[];
  wells_found: { position: number; depth: number }[];
  units: { length: string; energy: string; lambda: string; speed: string; kappa: string };
  scales: { E0: string; t0: string; ell: string };
  delta2: number;
  delta2_meaning: string;
  breaking: null | { lambda_reached: number; lambda_extrapolated: number; lambda_characteristics: number; reason: string };
  integrator: { method: string; steps: number; rejected: number; seconds: number; tolerance: number; tail: number };
  warnings: string[];
}

/** coarsest and finest grids tried for the bound-state diagonalisation */
const BOUND_GRID_MIN = 128;
const BOUND_GRID_MAX = 512;
/** u is resolved on a coarse grid when the spectrum it drops is below this fraction (common practice) */
const BOUND_RESOLUTION = 1e-12;

/**
 * Bound states E < −(2π/L)² of H = k² + u: a state whose decay length exceeds L/2π cannot be told from the
 * box's continuum, so the threshold is set by the box (common practice). Diagonalised densely (ml-matrix) on
 * the coarsest power-of-two grid of the same box that still resolves u (spectral tail < 1e-12), at most 512.
 */
export function boundStates(grid: Grid, u: Float64Array): BoundStates {
  const threshold = -(((2 * Math.PI) / grid.length) ** 2);
  let n = Math.min(grid.n, BOUND_GRID_MIN);
  const s = spectrum(u);
  const total = s.reduce((acc, v) => acc + v * v, 0);
  const beyond = (m: number) => {
    let e = 0;
    for (let k = m; k <= grid.n / 2; k++) e += s[2 * k] ** 2 + s[2 * k + 1] ** 2;
    return Math.sqrt(e / Math.max(total, 1e-300));
  };
  while (n < Math.min(grid.n, BOUND_GRID_MAX) && beyond(n / 2) > BOUND_RESOLUTION) n *= 2;
  const g = n === grid.n ? grid : makeGrid(grid.length, n);
  const uc = n === grid.n ? u : resample(u, n);
  let count = Math.min(BOUND_SEARCH_START, n);
  for (;;) {
    const res = lowestEigenpairs(g, uc, count, { method: 'dense' });
    const bound = res.energies.filter((e) => e < threshold);
    if (bound.length < res.energies.length || count >= n) {
      return { energies: bound, threshold, method: `dense (ml-matrix) on ${n} points` };
    }
    count = Math.min(2 * count, n);
  }
}

/** 1/max(6 ∂_ξu₀) over ∂_ξu₀ > 0: first crossing of the Hopf characteristics ξ + 6uτ = const (physics.md §4) */
export function characteristicsBreaking(grid: Grid, u0: Float64Array): number {
  const ux = derivative(grid, u0, 1);
  let m = 0;
  for (const v of ux) m = Math.max(m, 6 * v);
  return m > 0 ? 1 / m : Infinity;
}

export interface DesignOptions {
  onProgress?: (lambda: number, lambdaEnd: number) => void;
}

export function runDesign(config: Config, opts: DesignOptions = {}): DesignResult {
  const ctx = makeContext(config);
  const { grid, units, u0 } = ctx;
  const flowCfg = config.flow;
  const eq = naturalFlowEquation(flowCfg.dispersion, units.lengthToNatural(flowCfg.drift));
  const frames = Array.from({ length: flowCfg.frames }, (_, i) => (flowCfg.lambda_end * i) / (flowCfg.frames - 1));
  const run = integrateFlow(grid, eq, u0, { tolerance: flowCfg.tolerance, frames, onProgress: opts.onProgress });
  const warnings = [...ctx.warnings];

  const bound = boundStates(grid, u0);
  const perLength = units.lengthToNatural(1);
  const predicted = bound.energies.map((e) => {
    const kappa = Math.sqrt(-e);
    return {
      kappa,
      kappa_user: kappa * perLength,
      energy: units.energyFromNatural(e),
      depth: units.energyFromNatural(2 * kappa * kappa),
      speed: units.lengthFromNatural(4 * kappa * kappa),
    };
  });
  const last = run.frames[run.frames.length - 1];
  const wellsFound = findWells(grid, last).map((w) => ({
    position: units.lengthFromNatural(w.position),
    depth: units.energyFromNatural(w.depth),
    kappa_user: w.kappa * perLength,
  }));
  const invariantsFirst = invariants(grid, eq, u0);
  const invariantsLast = invariants(grid, eq, last);
  const drift = invariantDrift(invariantsFirst, invariantsLast);

  if (run.tail > TAIL_WARNING && !run.breaking) {
    warnings.push(`the last frame's spectral tail is ${run.tail.toExponential(2)} (> ${TAIL_WARNING}): expect relative errors of about that size from the grid; raise grid.points for a finer sequence`);
  }
  if (run.discardedTail > TAIL_WARNING) {
    warnings.push(`the initial potential holds ${run.discardedTail.toExponential(2)} of its spectrum beyond the dealiased band (> ${TAIL_WARNING}), which was dropped: it is too sharp for this grid; raise grid.points or smooth it`);
  }
  let breakingPredicted: number | null = null;
  if (flowCfg.dispersion === 'classical') breakingPredicted = characteristicsBreaking(grid, u0);
  if (run.breaking) {
    warnings.push(
      `the ${flowCfg.dispersion} flow stopped at λ = ${run.breaking.lambdaReached.toPrecision(6)} before λ_end = ${flowCfg.lambda_end}: ${run.breaking.reason}; ` +
        `extrapolated breaking λ = ${run.breaking.lambdaExtrapolated.toPrecision(6)}` +
        (breakingPredicted !== null ? `, characteristics predict λ_b = 1/max(6∂ξu₀) = ${breakingPredicted.toPrecision(6)}` : '') +
        `; ${run.frames.length} of ${flowCfg.frames} frames were written`,
    );
  }
  const E = units.labels.energy;
  const Lb = units.labels.length;
  const summary: DesignSummary = {
    name: config.name,
    dispersion: flowCfg.dispersion,
    frames: run.frames.length,
    points: grid.n,
    lambda_end: flowCfg.lambda_end,
    lambda_reached: run.lambdas[run.lambdas.length - 1],
    complete: run.breaking === null,
    max_invariant_drift: drift.max,
    predicted_solitons: predicted.map((p) => ({ kappa: p.kappa_user, depth: p.depth, speed: p.speed })),
    wells_found: wellsFound.map((w) => ({ position: w.position, depth: w.depth })),
    units: { length: Lb, energy: E, lambda: 'dimensionless (KdV time in the natural units of ℓ)', speed: `${Lb} per unit λ`, kappa: `1/${Lb}` },
    scales: scalesText(ctx),
    delta2: ctx.delta2,
    delta2_meaning: DISPERSION_EXPLANATION,
    breaking: run.breaking
      ? {
          lambda_reached: run.breaking.lambdaReached,
          lambda_extrapolated: run.breaking.lambdaExtrapolated,
          lambda_characteristics: breakingPredicted ?? NaN,
          reason: run.breaking.reason,
        }
      : null,
    integrator: {
      method: 'Fourier pseudo-spectral, 2/3 dealiasing, ETDRK4 (full-circle contour) with step doubling',
      steps: run.stats.accepted,
      rejected: run.stats.rejected,
      seconds: run.stats.wallSeconds,
      tolerance: flowCfg.tolerance,
      tail: run.tail,
    },
    warnings,
  };
  return { ctx, run, bound, predicted, wellsFound, invariantsFirst, invariantsLast, drift, breakingPredicted, warnings, summary };
}

export function scalesText(ctx: JobContext): { E0: string; t0: string; ell: string } {
  const u = ctx.units;
  if (u.system === 'natural') return { E0: 'E₀ = ħ²/(2mℓ²) (natural units)', t0: 't₀ = ħ/E₀', ell: 'ℓ' };
  const hz = u.E0 / 6.62607015e-34; // E₀/h in Hz (CODATA 2018 exact h)
  return { E0: `E₀ = h × ${hz.toPrecision(5)} Hz`, t0: `t₀ = ${(u.t0 * 1e3).toPrecision(5)} ms`, ell: `ℓ = ${(u.ell * 1e6).toPrecision(5)} µm` };
}

/** NaN and ±Infinity become null in JSON outputs (JSON has no NaN); never written as numbers */
export function toJson(value: unknown, indent?: number): string {
  return JSON.stringify(value, (_k, v) => (typeof v === 'number' && !Number.isFinite(v) ? null : v instanceof Float64Array ? Array.from(v) : v), indent);
}

/** Write potential.npy / potential.csv / sequence.json into dir (atomically; refuses to overwrite without force). */
export function writeDesignOutputs(result: DesignResult, dir: string, force: boolean): string[] {
  const { ctx, run } = result;
  const { units, grid } = ctx;
  const outDir = prepareOutputDir(dir, { force, produces: [...DESIGN_FILES] });
  const nF = run.frames.length;
  const flat = new Float64Array(nF * grid.n);
  run.frames.forEach((f, i) => {
    for (let j = 0; j < grid.n; j++) flat[i * grid.n + j] = units.energyFromNatural(f[j]);
  });
  for (const v of flat) if (!Number.isFinite(v)) throw new Error('internal error: a non-finite potential value reached the output');
  const files = DESIGN_FILES.map((f) => join(outDir, f));
  writeFileAtomic(files[0], encodeNpy(flat, [nF, grid.n]));
  const header = [`x (${units.labels.length})`, ...run.lambdas.map((l) => `lambda=${l}`)];
  const columns = [ctx.xUser, ...run.frames.map((_, i) => flat.subarray(i * grid.n, (i + 1) * grid.n))];
  writeFileAtomic(files[1], `# potential V(x, λ) in ${units.labels.energy}; λ dimensionless\n` + writeCsv(header, columns));
  const sequence = {
    format: 'isotrap-sequence/1',
    x: ctx.xUser,
    lambda: run.lambdas,
    length_unit: units.labels.length,
    energy_unit: units.labels.energy,
    lambda_unit: 'dimensionless (KdV time τ in the natural units of ℓ)',
    species: ctx.speciesLabel,
    mass_u: ctx.config.units.system === 'lab' ? ctx.config.units.mass_u : null,
    length_unit_um: ctx.config.units.system === 'lab' ? ctx.config.units.length_unit_um : null,
    dispersion: ctx.config.flow.dispersion,
    drift: ctx.config.flow.drift,
    scales: {
      ...scalesText(ctx),
      E0_joule: units.system === 'lab' ? units.E0 : null,
      t0_second: units.system === 'lab' ? units.t0 : null,
      ell_metre: units.system === 'lab' ? units.ell : null,
    },
    invariants: { first: result.invariantsFirst, last: result.invariantsLast, relative_drift: result.drift, units: 'natural (ℓ, E₀): ∫u, ∫u², ∫(u³ + ½u_ξ²)' },
    solitons: { predicted: result.predicted, bound_state_method: result.bound.method, bound_threshold_E0: result.bound.threshold, found_in_last_frame: result.wellsFound },
    summary: result.summary,
    config: { ...ctx.config, meta: undefined },
  };
  writeFileAtomic(files[2], toJson(sequence));
  return files;
}
