/**
 * `design`: integrate the KdV (quantum) or Hopf (classical) flow from the configured trap and collect the
 * diagnostics a physicist checks before trusting a sequence (physics.md §2–§5).
 */
import type { Config } from '../io/config.ts';
import { writeCsv } from '../io/csv.ts';
import { encodeNpy } from '../io/npy.ts';
import { FLOW_PAIR, integrateFlow, naturalFlowEquation, type FlowRun } from '../flow/kdv.ts';
import { invariantDrift, invariants, type Invariants } from '../flow/invariants.ts';
import { findWells } from '../flow/wells.ts';
import { gridBreaking } from '../flow/breaking.ts';
import { boundStates, spectrumTrack, type BoundStates, type SpectrumTrack } from '../quantum/spectrum-track.ts';
import { solitonFrameSpeed, solitonFromBoundState } from '../flow/solitons.ts';
import { DISPERSION_EXPLANATION } from '../units/scales.ts';
import { PLANCK_H } from '../units/constants.ts';
import { frameLambdas, makeContext, resolutionAdvice, UNRESOLVED_TAIL, type JobContext } from './context.ts';
import { NumericalError } from '../core/errors.ts';
import type { DesignSummary, SolitonPrediction } from '../io/formats/sequence.ts';
import { configIdentity, writeRun, type RunFolder } from '../io/run-folder.ts';
import { assertDesignAffordable, denseOutputBudget } from '../io/cost.ts';
import { depthBudget, narrowestFeature } from '../flow/budgets.ts';
import { TARGET_DEPTH_TOL, TARGET_POSITION_TOL } from '../io/target.ts';
import type { BudgetSummary, OutcomeSummary } from '../io/formats/sequence.ts';
import { compareWithExact, exactEndOf } from './outcome.ts';
import { initialPotential } from './context.ts';
export type { DesignSummary, SolitonPrediction };

/** a spectral tail (top-of-band amplitude relative to the largest mode) above this means the sequence carries
 * relative errors of about that size from the grid (common practice for this kind of indicator) */
export const TAIL_WARNING = 1e-7;

/** the sequence counts as beyond the starting trap's depth or resolution only past this fraction: budgets are read
 * off the grid samples, which miss a moving minimum by up to (κh/2)² of its depth (common practice) */
export const BUDGET_SLACK = 1e-2;

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
  const bound = boundStates(grid, u0);
  const frameSpeed = solitonFrameSpeed(eq, bound.energies);
  const run = integrateFlow(grid, eq, u0, { tolerance: flowCfg.tolerance, frames, onProgress: opts.onProgress, keepDense, maxDenseBytes: denseOutputBudget(), frameSpeed });
  if (!run.breaking && run.tail > UNRESOLVED_TAIL) {
    throw new NumericalError(
      `the grid does not resolve the designed sequence: the last frame's spectral tail is ${run.tail.toExponential(2)} (> ${UNRESOLVED_TAIL}) at λ = ${flowCfg.lambda_end}; ${resolutionAdvice(config, units, false)}`,
    );
  }
  const warnings = [...ctx.warnings];

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
  const budgets = budgetSummary(config, ctx, run);
  warnings.push(...budgetWarnings(budgets, units.labels));
  const outcome = outcomeSummary(config, ctx, run);
  if (outcome && !outcome.met) warnings.push(`the design misses its ${outcome.kind} outcome: ${outcome.verdict}`);
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
    spectral_drift: bound.energies.length > 0 ? units.energyFromNatural(spectrum.maxDrift) : null,
    predicted_solitons: predicted.map((p) => ({ kappa: p.kappa_user, depth: p.depth, speed: p.speed })),
    wells_found: wellsFound.map((w) => ({ position: w.position, depth: w.depth })),
    units: { length: Lb, energy: E, lambda: 'dimensionless (KdV time in the natural units of ℓ)', speed: `${Lb} per unit λ`, kappa: `1/${Lb}` },
    scales: scalesText(ctx),
    delta2: ctx.delta2,
    delta2_meaning: DISPERSION_EXPLANATION,
    budgets,
    outcome,
    breaking: run.breaking
      ? {
          lambda_reached: run.breaking.lambdaReached,
          lambda_extrapolated: run.breaking.lambdaExtrapolated,
          lambda_characteristics: breakingPredicted ?? NaN,
          reason: run.breaking.reason,
        }
      : null,
    integrator: {
      method: `Fourier pseudo-spectral, 2/3 dealiasing, ${FLOW_PAIR.name} embedded exponential Runge–Kutta pair (${FLOW_PAIR.source})${frameSpeed !== 0 ? `, in the frame of the fastest soliton (speed ${frameSpeed.toPrecision(6)} ℓ per unit λ, natural units)` : ''}`,
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

/**
 * Depth (laser power) and resolution budgets over the stored frames (flow/budgets.ts), in the config's units, with
 * the user's `budget` limits.
 */
function budgetSummary(config: Config, ctx: JobContext, run: FlowRun): BudgetSummary {
  const { units, grid } = ctx;
  const depth = depthBudget(run.frames);
  const narrow = narrowestFeature(grid.x, run.frames);
  const start = narrowestFeature(grid.x, run.frames.slice(0, 1));
  const length = (v: number) => (Number.isFinite(v) ? units.lengthFromNatural(v) : null);
  return {
    start_depth: units.energyFromNatural(depth.startDepth),
    deepest: units.energyFromNatural(depth.deepest),
    deepest_lambda: run.lambdas[depth.frame],
    depth_ratio: depth.ratio,
    start_feature: length(start.narrowest),
    narrowest_feature: length(narrow.narrowest),
    narrowest_lambda: narrow.frame >= 0 ? run.lambdas[narrow.frame] : null,
    narrowest_position: length(narrow.position),
    limit_depth: config.budget?.depth ?? null,
    limit_feature: config.budget?.feature ?? null,
    sampled: `over the ${run.frames.length} stored frames; feature = full width at half depth of a well`,
  };
}

/** warnings when the sequence needs more than the starting trap or than the user's budget */
function budgetWarnings(b: BudgetSummary, labels: { energy: string; length: string }): string[] {
  const out: string[] = [];
  const at = (l: number | null) => `at λ = ${l?.toPrecision(4)}`;
  if (b.depth_ratio > 1 + BUDGET_SLACK) out.push(`the sequence reaches ${b.depth_ratio.toPrecision(4)} times the starting depth (${b.deepest.toPrecision(4)} ${labels.energy} ${at(b.deepest_lambda)}): the laser power must allow it`);
  if (b.limit_depth !== null && b.deepest > b.limit_depth) out.push(`the sequence reaches ${b.deepest.toPrecision(4)} ${labels.energy} ${at(b.deepest_lambda)}, beyond budget.depth = ${b.limit_depth} ${labels.energy}`);
  const f = b.narrowest_feature;
  if (f !== null && b.start_feature !== null && f < b.start_feature * (1 - BUDGET_SLACK)) out.push(`the narrowest well (${f.toPrecision(4)} ${labels.length} wide ${at(b.narrowest_lambda)}) is narrower than the starting trap's (${b.start_feature.toPrecision(4)} ${labels.length}): the optics must resolve it`);
  if (f !== null && b.limit_feature !== null && f < b.limit_feature) out.push(`the narrowest well is ${f.toPrecision(4)} ${labels.length} wide ${at(b.narrowest_lambda)}, below budget.feature = ${b.limit_feature} ${labels.length}`);
  return out;
}

/** the requested outcome against the last frame (null for starts not built from an outcome), in the config's units */
function outcomeSummary(config: Config, ctx: JobContext, run: FlowRun): OutcomeSummary | null {
  const { units, grid } = ctx;
  const init = config.initial;
  const trap = init.kind === 'reflectionless' ? initialPotential({ ...config, initial: init.from }, units, grid) : ctx.u0;
  const exact = exactEndOf(config, units, grid, trap);
  if (!exact) return null;
  const last = run.frames[run.frames.length - 1];
  const kappaMax = Math.max(...findWells(grid, exact.potential).map((w) => w.kappa));
  const c = compareWithExact(grid, last, exact, kappaMax, TARGET_POSITION_TOL, TARGET_DEPTH_TOL);
  const L = units.lengthFromNatural;
  const E = units.energyFromNatural;
  const e = (v: number | null) => (v === null ? 'n/a' : v.toExponential(2));
  const verdict = c.met
    ? `${c.wells.length} wells where asked: positions within ${e(c.positionError)} of the narrowest width and depths within ${e(c.depthError)} (tolerances ${TARGET_POSITION_TOL}, ${TARGET_DEPTH_TOL} of the depth)`
    : `${c.wellsFound} wells found for ${c.wells.length} asked; positions off by ${e(c.positionError)} of the narrowest width (tolerance ${TARGET_POSITION_TOL}), depths by ${e(c.depthError)} (tolerance ${TARGET_DEPTH_TOL}); raise grid.points or lower flow.tolerance`;
  const opt = (v: number | null, f: (x: number) => number) => (v === null ? null : f(v));
  const fit = exact.fit;
  let fitMax = 0;
  if (fit) trap.forEach((v, j) => (fitMax = Math.max(fitMax, Math.abs(fit.potential[j] - v))));
  return {
    kind: exact.kind,
    notes: exact.notes,
    wells: c.wells.map((w) => ({ requested_position: L(w.requestedPosition), reached_position: opt(w.reachedPosition, L), requested_depth: E(w.requestedDepth), reached_depth: opt(w.reachedDepth, E) })),
    position_error_widths: c.positionError,
    depth_error_relative: c.depthError,
    exact_distance_relative: c.exactDistance,
    met: c.met,
    verdict,
    fit: fit ? { distance_l2_relative: fit.distance, max_difference: E(fitMax), radiation_fraction: fit.radiationFraction } : null,
  };
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
