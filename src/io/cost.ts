/**
 * Bounded cost: before a job computes anything, its work and memory are estimated (flow/cost.ts, quantum/cost.ts,
 * check/cost.ts) and a run over the limits is refused with a UserError (exit 2, nothing written) that names the
 * keys driving the cost, their values, the estimate with units, the limit and what to change. Setting the
 * environment variable LIFT_LIMITS_VARIABLE to 1 lifts the work and memory limits (the sanity checks on the input
 * stay).
 */
import { UserError } from '../core/errors.ts';
import { bandEdge, estimateDesignCost, estimateFlowSteps, FLOW_SECONDS_PER_POINT_STEP, FRAME_VALUE_BYTES } from '../flow/cost.ts';
import { DENSE_BYTES_DEFAULT } from '../flow/kdv.ts';
import { boundStateEstimate, EIGEN_LEVELS_PER_RUN, eigenMethodFor, estimateVerifyCost, type VerifySize } from '../quantum/cost.ts';
import { densePointsFor } from '../quantum/eigen.ts';
import { amplitudeRange, estimateVariationalCost, LAMBDA_SPAN_MIN } from '../check/cost.ts';
import type { Config } from './config.ts';
import type { Sequence } from './external-sequence.ts';

/** resident memory one run may take: a 2-core laptop with 8 GB keeps the desktop and a second run beside it
 *  (common practice) */
export const MEMORY_LIMIT_BYTES = 2 * 2 ** 30;
/** wall time one run may take: about an hour on a 2-core laptop; longer runs belong on a bigger machine with the
 *  limits lifted (common practice) */
export const TIME_LIMIT_SECONDS = 3600;
/** the environment variable that lifts the work and memory limits when set to 1 */
export const LIFT_LIMITS_VARIABLE = 'ISOTRAP_LIFT_LIMITS';

const SUPERSCRIPT: Record<string, string> = { '-': '⁻', '0': '⁰', '1': '¹', '2': '²', '3': '³', '4': '⁴', '5': '⁵', '6': '⁶', '7': '⁷', '8': '⁸', '9': '⁹' };

/** a count as "≈ 4.4 × 10⁹" (two significant digits; plain below 10⁵) */
export function approxCount(x: number): string {
  if (!Number.isFinite(x)) return '≈ ∞';
  if (x < 1e5) return `≈ ${Number(x.toPrecision(2))}`;
  const [mantissa, exponent] = x.toExponential(1).split('e');
  const e = String(Number(exponent)).split('').map((c) => SUPERSCRIPT[c]).join('');
  return `≈ ${mantissa.replace(/\.0$/, '')} × 10${e}`;
}

/** bytes as "≈ 3.1 GiB" / "≈ 420 MiB" */
export function approxBytes(b: number): string {
  if (!Number.isFinite(b)) return '≈ ∞ GiB';
  return b >= 2 ** 30 ? `≈ ${Number((b / 2 ** 30).toPrecision(2))} GiB` : `≈ ${Number((b / 2 ** 20).toPrecision(2))} MiB`;
}

/** seconds as "≈ 5 h" / "≈ 12 min" / "≈ 40 s" */
export function approxDuration(s: number): string {
  if (!Number.isFinite(s) || s >= 1e7 * 3600) return `${approxCount(s / 3600)} h`;
  if (s >= 3600) return `≈ ${Number((s / 3600).toPrecision(2))} h`;
  if (s >= 60) return `≈ ${Number((s / 60).toPrecision(2))} min`;
  return `≈ ${Number(s.toPrecision(2))} s`;
}

const ON_LAPTOP = 'on a 2-core laptop';
const LIMITS_TEXT = `the limits are ${approxBytes(MEMORY_LIMIT_BYTES).slice(2)} of memory and ${approxDuration(TIME_LIMIT_SECONDS).slice(2)} ${ON_LAPTOP}`;
const LIFT_TEXT = `(or set ${LIFT_LIMITS_VARIABLE}=1 to run it anyway on a machine that can)`;

function limitsLifted(): boolean {
  return process.env[LIFT_LIMITS_VARIABLE] === '1';
}

/** the memory the flow's dense output may hold while it runs: the flow's budget, or none with the limits lifted */
export function denseOutputBudget(): number {
  return limitsLifted() ? Number.POSITIVE_INFINITY : DENSE_BYTES_DEFAULT;
}

/** the config key that sets the depth of the start, with its value */
function depthKey(config: Config): string {
  const init = config.initial;
  switch (init.kind) {
    case 'sech2':
      return `initial.depth = ${init.depth}`;
    case 'wells': {
      let i = 0;
      init.wells.forEach((w, k) => (i = Math.abs(w.depth) > Math.abs(init.wells[i].depth) ? k : i));
      return `initial.wells[${i}].depth = ${init.wells[i].depth}`;
    }
    case 'solitons': {
      let i = 0;
      init.solitons.forEach((s, k) => (i = s.kappa > init.solitons[i].kappa ? k : i));
      return `initial.solitons[${i}].kappa = ${init.solitons[i].kappa}`;
    }
    case 'samples':
      return `the samples in initial.file = ${init.file}`;
    case 'reflectionless':
      return 'the trap in initial.from';
    case 'target':
      return `initial.depths = [${init.depths.join(', ')}]`;
  }
}

/** the natural-units start of a job (a JobContext has it): the grid (points n, box length in ℓ) and u₀ */
export interface StartSize {
  grid: { readonly n: number; readonly length: number };
  u0: ArrayLike<number>;
}

function maxAbs(u: ArrayLike<number>): number {
  let m = 0;
  for (let j = 0; j < u.length; j++) m = Math.max(m, Math.abs(u[j]));
  return m;
}

/**
 * Refuse a design whose flow (steps from the stiffness, flow/cost.ts) or memory (frames, dense output when kept)
 * is over the limits, or whose dense output would pass the flow's own budget (flow/kdv.ts DENSE_BYTES_DEFAULT, which
 * the integrator enforces while it runs).
 */
export function assertDesignAffordable(config: Config, start: StartSize, keepDense: boolean): void {
  if (limitsLifted()) return;
  const src = config.meta.source;
  const maxAbsU = maxAbs(start.u0);
  const flow = config.flow;
  const cost = estimateDesignCost({ points: start.grid.n, length: start.grid.length, maxAbsU, lambdaEnd: flow.lambda_end, frames: flow.frames, keepDense });
  const problems: string[] = [];
  const bytes = cost.frameBytes + cost.denseBytes;
  if (bytes > MEMORY_LIMIT_BYTES) {
    const dense = cost.denseBytes > 0 ? ` plus ${approxBytes(cost.denseBytes)} of dense output for the Schrödinger proof (${approxCount(cost.steps)} flow steps)` : '';
    problems.push(
      `it would hold ${approxBytes(bytes)}, over the memory limit of ${approxBytes(MEMORY_LIMIT_BYTES).slice(2)}: flow.frames = ${flow.frames} × grid.points = ${start.grid.n} frame values ` +
        `at ${FRAME_VALUE_BYTES} bytes each (held and written as .npy and .csv)${dense}; lower flow.frames or grid.points`,
    );
  }
  if (cost.denseBytes > DENSE_BYTES_DEFAULT) {
    problems.push(
      `its dense output for the Schrödinger proof (${approxCount(cost.steps)} flow steps on grid.points = ${start.grid.n}) would hold ${approxBytes(cost.denseBytes)}, ` +
        `over the flow's budget of ${approxBytes(DENSE_BYTES_DEFAULT).slice(2)}; lower the depth, flow.lambda_end or grid.points`,
    );
  }
  if (cost.seconds > TIME_LIMIT_SECONDS) {
    const kCut = bandEdge(start.grid.n, start.grid.length);
    problems.push(
      `it would take ${approxCount(cost.pointSteps)} grid-point steps (${approxDuration(cost.seconds)} ${ON_LAPTOP}), over the limit of ${approxDuration(TIME_LIMIT_SECONDS).slice(2)}: ` +
        `the flow's step is bounded by its nonlinear rate 6·max|u|·k_max, and ${depthKey(config)} (max|u| = ${Number(maxAbsU.toPrecision(3))} E₀), flow.lambda_end = ${flow.lambda_end} ` +
        `and grid.points = ${start.grid.n} (k_max = ${Number(kCut.toPrecision(3))}/ℓ) need ${approxCount(cost.steps)} steps; lower the depth or flow.lambda_end, or use fewer grid.points`,
    );
  }
  if (problems.length > 0) throw new UserError(`${src}: the design is refused before it starts: ${problems.join('; and ')} ${LIFT_TEXT}`);
}

/** the drives of a Schrödinger proof: with the correction and without */
export interface DriveCounts {
  corrected: number;
  bare: number;
}

/** the verify sizes of a config (protocol and verify sections present) */
function verifySize(config: Config, start: StartSize, durationNatural: number, traceSamples: number, states: number, drives: DriveCounts): VerifySize {
  return {
    points: start.grid.n, length: start.grid.length, maxAbsU: maxAbs(start.u0), lambdaEnd: config.flow.lambda_end,
    ramp: config.protocol?.ramp ?? 'sin2', duration: durationNatural, states, tol: config.verify?.tolerance ?? 1e-8,
    correctedDrives: drives.corrected, bareDrives: drives.bare, traceSamples, u0: start.u0,
    shots: verifyShots(config),
    condensate: config.verify?.interaction !== undefined,
    stepControl: config.verify?.step_control,
  };
}

/** how many times a verify runs: once per shot of a shot-to-shot noise study (verify.errors.noise_*), else once */
export function verifyShots(config: Config): number {
  return (config.verify?.errors.noise_rms ?? 0) > 0 ? config.verify?.errors.noise_shots ?? 1 : 1;
}

/** the largest state count whose verify fits the limits (0 when none does) */
function affordableStates(size: VerifySize): number {
  let lo = 0;
  let hi = size.states;
  while (hi - lo > 1) {
    const mid = Math.floor((lo + hi) / 2);
    const c = estimateVerifyCost({ ...size, states: mid });
    if (c.seconds <= TIME_LIMIT_SECONDS && c.bytes <= MEMORY_LIMIT_BYTES) lo = mid;
    else hi = mid;
  }
  return lo;
}

/** what a Schrödinger proof is estimated to cost, in words a user can act on */
export interface VerifyEstimate {
  seconds: number;
  text: string;
}

/**
 * Refuse a Schrödinger proof over the limits (quantum/cost.ts): eigen solves, drives and the states they hold;
 * otherwise return its estimate. `durationNatural` is protocol.duration in t₀; without a protocol section there is
 * nothing to estimate (null).
 */
export function assertVerifyAffordable(config: Config, start: StartSize, durationNatural: number, traceSamples: number, drives: DriveCounts = { corrected: 1, bare: 1 }): VerifyEstimate | null {
  if (!config.protocol || !(durationNatural > 0)) return null;
  const src = config.meta.source;
  const given = config.verify?.states;
  const states = Math.min(start.grid.n, given ?? boundStateEstimate(start.u0, start.grid.length / start.grid.n) + 4);
  const size = verifySize(config, start, durationNatural, traceSamples, states, drives);
  const cost = estimateVerifyCost(size);
  const levels = Math.min(start.grid.n, states + 2);
  const densePoints = densePointsFor(start.u0, levels);
  const householder = eigenMethodFor(start.grid.n, levels, densePoints) === 'householder';
  const method = householder ? `dense Householder on ${densePoints} points` : 'Lanczos';
  const estimate = {
    seconds: cost.seconds,
    text: `estimated ${approxDuration(cost.seconds)} ${ON_LAPTOP} (${cost.eigenSolves} eigen solves of ${levels} levels by ${method}; ` +
      `${drives.corrected + drives.bare} drives of ${states} states, ${approxCount(cost.ladderSteps)} steps for the corrected ones${(size.shots ?? 1) > 1 ? `; all of it once per shot, ${size.shots} shots (verify.errors.noise_shots)` : ''}${size.condensate ? '; a condensate: 3 one-state drives and its painted field' : ''}; ${approxBytes(cost.bytes)})`,
  };
  if (limitsLifted() || (cost.seconds <= TIME_LIMIT_SECONDS && cost.bytes <= MEMORY_LIMIT_BYTES)) return estimate;
  const statesKey = given !== undefined ? `verify.states = ${given}` : `verify.states (not given: the bound states + 4 ≈ ${states})`;
  const fit = affordableStates(size);
  throw new UserError(
    `${src}: the Schrödinger proof would take ${approxCount(cost.matvecs)} products with H (${approxDuration(cost.seconds)} ${ON_LAPTOP}) and hold ${approxBytes(cost.bytes)}; ${LIMITS_TEXT}: ` +
      `${statesKey} means ${cost.eigenSolves} eigen solves of ${Math.min(start.grid.n, states + 2)} levels (${householder ? `dense Householder on ${densePoints} points, ∝ points³` : `Lanczos; one run finds about ${EIGEN_LEVELS_PER_RUN}, more need restarts`}; ${approxCount(cost.eigenMatvecs)} products each) ` +
      `and ${drives.corrected} corrected drive${drives.corrected === 1 ? '' : 's'} of ${states} states over ${approxCount(cost.ladderSteps)} steps (verify.tolerance = ${size.tol}, protocol.duration = ${config.protocol?.duration}, grid.points = ${start.grid.n}); ` +
      (fit > 0 ? `at most about ${fit} states fit: lower verify.states ` : 'lower grid.points or loosen verify.tolerance ') + LIFT_TEXT,
  );
}

/** the options of the variational step that set its size */
export interface VariationalSizeInput {
  states?: number;
  legendre?: number;
}

/** frames must be finite and their amplitude within what the grid resolves (check/cost.ts) */
function assertCheckAmplitude(seq: Sequence): number {
  const { grid, frames } = seq;
  let peak = 0;
  for (let k = 0; k < frames.length; k++) {
    const f = frames[k];
    for (let j = 0; j < f.length; j++) {
      if (!Number.isFinite(f[j])) throw new UserError(`${seq.file}: frame ${k} has a non-finite value (${f[j]}) at point ${j}: every sample must be a finite number`);
      peak = Math.max(peak, Math.abs(f[j]));
    }
  }
  const range = amplitudeRange(grid.n, grid.length);
  const E = (v: number) => Number(seq.system.energyFromNatural(v).toPrecision(3));
  const unit = seq.system.labels.energy;
  const natural = (v: number) => (seq.system.system === 'natural' ? '' : ` (${Number(v.toPrecision(3))} E₀)`);
  if (peak > range.max) {
    throw new UserError(
      `${seq.file}: the potential reaches |V| = ${E(peak)} ${unit}${natural(peak)}, beyond what its grid of ${grid.n} points resolves: at most ${E(range.max)} ${unit} ` +
        `(10 × the largest kinetic energy k_max² of the grid); check the energy unit of the file, or sample it on more points`,
    );
  }
  if (peak < range.min) {
    throw new UserError(
      `${seq.file}: the potential is at most |V| = ${E(peak)} ${unit}${natural(peak)}, below ${E(range.min)} ${unit}, where the flow's nonlinear term is at round-off: ` +
        `check the energy unit of the file`,
    );
  }
  return peak;
}

/** the λ labels must span a flow time the grid can follow and double precision can tell apart */
function assertCheckLabels(seq: Sequence, peak: number): void {
  if (!seq.lambda) return;
  const span = seq.lambda[seq.lambda.length - 1] - seq.lambda[0];
  const { grid } = seq;
  const rate = 6 * peak * bandEdge(grid.n, grid.length);
  const where = seq.sidecar ? `lambda in ${seq.sidecar}` : `the λ headers of ${seq.file}`;
  if (span * rate < LAMBDA_SPAN_MIN) {
    throw new UserError(`${seq.file}: ${where} span only ${span} (λ from ${seq.lambda[0]} to ${seq.lambda[seq.lambda.length - 1]}): over so short a KdV time the flow changes no frame in double precision; check the units of λ (KdV time τ in the natural units of ℓ)`);
  }
  const steps = estimateFlowSteps({ points: grid.n, length: grid.length, maxAbsU: peak, lambdaEnd: span });
  const seconds = steps * grid.n * FLOW_SECONDS_PER_POINT_STEP;
  if (!limitsLifted() && seconds > TIME_LIMIT_SECONDS) {
    throw new UserError(
      `${seq.file}: ${where} span ${span} (λ from ${seq.lambda[0]} to ${seq.lambda[seq.lambda.length - 1]}): following the flow over it would take ${approxCount(steps)} steps ` +
        `(${approxCount(steps * grid.n)} grid-point steps, ${approxDuration(seconds)} ${ON_LAPTOP}), over the limit of ${approxDuration(TIME_LIMIT_SECONDS).slice(2)}; check the units of λ (KdV time τ in the natural units of ℓ) ${LIFT_TEXT}`,
    );
  }
}

/**
 * Refuse a check input that no grid resolves (non-finite or absurdly scaled values or λ labels) and a variational
 * step over the limits, before any fit starts.
 */
export function assertCheckAffordable(seq: Sequence, variational: VariationalSizeInput | undefined, defaultLegendre: number): void {
  const peak = assertCheckAmplitude(seq);
  assertCheckLabels(seq, peak);
  if (!variational || limitsLifted()) return;
  const { grid } = seq;
  const states = variational.states ?? boundStateEstimate(seq.frames[0], grid.dx) + 4;
  const legendre = variational.legendre ?? defaultLegendre;
  const cost = estimateVariationalCost({ points: grid.n, states, legendre, frames: seq.frames.length });
  if (cost.bytes <= MEMORY_LIMIT_BYTES && cost.seconds <= TIME_LIMIT_SECONDS) return;
  throw new UserError(
    `the variational step would hold ${approxBytes(cost.bytes)} and take ${approxCount(cost.flops)} operations (${approxDuration(cost.seconds)} ${ON_LAPTOP}); ${LIMITS_TEXT}: ` +
      `--variational-legendre = ${legendre} and ${variational.states !== undefined ? `--variational-states = ${states}` : `${states} states (bound states + 4)`} on ${grid.n} points and ${seq.frames.length} frames ` +
      `make a least-squares system of ${approxCount(cost.rows)} rows × ${cost.columns} columns per frame; use fewer Legendre terms (the default is ${defaultLegendre}) or fewer states ${LIFT_TEXT}`,
  );
}

/** the arrays of the export's size that it holds and writes: the potential and the velocity field (.npy), and the
 *  potential table of --csv at about three times the bytes of a value (common practice for 17-digit text) */
export const EXPORT_FIELD_ARRAYS = 2;
export const EXPORT_CSV_FACTOR = 3;

/**
 * Refuse an export whose sampled fields (samples × points values of 8 bytes, EXPORT_FIELD_ARRAYS of them, and the
 * CSV table with --csv) pass the memory limit; `option` names what set the sample count (e.g. "--rate 500").
 */
export function assertExportAffordable(samples: number, points: number, csv: boolean, option: string): void {
  if (limitsLifted()) return;
  const bytes = samples * points * Float64Array.BYTES_PER_ELEMENT * (EXPORT_FIELD_ARRAYS + (csv ? EXPORT_CSV_FACTOR : 0));
  if (bytes > MEMORY_LIMIT_BYTES) {
    throw new UserError(
      `option ${option} is not allowed: it asks for ${samples} samples × ${points} grid points, and the export would hold ${approxBytes(bytes)} ` +
        `(${EXPORT_FIELD_ARRAYS} fields${csv ? ' and the --csv table' : ''} at ${Float64Array.BYTES_PER_ELEMENT} bytes a value), over the memory limit of ${approxBytes(MEMORY_LIMIT_BYTES).slice(2)}; ` +
        `lower the rate or the sample count ${LIFT_TEXT}`,
    );
  }
}
