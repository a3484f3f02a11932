/**
 * `check`: is a sequence from elsewhere admissible for exact cubic counterdiabatic driving (physics.md §2, §9)?
 * Reads the sequence (io/external-sequence.ts, natural units ℓ, E₀ where the flow is u_τ = 6uu_ξ − u_ξξξ), fits
 * per interval the KdV time step Δτ_k ≥ 0 and drift c_k carrying frame k to k+1 (check/flowfit.ts: the verdict),
 * checks the bound-state spectrum along the sequence (check/spectrum.ts: the fit-free evidence shown beside it),
 * builds the time map τ(t) when the frames carry lab times (check/timemap.ts), and integrates the repaired
 * sequence from the first frame through the fitted maps (check/repair.ts). Exit codes for the CLI: 0 admissible,
 * 1 not, 2 bad input (UserError).
 *
 * λ in the input is read as the KdV time τ of the natural units of ℓ (what `isotrap design` writes); the fit does
 * not use it except to resolve the one-soliton degeneracy (Δτ = Δλ, so the drift follows from the displacement)
 * and to report how far the fitted τ_k are from λ_k − λ_0.
 */
import { join, resolve } from 'node:path';
import { newRunIdentity, writeRun } from '../io/run-folder.ts';
import { encodeNpy } from '../io/npy.ts';
import { UserError } from '../core/errors.ts';
import { summarise, FLOW_TOLERANCE, type SequenceFit } from '../check/flowfit.ts';
import { fitAll, fitAllSerial } from '../check/parallel.ts';
import { frameEnergies, frameThreshold, spectrumOf, type SpectrumCheck } from '../check/spectrum.ts';
import { monotoneTimeMap, type TimeMap } from '../check/timemap.ts';
import { readSequence, type Sequence, type SequenceUnitsInput } from '../io/external-sequence.ts';
import { validateVariationalInput } from '../io/check-options.ts';
import { repairSequence, REPAIR_TOLERANCE, type Repair } from '../check/repair.ts';
import { cubicSchedule, frameRates } from '../check/rates.ts';
import { toJson } from './design.ts';
import { LEGENDRE_TERMS, variationalFit, type VariationalFit } from '../check/variational.ts';
import { assertCheckAffordable } from '../io/cost.ts';
import { compareCorrections, variationalSchedule, type ComparisonResult } from '../check/drive.ts';
import type { RampKind } from '../protocol/ramp.ts';
import type { CheckReport, FrameReport, IntervalReport, VariationalReport } from '../io/formats/check.ts';
export type { CheckReport, FrameReport, IntervalReport, VariationalReport };

/** opt-in: variational correction per frame and a side-by-side Schrödinger comparison (check/variational.ts, drive.ts) */
export interface VariationalCheckOptions {
  /** subspace size (lowest levels of each frame); default bound states + 4 */
  states?: number;
  /** temperature in the user's temperature unit (Boltzmann weights of the subspace and a thermal summary) */
  temperature?: number;
  /** ramp duration in the user's time unit */
  duration: number;
  /** default sin2 */
  ramp?: RampKind;
  /** Legendre terms in g (default 24) */
  legendre?: number;
  /** infidelity budget of the time stepping (default 1e-8) */
  tol?: number;
}

/** default tolerance on the interval residual and on the relative bound-state drift */
export const DEFAULT_TOLERANCE = 1e-3;
/** frames whose spectrum is always computed (evenly spaced, ends included): each is a dense diagonalisation of
 * up to 512 points (~0.2–0.5 s), and frames joined by passing flow-fit intervals are isospectral by construction,
 * so a sample suffices as independent evidence; every frame of a failing interval is added */
export const SPECTRUM_SAMPLE = 9;
/** a failing residual within this factor of the frames' sampling floor is blamed on resolution (common practice) */
const FLOOR_FACTOR = 10;
/** significant digits of the numbers in messages */
const DIGITS = 3;
/** magnitudes outside [SMALL, LARGE) are printed with an exponent (common practice) */
const SMALL = 1e-3;
const LARGE = 1e5;

export const CHECK_FILES = ['check.json', 'repaired.npy', 'repaired.json', 'input.npy'] as const;

export interface CheckOptions {
  /** .npy (with sidecar) or .csv sequence */
  input: string;
  /** tolerance on the interval residual and relative spectral drift, default 1e-3 */
  tolerance?: number;
  /** explicit sidecar path */
  sidecar?: string;
  /** units given on the command line (win over the sidecar) */
  units?: SequenceUnitsInput;
  /** opt-in variational correction and comparison (adds `variational` to the report) */
  variational?: VariationalCheckOptions;
  /** called after each fitted interval (done, total) */
  onProgress?: (done: number, total: number) => void;
  /** fraction of the variational step's drives done */
  onVariationalProgress?: (fraction: number) => void;
}

export interface CheckResult {
  sequence: Sequence;
  fit: SequenceFit;
  spectrum: SpectrumCheck;
  timeMap: TimeMap | null;
  repair: Repair;
  report: CheckReport;
  admissible: boolean;
  variational?: { fit: VariationalFit; comparison: ComparisonResult };
}

/** a number at DIGITS significant digits, without binary noise (0.3, not 0.30000000000000004; 3.25e-6, not 0.00000325) */
export function short(v: number, digits = DIGITS): string {
  if (!Number.isFinite(v)) return String(v);
  if (v !== 0 && (Math.abs(v) < SMALL || Math.abs(v) >= LARGE)) return v.toExponential(digits - 1).replace(/\.?0+e/, 'e');
  return String(Number(v.toPrecision(digits)));
}

/** the evenly spaced sample of frames whose bound-state spectrum is always computed (all when few) */
function sampleFrames(count: number): number[] {
  if (count <= SPECTRUM_SAMPLE) return Array.from({ length: count }, (_, i) => i);
  return [...new Set(Array.from({ length: SPECTRUM_SAMPLE }, (_, i) => Math.round((i * (count - 1)) / (SPECTRUM_SAMPLE - 1))))];
}

/** the spectrum check on the sample plus every frame of a failing interval, reusing energies already computed */
function spectrumAlong(seq: Sequence, fit: SequenceFit, known: ReadonlyMap<number, number[]>): SpectrumCheck {
  const set = new Set(sampleFrames(seq.frames.length));
  for (const k of fit.failed) set.add(k).add(k + 1);
  const indices = [...set].sort((a, b) => a - b);
  const energies = indices.map((k) => known.get(k) ?? frameEnergies(seq.grid, seq.frames[k]));
  return spectrumOf(indices, energies, frameThreshold(seq.grid, seq.frames[indices[0]]));
}

/**
 * With λ known, a degenerate (one-soliton) interval takes Δτ = Δλ: the translation S_d of the fit equals
 * S_{d − vΔλ} Φ_Δλ, so the drift is d/Δλ − v (physics.md §4: the soliton moves at v = 4κ²).
 */
function resolveDegenerate(fit: SequenceFit, lambda: readonly number[] | null): SequenceFit {
  if (!lambda || fit.degenerateIntervals.length === 0) return fit;
  const intervals = fit.intervals.map((it) => {
    if (!it.degenerate) return it;
    const dl = lambda[it.index + 1] - lambda[it.index];
    const shift = it.degenerate.displacement - it.degenerate.speed * dl;
    return { ...it, dtau: dl, shift, drift: shift / dl };
  });
  return summarise(intervals, fit.passTolerance);
}

/**
 * The variational correction and the side-by-side drives (check/variational.ts, check/drive.ts), with ∂_λu and the
 * exact cubic correction from the flow fit (check/rates.ts). λ is the input's, or the fitted τ when frames carry
 * only lab times.
 */
function variationalStep(seq: Sequence, fit: SequenceFit, vo: VariationalCheckOptions, onProgress?: (fraction: number) => void): { fit: VariationalFit; comparison: ComparisonResult; report: VariationalReport } {
  const { grid, frames, system } = seq;
  if (!(Number.isFinite(vo.duration) && vo.duration > 0)) throw new UserError(`variational.duration = ${vo.duration} is not allowed: must be a finite number > 0 (${system.labels.time})`);
  const lambda = seq.lambda ?? fit.tau;
  if (!seq.lambda && fit.staticIntervals.length > 0) throw new UserError(`variational: frames ${fit.staticIntervals.map((k) => `${k}–${k + 1}`).join(', ')} are identical, so the fitted τ does not increase there and cannot label the frames: give lambda in the sidecar`);
  const temp = vo.temperature !== undefined ? system.temperatureToNatural(vo.temperature) : undefined;
  validateVariationalInput({ states: vo.states, temperature: temp, legendre: vo.legendre }, grid.n);
  const rates = frameRates(grid, lambda, fit.tau, frames, fit.intervals);
  const vfit = variationalFit(grid, lambda, frames, { states: vo.states, temperature: temp, legendre: vo.legendre }, rates.rates);
  const comparison = compareCorrections({
    grid, lambda, frames, rates: rates.rates, states: vfit.states, temperature: temp, duration: system.timeToNatural(vo.duration), ramp: vo.ramp, tol: vo.tol,
    drives: [
      { label: 'variational', schedule: variationalSchedule(vfit) },
      { label: 'fitted cubic', schedule: cubicSchedule(lambda, rates, vfit.legendre) },
      { label: 'none', schedule: null },
    ],
    onProgress,
  });
  const report: VariationalReport = {
    method: 'variational gauge potential: min Σ_m w_m Σ_{n∉deg m} |(∂_λH + i[A,H])_nm|² over A = a k³ + ½{g, k}, g over [u, 1, P_c(2ξ/L)] (natural units ℓ, E₀); ∂_λH from the fitted flow where an interval passes, else a Fornberg λ-derivative',
    basis: vfit.basis,
    states: vfit.states,
    temperature: vo.temperature ?? null,
    frames: vfit.frames.map((f) => ({ index: f.index, lambda: f.lambda, a_hat: f.a, coefficients: f.coefficients, residual: f.residual, g_max_support: f.gMax.support, g_max_box: f.gMax.box })),
    comparison: {
      ramp: comparison.ramp,
      duration: vo.duration,
      interpolation: comparison.interpolation,
      states: comparison.states.map((st) => ({ index: st.index, energy_start: system.energyFromNatural(st.energyStart), energy_end: system.energyFromNatural(st.energyEnd) })),
      drives: comparison.drives.map((d) => ({
        label: d.label, fidelity: d.fidelity, excess_energy: d.excessEnergy.map((e) => system.energyFromNatural(e)), min_fidelity: d.minFidelity,
        thermal_fidelity: d.thermal?.ensembleFidelity ?? null, thermal_excess: d.thermal ? system.energyFromNatural(d.thermal.meanExcessEnergy) : null, steps: d.steps,
      })),
    },
  };
  return { fit: vfit, comparison, report };
}

/** the unit labels of check.json */
function reportUnits(seq: Sequence): CheckReport['units'] {
  const { labels } = seq.system;
  return {
    length: labels.length,
    energy: labels.energy,
    time: labels.time,
    tau: 'KdV time τ in the natural units of ℓ (ξ = x/ℓ, u = V/E₀): the flow u_τ = 6uu_ξ − u_ξξξ − c u_ξ; the input λ is read as τ',
    drift: `${labels.length} per unit τ`,
    species: seq.units.species,
    mass_u: seq.units.mass_u,
    length_unit_um: seq.units.length_unit_um,
  };
}

/** per interval, in the sequence's units */
function intervalReports(seq: Sequence, fit: SequenceFit): IntervalReport[] {
  const L = (v: number) => seq.system.lengthFromNatural(v);
  return fit.intervals.map((it) => ({
    index: it.index,
    dtau: it.dtau,
    drift: L(it.drift),
    shift: L(it.shift),
    residual: it.residual,
    sampling_floor: it.samplingFloor,
    pass: it.pass,
    static: it.static,
    degenerate: it.degenerate ? { speed: L(it.degenerate.speed), displacement: L(it.degenerate.displacement) } : null,
    at_limit: it.atLimit,
  }));
}

/** per frame: labels, fitted τ and the isospectrality evidence */
function frameReports(seq: Sequence, fit: SequenceFit, spectrum: SpectrumCheck, depth: number, tolerance: number): FrameReport[] {
  const row = new Map<number, number>();
  spectrum.indices.forEach((frame, i) => row.set(frame, i));
  return seq.frames.map((_, k) => {
    const i = row.get(k);
    const rel = i !== undefined && spectrum.levels > 0 ? spectrum.deviation[i] / depth : null;
    return {
      index: k,
      lambda: seq.lambda ? seq.lambda[k] : null,
      time: seq.time ? seq.time[k] : null,
      tau: fit.tau[k],
      spectral_drift: i !== undefined && spectrum.levels > 0 ? seq.system.energyFromNatural(spectrum.deviation[i]) : null,
      spectral_drift_relative: rel,
      bound_states: i !== undefined ? spectrum.energies[i].length : null,
      isospectral: i === undefined || spectrum.levels === 0 ? null : rel !== null && rel <= tolerance && !spectrum.countChanged[i],
    };
  });
}

/** consecutive runs [first, last] of the failing intervals */
function failingGroups(failed: readonly number[]): [number, number][] {
  const groups: [number, number][] = [];
  for (const k of failed) {
    const g = groups[groups.length - 1];
    if (g && g[1] === k - 1) g[1] = k;
    else groups.push([k, k]);
  }
  return groups;
}

/** why a group of consecutive intervals fails, from the flow fit and the spectrum of its frames */
function groupReason(its: readonly IntervalReport[], frames: readonly FrameReport[], tolerance: number): string {
  const worst = its.reduce((a, b) => (b.residual > a.residual ? b : a));
  const head = `residual up to ${short(worst.residual)} > ${short(tolerance)}`;
  const touched = frames.slice(its[0].index, its[its.length - 1].index + 2);
  const moving = touched.filter((f) => f.isospectral === false);
  if (moving.length > 0) {
    const rel = Math.max(...moving.map((f) => f.spectral_drift_relative ?? 0));
    return `${head}, and the bound states move at frame${moving.length > 1 ? 's' : ''} ${moving.map((f) => f.index).join(', ')} (up to ${short(rel)} relative): not isospectral there, so no flow and no exact correction joins these frames`;
  }
  if (its.some((it) => it.at_limit)) return `${head}: the flow from the first frame does not reach the next one within the searched Δτ (the frames change in a way the KdV flow cannot produce)`;
  if (worst.residual <= FLOOR_FACTOR * worst.sampling_floor) return `${head}, at the frames' own sampling error (${short(worst.sampling_floor)}): the frames are not resolved on their grid (use more points or a larger box)`;
  const iso = touched.every((f) => f.isospectral === true);
  return iso
    ? `${head} while the bound states stay put: isospectral but not a KdV flow (another isospectral flow, or frames out of flow order)`
    : `${head}: no KdV time step and drift carry one frame to the next`;
}

/** the summary lines and the failure lines (one per group of consecutive failing intervals) */
function verdictLines(intervals: IntervalReport[], frames: FrameReport[], fit: SequenceFit, isospectral: boolean | null, spreadRel: number, tolerance: number): { summary: string[]; failures: string[] } {
  const failures = failingGroups(fit.failed).map(([a, b]) => {
    const name = a === b ? `interval ${a} (frames ${a}–${a + 1})` : `intervals ${a}–${b} (frames ${a}–${b + 1})`;
    return `${name}: ${groupReason(intervals.slice(a, b + 1), frames, tolerance)}`;
  });
  const flowOk = fit.failed.length === 0;
  const n = intervals.length;
  const flow = flowOk
    ? `all ${n} intervals follow the KdV flow (residual ≤ ${short(fit.maxResidual)})`
    : `${fit.failed.length} of ${n} intervals fail the KdV flow fit (worst: interval ${fit.worstInterval}, residual ${short(fit.maxResidual)})`;
  const spec = isospectral === null ? 'isospectrality not tested (no bound state)' : isospectral ? `bound states stay put (drift ${short(spreadRel)} relative)` : `bound states move (drift ${short(spreadRel)} relative)`;
  const admissible = flowOk && isospectral !== false;
  const summary = [`${admissible ? 'admissible' : 'NOT admissible'} at tolerance ${short(tolerance)}: ${flow}; ${spec}`];
  if (flowOk && isospectral === false) {
    summary.push('the flow fit passes but the spectrum drifts: the frames are not resolved well enough for their bound states (more points, a larger box), or the drift is below the flow residual\'s reach; not admissible until both agree');
    failures.push(`the bound-state energies spread by ${short(spreadRel)} of the ground-state depth along a sequence whose intervals fit the KdV flow: frames not resolved`);
  }
  if (!flowOk && isospectral === true) summary.push('the spectrum stays put but the KdV flow does not join the failing intervals: another isospectral flow, or frames out of flow order');
  return { summary: [...summary, ...failures], failures };
}

/** max |τ_k − (λ_k − λ_0)| over the span of λ (degenerate intervals take Δτ = Δλ, so they add nothing) */
function lambdaMismatch(fit: SequenceFit, lambda: readonly number[] | null): number | null {
  if (!lambda) return null;
  const span = lambda[lambda.length - 1] - lambda[0];
  let worst = 0;
  fit.tau.forEach((t, k) => (worst = Math.max(worst, Math.abs(t - (lambda[k] - lambda[0])))));
  return worst / span;
}

/** the tolerance and the sequence of a check (UserError for bad input) */
function readInput(opts: CheckOptions): { seq: Sequence; tolerance: number } {
  const tolerance = opts.tolerance ?? DEFAULT_TOLERANCE;
  if (!(Number.isFinite(tolerance) && tolerance > 0)) throw new UserError(`tolerance = ${tolerance} is not allowed: must be a finite number > 0`);
  const seq = readSequence(opts.input, { sidecar: opts.sidecar, units: opts.units });
  assertCheckAffordable(seq, opts.variational, LEGENDRE_TERMS);
  return { seq, tolerance };
}

/**
 * Run the whole check serially (no files written; see writeCheckOutputs): read → flow fit per interval → spectra
 * → verdicts → time map → repair → optional variational step. Bad input throws a UserError.
 */
export function runCheck(opts: CheckOptions): CheckResult {
  const { seq, tolerance } = readInput(opts);
  return judge(seq, fitAllSerial(seq.grid, seq.frames, tolerance, opts.onProgress), new Map(), tolerance, opts);
}

/**
 * As runCheck, with the intervals fitted on worker threads (check/parallel-fit.ts: every core when there are
 * enough intervals, or `workers`); the result is identical to runCheck's.
 */
export async function runCheckParallel(opts: CheckOptions & { workers?: number }): Promise<CheckResult> {
  const { seq, tolerance } = readInput(opts);
  const work = await fitAll(seq.grid, seq.frames, tolerance, sampleFrames(seq.frames.length), { workers: opts.workers, onProgress: opts.onProgress });
  return judge(seq, work.fit, work.energies, tolerance, opts);
}

/** everything after the flow fit: spectra, verdicts, time map, repair, variational step (runCheck's module doc) */
function judge(seq: Sequence, rawFit: SequenceFit, energies: ReadonlyMap<number, number[]>, tolerance: number, opts: CheckOptions): CheckResult {
  const { grid, frames, system } = seq;
  const warnings = [...seq.warnings];
  const fit = resolveDegenerate(rawFit, seq.lambda);
  const spectrum = spectrumAlong(seq, fit, energies);
  const depth = spectrum.levels > 0 ? Math.abs(spectrum.reference[0]) : 0;
  if (spectrum.levels === 0) warnings.push(`no bound state below the box threshold ${short(spectrum.threshold)} E₀ in some frame: isospectrality not tested`);
  const spreadRel = depth > 0 ? spectrum.spread / depth : 0;
  const intervals = intervalReports(seq, fit);
  const frameRows = frameReports(seq, fit, spectrum, depth, tolerance);
  const isospectral = spectrum.levels > 0 ? frameRows.every((f) => f.isospectral !== false) : null;
  const { summary, failures } = verdictLines(intervals, frameRows, fit, isospectral, spreadRel, tolerance);
  const admissible = fit.admissible && isospectral !== false;
  if (fit.degenerateIntervals.length > 0) {
    warnings.push(seq.lambda
      ? `intervals ${fit.degenerateIntervals.join(', ')}: the frames translate rigidly (as a single soliton), so the flow fixes only the displacement; Δτ taken from λ and the drift from the displacement`
      : `intervals ${fit.degenerateIntervals.join(', ')}: the frames translate rigidly (as a single soliton), so the flow fixes only the displacement (speed + c)Δτ; fitted with c = 0 (give lambda to separate Δτ and c)`);
  }
  const mismatch = lambdaMismatch(fit, seq.lambda);
  if (mismatch !== null && fit.admissible && mismatch > tolerance) {
    warnings.push(`the fitted KdV times τ_k differ from the input's λ_k − λ_0 by up to ${short(mismatch)} of the λ span: the frames follow the flow on another time map than λ (or λ is not KdV time in the units given); the fitted τ is used`);
  }
  const timeMap = seq.time ? monotoneTimeMap(seq.time, fit.tau) : null;
  const repair = repairSequence(grid, frames, fit.intervals);
  const report: CheckReport = {
    format: 'isotrap-check/2',
    input: seq.file,
    sidecar: seq.sidecar,
    admissible,
    tolerance,
    summary,
    intervals,
    frames: frameRows,
    spectral_drift: system.energyFromNatural(spectrum.spread),
    spectral_drift_relative: spreadRel,
    isospectral,
    flow_admissible: fit.admissible,
    failures,
    units: reportUnits(seq),
    fit: {
      method: 'per interval: Δτ ≥ 0 and drift c minimising ‖S_{cΔτ} Φ_Δτ(u_k) − u_{k+1}‖ (flow with dense output, Brent in τ, spectral cross-correlation in the shift); residual relative to ‖u_{k+1} − u_k‖',
      max_residual: fit.maxResidual,
      worst_interval: fit.worstInterval,
      failed: fit.failed,
      degenerate: fit.degenerateIntervals,
      static: fit.staticIntervals,
      flow_tolerance: FLOW_TOLERANCE,
      lambda_mismatch: mismatch,
    },
    time_map: timeMap && seq.time
      ? { time: seq.time, tau: fit.tau, rate: seq.time.map((t) => timeMap.rate(t)), method: `Fritsch–Carlson monotone cubic τ(t) through (t_k, τ_k); rate dτ/dt per ${system.labels.time}` }
      : null,
    spectrum: {
      frames: spectrum.indices,
      tau: spectrum.indices.map((i) => fit.tau[i]),
      energies: spectrum.energies.map((row) => row.map((e) => system.energyFromNatural(e))),
      reference: spectrum.reference.map((e) => system.energyFromNatural(e)),
      threshold: system.energyFromNatural(spectrum.threshold),
      levels: spectrum.levels,
    },
    repaired: {
      max_distance: system.energyFromNatural(repair.maxDistance),
      relative_l2: repair.relativeL2,
      frame_relative: repair.frameRelative,
      tolerance: REPAIR_TOLERANCE,
      steps: repair.steps,
      files: [],
    },
    grid: { points: grid.n, input_points: seq.xUser.length, length: system.lengthFromNatural(grid.length), dx: system.lengthFromNatural(grid.dx), x0: seq.xUser[0], resampled: grid.n !== seq.xUser.length },
    warnings,
  };
  const base = { sequence: seq, fit, spectrum, timeMap, repair, report, admissible };
  if (!opts.variational) return base;
  const v = variationalStep(seq, fit, opts.variational, opts.onVariationalProgress);
  report.variational = v.report;
  return { ...base, variational: { fit: v.fit, comparison: v.comparison } };
}

/** CLI exit code of a finished check: 0 admissible, 1 not (bad input never gets here: UserError → 2) */
export function checkExitCode(result: CheckResult): 0 | 1 {
  return result.admissible ? 0 : 1;
}

/**
 * Write check.json, repaired.npy, repaired.json (a sidecar in the `design` format, so the repaired sequence can
 * itself be checked) and input.npy (the frames as judged, on the integration grid, for `isotrap report`) into
 * dir as one run (io/run-folder.ts: locked, staged, recorded in the manifest with the hash of checkRequestText);
 * refuses to overwrite without force. Returns the paths.
 */
export function writeCheckOutputs(result: CheckResult, dir: string, force: boolean): string[] {
  const files = CHECK_FILES.map((f) => join(resolve(dir), f));
  const identity = newRunIdentity(checkRequestText(result.report));
  return writeRun(dir, { force, produces: CHECK_FILES, job: 'check', identity }, (out) => {
    for (const [name, data] of stageCheck(result, files)) out.write(name, data);
  });
}

/** what a check was asked (input, sidecar, tolerance, units) as text: its hash identifies the check's run folder */
export function checkRequestText(r: CheckReport): string {
  return toJson({ input: r.input, sidecar: r.sidecar, tolerance: r.tolerance, units: r.units }, 2);
}

/** the bytes of each check file (absolute paths `files` are recorded in check.json) */
function stageCheck(result: CheckResult, files: readonly string[]): [string, string | Uint8Array][] {
  const { sequence: seq, repair } = result;
  const n = seq.grid.n;
  /** frames in the sequence's energy unit as one [frames, points] .npy */
  const npy = (frames: readonly Float64Array[]) => {
    const flat = new Float64Array(frames.length * n);
    frames.forEach((f, k) => {
      for (let j = 0; j < n; j++) flat[k * n + j] = seq.system.energyFromNatural(f[j]);
    });
    return encodeNpy(flat, [frames.length, n]);
  };
  result.report.repaired.files = [files[1], files[2]];
  const sidecar = {
    format: 'isotrap-sequence/1',
    x: seq.xUser.length === n ? seq.xUser : Array.from(seq.grid.x, (x) => seq.system.lengthFromNatural(x + seq.offset)),
    lambda: result.fit.tau,
    ...(seq.time ? { time: seq.time } : {}),
    length_unit: seq.units.length_unit,
    energy_unit: seq.units.energy_unit,
    lambda_unit: result.report.units.tau,
    species: seq.units.species,
    mass_u: seq.units.mass_u,
    length_unit_um: seq.units.length_unit_um,
    dispersion: 'quantum',
    repaired_from: seq.file,
    repair: { dtau: result.report.intervals.map((it) => it.dtau), drift: result.report.intervals.map((it) => it.drift), drift_unit: result.report.units.drift },
  };
  return [
    [CHECK_FILES[1], npy(repair.frames)],
    [CHECK_FILES[3], npy(seq.frames)],
    [CHECK_FILES[2], toJson(sidecar)],
    [CHECK_FILES[0], toJson(result.report, 2)],
  ];
}
