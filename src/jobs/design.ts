/**
 * `design`: integrate the KdV (quantum) or Hopf (classical) flow from the configured trap and collect the
 * diagnostics a physicist checks before trusting a sequence (physics.md §2–§5).
 */
import type { Config } from '../io/config.ts';
import { writeCsv } from '../io/csv.ts';
import { encodeNpy } from '../io/npy.ts';
import { integrateFlow, naturalFlowEquation, type FlowRun } from '../flow/kdv.ts';
import { invariantDrift, invariants, type Invariants } from '../flow/invariants.ts';
import { findWells } from '../flow/wells.ts';
import { gridBreaking } from '../flow/breaking.ts';
import { boundStates, spectrumTrack, type BoundStates, type SpectrumTrack } from '../quantum/spectrum-track.ts';
import { solitonFromBoundState } from '../flow/solitons.ts';
import { DISPERSION_EXPLANATION } from '../units/scales.ts';
import { PLANCK_H } from '../units/constants.ts';
import { frameLambdas, makeContext, resolutionAdvice, UNRESOLVED_TAIL, type JobContext } from './context.ts';
import { NumericalError } from '../core/errors.ts';
import type { DesignSummary, SolitonPrediction } from '../io/formats/sequence.ts';
import { configIdentity, writeRun, type RunFolder } from '../io/run-folder.ts';
import { assertDesignAffordable, denseOutputBudget } from '../io/cost.ts';
export type { DesignSummary, SolitonPrediction };

/** a spectral tail (top-of-band amplitude relative to the largest mode) above this means the sequence carries
 * relative errors of about that size from the grid (common practice for this kind of indicator) */
export const TAIL_WARNING = 1e-7;

export const DESIGN_FILES = ['potential.npy', 'potential.csv', 'sequence.json'] as const;

export interface DesignResult {
  spectrum: SpectrumTrack;
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

/** the solitons the start will shed (flow/solitons.ts), in the config's units */
function solitonPredictions(energies: readonly number[], units: JobContext['units']): SolitonPrediction[] {
  const perLength = units.lengthToNatural(1);
  return energies.map((e) => {
    const { kappa, depth, speed } = solitonFromBoundState(e);
    return {
      kappa,
      kappa_user: kappa * perLength,
      energy: units.energyFromNatural(e),
      depth: units.energyFromNatural(depth),
      speed: units.lengthFromNatural(speed),
    };
  });
}

/** warnings about the grid resolution of the sequence (spectral tails) */
function resolutionWarnings(run: FlowRun): string[] {
  const warnings: string[] = [];
  if (run.tail > TAIL_WARNING && !run.breaking) {
    warnings.push(`the last frame's spectral tail is ${run.tail.toExponential(2)} (> ${TAIL_WARNING}): expect relative errors of about that size from the grid; raise grid.points for a finer sequence`);
  }
  if (run.discardedTail > TAIL_WARNING) {
    warnings.push(`the initial potential holds ${run.discardedTail.toExponential(2)} of its spectrum beyond the dealiased band (> ${TAIL_WARNING}), which was dropped: it is too sharp for this grid; raise grid.points or smooth it`);
  }
  return warnings;
}

export interface DesignOptions {
  onProgress?: (lambda: number, lambdaEnd: number) => void;
  /** keep the flow's dense output for a Schrödinger proof or a lattice (default true) */
  keepDense?: boolean;
  /** the job context, when the caller has made it already */
  context?: JobContext;
}

export function runDesign(config: Config, opts: DesignOptions = {}): DesignResult {
  const ctx = opts.context ?? makeContext(config);
  const { grid, units, u0 } = ctx;
  const keepDense = opts.keepDense ?? true;
  assertDesignAffordable(config, ctx, keepDense);
  const flowCfg = config.flow;
  const eq = naturalFlowEquation(flowCfg.dispersion, units.lengthToNatural(flowCfg.drift));
  const frames = frameLambdas(flowCfg);
  const run = integrateFlow(grid, eq, u0, { tolerance: flowCfg.tolerance, frames, onProgress: opts.onProgress, keepDense, maxDenseBytes: denseOutputBudget() });
  if (!run.breaking && run.tail > UNRESOLVED_TAIL) {
    throw new NumericalError(
      `the grid does not resolve the designed sequence: the last frame's spectral tail is ${run.tail.toExponential(2)} (> ${UNRESOLVED_TAIL}) at λ = ${flowCfg.lambda_end}; ${resolutionAdvice(config, units, false)}`,
    );
  }
  const warnings = [...ctx.warnings];

  const bound = boundStates(grid, u0);
  const perLength = units.lengthToNatural(1);
  const predicted = solitonPredictions(bound.energies, units);
  const last = run.frames[run.frames.length - 1];
  const wellsFound = findWells(grid, last).map((w) => ({
    position: units.lengthFromNatural(w.position),
    depth: units.energyFromNatural(w.depth),
    kappa_user: w.kappa * perLength,
  }));
  const spectrum = spectrumTrack(grid, run.lambdas, run.frames, bound.energies.length);
  const invariantsFirst = invariants(grid, eq, u0);
  const invariantsLast = invariants(grid, eq, last);
  const drift = invariantDrift(invariantsFirst, invariantsLast);

  warnings.push(...resolutionWarnings(run));
  let breakingPredicted: number | null = null;
  if (flowCfg.dispersion === 'classical') breakingPredicted = gridBreaking(grid, u0);
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
    spectral_drift: units.energyFromNatural(spectrum.maxDrift),
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
  return { spectrum, ctx, run, bound, predicted, wellsFound, invariantsFirst, invariantsLast, drift, breakingPredicted, warnings, summary };
}

export function scalesText(ctx: JobContext): { E0: string; t0: string; ell: string } {
  const u = ctx.units;
  if (u.system === 'natural') return { E0: 'E₀ = ħ²/(2mℓ²) (natural units)', t0: 't₀ = ħ/E₀', ell: 'ℓ' };
  const hz = u.E0 / PLANCK_H; // E₀/h in Hz
  return { E0: `E₀ = h × ${hz.toPrecision(5)} Hz`, t0: `t₀ = ${(u.t0 * 1e3).toPrecision(5)} ms`, ell: `ℓ = ${(u.ell * 1e6).toPrecision(5)} µm` };
}

/** NaN and ±Infinity become null in JSON outputs (JSON has no NaN); never written as numbers */
export function toJson(value: unknown, indent?: number): string {
  return JSON.stringify(value, (_k, v) => (typeof v === 'number' && !Number.isFinite(v) ? null : v instanceof Float64Array ? Array.from(v) : v), indent);
}

/** Write potential.npy / potential.csv / sequence.json into dir (atomically; refuses to overwrite without force). */
export function writeDesignOutputs(result: DesignResult, dir: string, force: boolean, identity = configIdentity(result.ctx.config)): string[] {
  return writeRun(dir, { force, produces: DESIGN_FILES, job: 'design', identity }, (out) => stageDesign(result, out));
}

function stageDesign(result: DesignResult, out: RunFolder): void {
  const { ctx, run } = result;
  const { units, grid } = ctx;
  const nF = run.frames.length;
  const flat = new Float64Array(nF * grid.n);
  run.frames.forEach((f, i) => {
    for (let j = 0; j < grid.n; j++) flat[i * grid.n + j] = units.energyFromNatural(f[j]);
  });
  for (const v of flat) if (!Number.isFinite(v)) throw new Error('internal error: a non-finite potential value reached the output');
  out.write(DESIGN_FILES[0], encodeNpy(flat, [nF, grid.n]));
  const header = [`x (${units.labels.length})`, ...run.lambdas.map((l) => `lambda=${l}`)];
  const columns = [ctx.xUser, ...run.frames.map((_, i) => flat.subarray(i * grid.n, (i + 1) * grid.n))];
  out.write(DESIGN_FILES[1], `# potential V(x, λ) in ${units.labels.energy}; λ dimensionless\n` + writeCsv(header, columns));
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
    spectrum: {
      lambda: result.spectrum.lambda,
      energies: result.spectrum.energies.map((row) => row.map((e) => units.energyFromNatural(e))),
      max_drift: units.energyFromNatural(result.spectrum.maxDrift),
      unit: units.labels.energy,
    },
    solitons: { predicted: result.predicted, bound_state_method: result.bound.method, bound_threshold_E0: result.bound.threshold, found_in_last_frame: result.wellsFound },
    summary: result.summary,
    config: { ...ctx.config, meta: undefined },
  };
  out.write(DESIGN_FILES[2], toJson(sequence));
}
