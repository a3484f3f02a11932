/**
 * `compare`: quantum (KdV) against classical (Hopf) design of the same trap (physics.md §2–§4).
 *
 * From one config: both sequences from the same u₀ (the classical one until its breaking λ), their relative
 * distance against λ (max and L² norms, measured against the quantum sequence) and the λ where it reaches 1 %,
 * a check of the classical sequence against the exact characteristics solution, the ħ-scaling study in the
 * variables scaled by depth and width (classical/scaling.ts), and the classical phase-space check of the cubic
 * CD Hamiltonian along both sequences (classical/cd.ts). The quantum consequence (fidelities of states driven
 * with either sequence plus the cubic correction) is added by `quantumDrives` into the slot `quantum`.
 * The config section and its defaults are in io/config-compare.ts.
 */
import { shellStarts, type TrajectoryReport } from '../classical/cd.ts';
import { characteristicsCheck, characteristicsSampler, phaseSpaceComparison, smallOscillationPeriod } from '../classical/comparison.ts';
import { FourierProfile } from '../classical/field.ts';
import { hopfBreaking } from '../classical/hopf.ts';
import {
  DISTANCE_THRESHOLD,
  denseSampler,
  distanceCurve,
  driftSweep,
  fromScaledLambda,
  scaledProblem,
  scalingStudy,
  thresholdCrossing,
  type DriftSweep,
  type Sampler,
  type ScaledProblem,
  type ScalingStudy,
} from '../classical/scaling.ts';
import type { CompareConfig } from '../io/config-compare.ts';
import { UserError } from '../core/errors.ts';
import { integrateFlow, naturalFlowEquation, type FlowRun } from '../flow/kdv.ts';
import { gridBreaking } from '../flow/breaking.ts';
import { makeRamp, type RampKind } from '../protocol/ramp.ts';
import { driveWithCorrection } from '../quantum/correction.ts';
import { scalesText, toJson } from './design.ts';
import { compareFigures, writeFigures } from './report.ts';
import type { FigureSize } from '../report/style.ts';
import { frameLambdas, makeContext, sequenceFrameSpeed, type JobContext } from './context.ts';
import type { CompareSummary, DriftJson, DriveFidelity, QuantumConsequence, TrajectoryJson } from '../io/formats/compare.ts';
import { writeRun, type RunIdentity } from '../io/run-folder.ts';
import { assertDesignAffordable, assertVerifyAffordable } from '../io/cost.ts';
export type { CompareSummary, DriftJson, DriveFidelity, QuantumConsequence, TrajectoryJson };

/** points of the check of the pseudo-spectral Hopf run against characteristics over its resolved range */
export const CHARACTERISTICS_CHECK_POINTS = 6;
/** the classical sequence is compared up to this fraction of its breaking λ (the front is vertical at 1) */
export const CLASSICAL_END_FRACTION = 0.95;
/** trajectories ramp at most to this fraction of the breaking λ: the Hopf curvature grows like q³ with
 * q = 1/(1 − λ/λ_b) (8 here), and the step count with it; closer to breaking it grows without bound */
export const TRAJECTORY_END_FRACTION = 0.5;

export const COMPARE_FILES = ['compare.json'] as const;

// ---------------------------------------------------------------------------------------------------------
// result

export interface CompareResult {
  ctx: JobContext;
  /** the KdV run (dense output: quantum.dense.at(λ, out)) */
  quantum: FlowRun;
  /** the pseudo-spectral Hopf run (resolved only up to summary.breaking.lambda_spectral_reached) */
  classical: FlowRun;
  /** u(·, λ) on the natural grid (E₀) of the two sequences, for λ ∈ [0, summary.lambda_common] */
  quantumAt: Sampler;
  classicalAt: Sampler;
  study: ScalingStudy;
  drift: DriftSweep | null;
  summary: CompareSummary;
}

export interface CompareOptions {
  /** the stage running and the fraction of it done (0 when it starts; the stages' costs differ too much between
   *  scenarios for one fraction of the whole) */
  onProgress?: (stage: string, fraction: number) => void;
  /** the job context, when the caller has made it already */
  context?: JobContext;
}

const finiteOrNull = (v: number): number | null => (Number.isFinite(v) ? v : null);

function driftJson(t: TrajectoryReport, energy: (u: number) => number): DriftJson {
  return {
    energy_drift: energy(t.energyDriftMax),
    energy_drift_final: energy(t.energyDriftFinal),
    action_start: finiteOrNull(t.actionStart),
    action_end: finiteOrNull(t.actionEnd),
    action_drift: finiteOrNull(t.actionDriftMax),
  };
}

function maxOrNull(v: (number | null)[]): number | null {
  if (v.some((x) => x === null)) return null;
  return Math.max(...(v as number[]));
}

type Progress = (stage: string, fraction: number) => void;

/** the two sequences of the same start and the λ ranges on which they exist */
interface Sequences {
  quantum: FlowRun;
  classical: FlowRun;
  quantumAt: Sampler;
  classicalAt: Sampler;
  profile0: FourierProfile;
  breaking: ReturnType<typeof hopfBreaking>;
  breakingGrid: number;
  quantumReached: number;
  classicalEnd: number;
  lambdaCommon: number;
  spectralReached: number;
}

/**
 * Both sequences. The classical one is the exact characteristics solution sampled on the grid (pointwise, no
 * spectral truncation) up to CLASSICAL_END_FRACTION of its breaking λ; the pseudo-spectral Hopf run (flow/kdv.ts)
 * is kept as an independent check over the range the grid resolves.
 */
function bothSequences(config: CompareConfig, ctx: JobContext, warnings: string[], progress: Progress): Sequences {
  const { grid, units, u0 } = ctx;
  const flowCfg = config.flow;
  const drift = units.lengthToNatural(flowCfg.drift);
  const lambdaEnd = flowCfg.lambda_end;
  const frames = frameLambdas(flowCfg);
  const breaking = hopfBreaking(grid, u0);
  const breakingGrid = gridBreaking(grid, u0);
  progress('quantum sequence', 0);
  const quantumEq = naturalFlowEquation('quantum', drift);
  const quantum = integrateFlow(grid, quantumEq, u0, { tolerance: flowCfg.tolerance, frames, frameSpeed: sequenceFrameSpeed(grid, quantumEq, u0) });
  if (quantum.breaking) warnings.push(`the quantum flow stopped at λ = ${quantum.breaking.lambdaReached}: ${quantum.breaking.reason}`);
  const quantumReached = quantum.breaking ? quantum.breaking.lambdaReached : lambdaEnd;
  progress('classical sequence', 0);
  const profile0 = new FourierProfile(grid, u0);
  const classicalAt = characteristicsSampler(grid, profile0, drift, breaking.lambda);
  const classicalEnd = Math.min(lambdaEnd, CLASSICAL_END_FRACTION * breaking.lambda);
  const lambdaCommon = Math.min(classicalEnd, quantumReached);
  if (breaking.lambda < lambdaEnd) {
    warnings.push(
      `the classical (Hopf) sequence breaks at λ_b = 1/max(6∂ξu₀) = ${breaking.lambda.toPrecision(6)} < λ_end = ${lambdaEnd}: ` +
        `the sequences are compared on [0, ${lambdaCommon.toPrecision(6)}] only`,
    );
  }
  const spectralFrames = frames.filter((l) => l < breaking.lambda);
  if (breaking.lambda < lambdaEnd) spectralFrames.push(breaking.lambda);
  const classical = integrateFlow(grid, naturalFlowEquation('classical', drift), u0, { tolerance: flowCfg.tolerance, frames: spectralFrames, detectBreaking: true });
  const spectralReached = classical.breaking ? classical.breaking.lambdaReached : classical.lambdas[classical.lambdas.length - 1];
  return { quantum, classical, quantumAt: denseSampler(quantum.dense), classicalAt, profile0, breaking, breakingGrid, quantumReached, classicalEnd, lambdaCommon, spectralReached };
}

/** the ħ-scaling study in scaled variables (classical/scaling.ts) */
function scalingStep(config: CompareConfig, ctx: JobContext, warnings: string[]): { problem: ScaledProblem; study: ScalingStudy } {
  const delta = Math.sqrt(ctx.delta2);
  if (!Number.isFinite(delta)) throw new UserError(`compare: the deepest well has no curvature width (δ² = ${ctx.delta2}): the scaling study needs a smooth minimum`);
  const problem = scaledProblem(ctx.grid, ctx.u0, ctx.depth, ctx.width);
  const deltas = config.compare.sweep.map((f) => f * delta);
  const study = scalingStudy(problem, { deltas, lambdaScaled: config.compare.lambda_fraction * problem.breaking, tolerance: config.flow.tolerance });
  if (Math.abs(study.fitMax.exponent - 2) > 0.2) {
    warnings.push(`the fitted exponent ${study.fitMax.exponent.toFixed(3)} is far from the small-δ value 2: the sweep reaches δ where higher orders in ħ² matter (or λ_fraction is close to breaking)`);
  }
  return { problem, study };
}

/** the classical phase-space check in natural units along both sequences, in the config's units */
function trajectoryStep(config: CompareConfig, ctx: JobContext, seq: Sequences, progress: Progress): { section: CompareSummary['classical_phase_space']; rampKind: RampKind } {
  const { grid, units } = ctx;
  const tr = config.compare.trajectories;
  const lambdaEnd = config.flow.lambda_end;
  const duration = tr.duration !== undefined ? units.timeToNatural(tr.duration) : config.protocol ? units.timeToNatural(config.protocol.duration) : tr.periods * smallOscillationPeriod(seq.profile0, grid.x);
  const rampKind: RampKind = config.protocol?.ramp ?? 'sin2';
  const lambdaRamp = Math.min(seq.quantumReached, lambdaEnd, TRAJECTORY_END_FRACTION * seq.breaking.lambda);
  const ramp = makeRamp(rampKind, duration, lambdaRamp);
  const starts = shellStarts(seq.profile0, grid.x, tr.shells, tr.phases);
  if (starts.length === 0) throw new UserError(`compare.trajectories: no closed orbit found in the deepest well of the initial potential (is the box too small?)`);
  const drift = units.lengthToNatural(config.flow.drift);
  const { onClassical, onQuantum } = phaseSpaceComparison({ grid, profile: seq.profile0, drift, quantum: seq.quantum.dense, ramp, lambdaBreak: seq.breaking.lambda, starts }, () => progress('trajectories', 0.5)); // the classical half of the trajectories is done
  const E = units.energyFromNatural;
  const perLength = units.lengthToNatural(1);
  const trajectories: TrajectoryJson[] = starts.map((s, i) => ({
    shell_energy: E(s.energy),
    shell_fraction: s.fraction,
    x0: units.lengthFromNatural(s.x),
    k0: s.p * perLength,
    classical: driftJson(onClassical.trajectories[i], E),
    quantum: driftJson(onQuantum.trajectories[i], E),
  }));
  const section: CompareSummary['classical_phase_space'] = {
    method: 'implicit midpoint in extended phase space, Yoshida 4th-order triple jump (symplectic, non-separable H)',
    hamiltonian: 'H_CD = p² + u(x, λ) + λ′(s)(−4p³ − 6up + cp) in natural units (Weyl symbol of the cubic CD term)',
    duration: units.timeFromNatural(duration),
    ramp: rampKind,
    lambda_end: lambdaRamp,
    steps: { classical: onClassical.steps, quantum: onQuantum.steps },
    trajectories,
    max: {
      classical_energy_drift: Math.max(...trajectories.map((t) => t.classical.energy_drift)),
      quantum_energy_drift: Math.max(...trajectories.map((t) => t.quantum.energy_drift)),
      classical_action_drift: maxOrNull(trajectories.map((t) => t.classical.action_drift)),
      quantum_action_drift: maxOrNull(trajectories.map((t) => t.quantum.action_drift)),
    },
  };
  return { section, rampKind };
}

/** the drift per δ of the sweep (scaled variables), when compare.sweep_drift is on */
function driftStep(config: CompareConfig, problem: ScaledProblem, study: ScalingStudy, rampKind: RampKind): DriftSweep | null {
  if (!config.compare.sweep_drift) return null;
  const tr = config.compare.trajectories;
  const scaledPeriod = smallOscillationPeriod(new FourierProfile(problem.grid, problem.v0), problem.grid.x);
  return driftSweep(problem, study, { shells: Math.min(tr.shells, 3), phases: Math.min(tr.phases, 2), duration: tr.periods * scaledPeriod, ramp: rampKind });
}

/** the scaling section of compare.json */
function scalingSection(config: CompareConfig, ctx: JobContext, study: ScalingStudy, driftStudy: DriftSweep | null): CompareSummary['scaling'] {
  return {
    exponent: study.fitMax.exponent,
    uncertainty: study.fitMax.uncertainty,
    exponent_l2: study.fitL2.exponent,
    uncertainty_l2: study.fitL2.uncertainty,
    prefactor: study.fitMax.prefactor,
    lambda_scaled: study.lambdaScaled,
    lambda_fraction: config.compare.lambda_fraction,
    breaking_scaled: study.breakingScaled,
    lambda_natural: fromScaledLambda(study.lambdaScaled, ctx.depth, ctx.width),
    points: study.points.map((p) => ({ delta: p.delta, delta2: p.delta2, distance_max: p.distance.max, distance_l2: p.distance.l2, lambda_1pct_scaled: p.lambda1pct })),
    tails: { classical: study.classicalTail, quantum: study.quantumTail },
    phase_space: driftStudy && {
      duration_scaled: driftStudy.duration,
      trajectories: driftStudy.trajectories,
      points: driftStudy.points.map((p) => ({ delta: p.delta, energy_drift_mean: p.energyMean, energy_drift_max: p.energyMax, action_drift_mean: p.actionMean, action_drift_max: p.actionMax })),
      energy_exponent: driftStudy.energyFit.exponent,
      energy_uncertainty: driftStudy.energyFit.uncertainty,
      action_exponent: driftStudy.actionFit.exponent,
      action_uncertainty: driftStudy.actionFit.uncertainty,
    },
  };
}

/** the sequences section: both sequences at the design frames (classical null past its end), config units */
function sequencesSection(ctx: JobContext, seq: Sequences): CompareSummary['sequences'] {
  const E = ctx.units.energyFromNatural;
  return {
    x: Array.from(ctx.xUser),
    lambda: seq.quantum.lambdas,
    quantum: seq.quantum.frames.map((f) => Array.from(f, E)),
    classical: seq.quantum.lambdas.map((l) => {
      if (!(l <= seq.classicalEnd)) return null;
      const out = new Float64Array(ctx.grid.n);
      seq.classicalAt(l, out);
      return Array.from(out, E);
    }),
  };
}

/**
 * Run the comparison for a validated config (natural units inside; the summary is in the config's units):
 * both sequences → distance and its 1 % point → characteristics check → ħ-scaling study → phase-space checks.
 */
export function runCompare(config: CompareConfig, opts: CompareOptions = {}): CompareResult {
  const started = performance.now();
  const progress = opts.onProgress ?? (() => {});
  const ctx = opts.context ?? makeContext(config);
  const { grid, units, u0 } = ctx;
  assertDesignAffordable(config, ctx, true);
  const warnings = [...ctx.warnings];
  const seq = bothSequences(config, ctx, warnings, progress);
  const lambdas = Array.from({ length: config.compare.samples }, (_, i) => (seq.lambdaCommon * i) / (config.compare.samples - 1));
  const curve = distanceCurve(grid.n, seq.classicalAt, seq.quantumAt, lambdas);
  const lambda1pct = thresholdCrossing(grid.n, seq.classicalAt, seq.quantumAt, curve);
  if (lambda1pct === null) warnings.push(`the sequences stay within ${DISTANCE_THRESHOLD * 100} % of each other up to λ = ${seq.lambdaCommon.toPrecision(6)}`);
  const check = characteristicsCheck(grid, seq.classical.dense, seq.classicalAt, u0, seq.spectralReached, CHARACTERISTICS_CHECK_POINTS);
  progress('scaling study', 0);
  const { problem, study } = scalingStep(config, ctx, warnings);
  progress('trajectories', 0);
  const phase = trajectoryStep(config, ctx, seq, progress);
  if (config.compare.sweep_drift) progress('phase space per δ', 0);
  const driftStudy = driftStep(config, problem, study, phase.rampKind);
  progress('done', 1);

  const Lb = units.labels;
  const { breaking: brk, classical } = seq;
  const summary: CompareSummary = {
    format: 'isotrap-compare/1',
    name: config.name,
    species: ctx.speciesLabel,
    units: { length: Lb.length, energy: Lb.energy, time: Lb.time, lambda: 'dimensionless (KdV time τ in the natural units of ℓ)', action: 'ħ' },
    scales: scalesText(ctx),
    depth: units.energyFromNatural(ctx.depth),
    width: units.lengthFromNatural(ctx.width),
    delta2: ctx.delta2,
    lambda_end: config.flow.lambda_end,
    breaking_lambda: brk.lambda,
    breaking: {
      lambda_characteristics: brk.lambda,
      lambda_characteristics_grid: seq.breakingGrid,
      position: units.lengthFromNatural(brk.position),
      lambda_classical_end: seq.classicalEnd,
      lambda_spectral_reached: seq.spectralReached,
      lambda_spectral_extrapolated: classical.breaking ? finiteOrNull(classical.breaking.lambdaExtrapolated) : null,
      spectral_reason: classical.breaking?.reason ?? null,
    },
    lambda_common: seq.lambdaCommon,
    distance: { ...curve, relative_to: 'the quantum (KdV) sequence: max|u_c − u_q|/max|u_q| and ‖u_c − u_q‖₂/‖u_q‖₂', threshold: DISTANCE_THRESHOLD, lambda_1pct: lambda1pct },
    characteristics_check: check,
    sequences: sequencesSection(ctx, seq),
    scaling: scalingSection(config, ctx, study, driftStudy),
    classical_phase_space: phase.section,
    quantum: {
      status: 'pending',
      note: 'per-drive fidelities (classical sequence + cubic CD term, quantum sequence + the same term) are filled by the Schrödinger propagator (src/quantum)',
      drives: [],
    },
    integrator: { quantum_steps: seq.quantum.stats.accepted, classical_steps: classical.stats.accepted, tolerance: config.flow.tolerance, seconds: (performance.now() - started) / 1000 },
    warnings,
  };
  return { ctx, quantum: seq.quantum, classical, quantumAt: seq.quantumAt, classicalAt: seq.classicalAt, study, drift: driftStudy, summary };
}

/** Put per-drive quantum results into the summary's marked slot (status becomes 'done'). */
export function withQuantumDrives(summary: CompareSummary, drives: DriveFidelity[], note: string): CompareSummary {
  return { ...summary, quantum: { status: 'done', note, drives } };
}

/** Write compare.json into dir (atomically; refuses to overwrite without force). Returns the paths written. */
export function writeCompareOutputs(summary: CompareSummary, dir: string, force: boolean, identity: RunIdentity): string[] {
  return writeRun(dir, { force, produces: COMPARE_FILES, job: 'compare', identity }, (out) => out.write(COMPARE_FILES[0], toJson(summary)));
}

/**
 * Quantum consequence of the two designs: drive the quantum system with the classical (Hopf) sequence plus the
 * cubic correction, and with the quantum (KdV) sequence plus the same correction (quantum/correction.ts), over
 * λ ∈ [0, λ_common] with the protocol's ramp shape at the protocol's mean speed (duration T·λ_common/λ_end).
 * Fidelities of the lowest states against the eigenstates of H at λ_common; excess energies in the config's
 * energy unit.
 */
export function quantumDrives(config: CompareConfig, result: CompareResult, states?: number, onProgress?: Progress): CompareSummary {
  const s = result.summary;
  const { units, grid } = result.ctx;
  const lc = s.lambda_common;
  if (!config.protocol || !(lc > 0)) {
    return withQuantumDrives(s, [], 'not run: needs a protocol section and a common λ range');
  }
  const duration = units.timeToNatural(config.protocol.duration) * (lc / config.flow.lambda_end);
  const drives: DriveFidelity[] = [];
  for (const [drive, potential] of [['classical+cubic', result.classicalAt], ['quantum+cubic', result.quantumAt]] as const) {
    const d = driveWithCorrection({
      grid, potential, lambdaEnd: lc, ramp: config.protocol.ramp, duration, states: states ?? config.verify?.states, tol: config.verify?.tolerance,
      onProgress: onProgress ? (f) => onProgress(`Schrödinger: ${drive}`, f) : undefined,
    });
    drives.push({
      drive,
      states: d.states.map((st, i) => ({ index: st.index, energy: units.energyFromNatural(st.energyStart), fidelity: d.fidelity[i], excess_energy: units.energyFromNatural(d.excessEnergy[i]) })),
    });
  }
  return withQuantumDrives(
    s,
    drives,
    `both sequences driven with the cubic correction −λ̇(4k³ + 3{u,k}) over λ ∈ [0, ${lc.toPrecision(4)}] in ${units.timeFromNatural(duration).toPrecision(4)} ${units.labels.time} (${config.protocol.ramp} ramp at the protocol's mean speed)`,
  );
}

/** runCompare followed by quantumDrives: the complete compare.json content */
export function runCompareWithDrives(config: CompareConfig, opts: CompareOptions = {}): CompareSummary {
  const context = opts.context ?? makeContext(config);
  if (config.protocol) {
    // two corrected drives (classical and quantum sequence), no traces: the cost is judged before the comparison
    assertVerifyAffordable(config, context, context.units.timeToNatural(config.protocol.duration), 0, { corrected: 2, bare: 0 });
  }
  return quantumDrives(config, runCompare(config, { ...opts, context }), undefined, opts.onProgress);
}

/** Write the compare figures (jobs/report.ts) into dir; returns the paths written. */
export function writeCompareFigures(summary: CompareSummary, dir: string, force: boolean, size: FigureSize = 'paper'): string[] {
  return writeFigures(compareFigures(summary, size), dir, force);
}
