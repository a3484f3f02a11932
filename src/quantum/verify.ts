/**
 * Verification of a KdV-admissible trap sequence by Schrödinger simulation (physics.md §1–§3, §5):
 * eigenpairs of H(0) and H(λ_end), propagation of the lowest M eigenstates under the CD drive (σ = +1), the bare
 * drive (σ = 0) and optionally the sign-flipped drive (σ = −1), fidelities in the degenerate eigenspaces of
 * H(λ_end), excess energies, thermal and fermion summaries, the size of the CD correction on the occupied
 * subspace, and the isospectrality drift (eigenvalues of H(λ_end) vs H(0): they must not move along an
 * admissible sequence). Results are plain JSON-serialisable objects.
 */
import type { Grid } from '../spectral/grid.ts';
import { densePointsFor, lowestEigenpairs, groupDegenerate, type EigenMethod, type EigenResult } from './eigen.ts';
import { complexFromReal } from '../linalg/complex.ts';
import { laxTerms, SpectralOperator } from './hamiltonian.ts';
import { eigenspaceFidelity, excessEnergy, fermionFidelity, boltzmannWeights, groupOf, occupiedCoupling, uhlmannFidelity, thermalSummary, type FermionSummary, type ThermalSummary } from './observables.ts';
import { kdvDrive, labPotential, NO_ERRORS, Propagator, type DriveErrors, type ErrorControl, type PotentialFn, type PropagationStats, type Scheme } from './propagator.ts';
import { makeRamp, type Ramp, type RampKind } from '../protocol/ramp.ts';
import { boxThreshold } from './bound.ts';
import { GaussianBlur } from '../spectral/blur.ts';
import { groundStateField, paintedDrive, recordRange, velocityDrive, type VelocityField } from './painted.ts';
import type { OperatorTerms } from './hamiltonian.ts';
import type { DrivenHamiltonian } from './scheme.ts';
import { boundStateEstimate, driveSteps, eigenMethodFor, eigenSolveMatvecs, estimateSchrodingerSteps, SCHRODINGER_MATVECS_PER_STEP, SECONDS_PER_MATVEC_POINT } from './cost.ts';
import { mergeStats, runGroup, sourceDrive, stateGroups, type GroupControl, type GroupResult, type GroupTask, type KdvDriveSpec } from './drive-group.ts';
import { WorkerPool } from '../core/worker-pool.ts';
import { NumericalError } from '../core/errors.ts';
import type { SequenceSource } from '../flow/dense.ts';

/** drives of the KdV Hamiltonian H + σλ̇A (cd σ = 1, bare σ = 0, flipped σ = −1) and the painted drives, pure
 *  potentials k² + u + V_loc (painted.ts): `painted` from the caller's momentum-linear field, `painted_ground` from
 *  the one-state exact field of the ground state */
export type DriveKind = 'cd' | 'bare' | 'flipped' | 'painted' | 'painted_ground';
export const DRIVE_SIGMA: Record<'cd' | 'bare' | 'flipped', number> = { cd: 1, bare: 0, flipped: -1 };
export const DRIVE_KINDS: readonly DriveKind[] = ['cd', 'bare', 'flipped', 'painted', 'painted_ground'];
const isPainted = (d: DriveKind): d is 'painted' | 'painted_ground' => d === 'painted' || d === 'painted_ground';

/** levels closer than this (E₀) count as degenerate (the ±k pairs agree to round-off, ~1e-12) */
const DEGENERACY_TOL_DEFAULT = 1e-7;
/** states added above the bound ones by default (the lowest continuum levels show leakage out of the bound set) */
const EXTRA_STATES = 4;
/** infidelity budget of the time stepping when none is given (the propagator's default) */
const TOL_DEFAULT = 1e-8;
/** samples of the protocol at which the size of the correction is measured (CdStrength) */
const STRENGTH_SAMPLES_DEFAULT = 33;

export interface VerifyOptions {
  grid: Grid;
  potential: PotentialFn;
  lambdaEnd: number;
  ramp: RampKind;
  duration: number;
  /** co-moving drift c of the flow that made the sequence (natural units; default 0) */
  drift?: number;
  /** number of propagated states; default: bound states (E < −(2π/L)²) + 4 */
  states?: number;
  /** infidelity budget of the time stepping (default 1e-8) */
  tol?: number;
  temperature?: number;
  fermions?: number;
  drives?: DriveKind[];
  scheme?: Scheme;
  /** time-step error control (propagator.ts); default 'global' (measured faster at equal true accuracy) */
  errorControl?: ErrorControl;
  eigenMethod?: EigenMethod;
  degeneracyTol?: number;
  /** number of fidelity-trace samples per drive, equally spaced from s = 0 to s = T inclusive, so the trace starts
   *  at the initial states and ends at the reported final fidelities (0 = none; each interior one costs an eigen-solve) */
  traceSamples?: number;
  strengthSamples?: number;
  /** the momentum-linear field of the `painted` drive (e.g. the variational ½{g, k} of check/painted.ts) */
  paintedField?: VelocityField;
  /** errors a lab makes (propagator.ts DriveErrors): the correction's scale and timing apply to the KdV drives; the
   *  depth error scales the potential everywhere, so the initial states and the final reference are those of the
   *  lab's trap (1 + δ)V */
  errors?: Partial<DriveErrors>;
  /** the sequence as plain data (flow/dense.ts), the same potential as `potential`: lets `verifySequenceThreaded`
   *  run the KdV drives on worker threads */
  source?: SequenceSource;
  /** 1/e² radius (ℓ) of a Gaussian point-spread function that blurs every painted potential (spectral/blur.ts) */
  blur?: number;
  /** propagate the bound states also under each painted drive's momentum-linear partner λ̇½{g, k} and compare the
   *  final fidelities (the gauge check of physics.md §7; default true when a painted drive runs) */
  gaugeCheck?: boolean;
  onProgress?: (fraction: number, stage: string) => void;
}

export interface StateResult {
  index: number;
  energyStart: number;
  energyEnd: number;
  degeneracyEnd: number;
}

export interface DriveResult {
  drive: DriveKind;
  sigma: number;
  fidelity: number[];
  excessEnergy: number[];
  minFidelity: number;
  thermal: ThermalSummary | null;
  fermions: FermionSummary | null;
  normDrift: number;
  stats: PropagationStats;
  trace: { times: number[]; fidelity: number[][] } | null;
  /** painted drives: lowest and highest value of the painted potential u + V_loc over every evaluated time
   *  (E₀), null for the KdV drives */
  paintedRange: { min: number; max: number } | null;
}

/** the gauge check of one painted drive: bound states under the painted potential and under λ̇½{g, k} */
export interface GaugeCheckResult {
  drive: 'painted' | 'painted_ground';
  states: number;
  painted: number[];
  velocity: number[];
  maxDifference: number;
}

/** what the painted drives need beyond the KdV ones */
export interface PaintedInfo {
  /** the ground-state field's clip: ρ_c (ℓ⁻¹), the state's weight where it acts, the Chebyshev degree in λ */
  ground: { clipDensity: number; clippedWeight: number; degree: number } | null;
  gauge: GaugeCheckResult[];
  /** lowest and highest value of the first frame u(ξ, 0), the reference of the painted range */
  startRange: { min: number; max: number };
}

/**
 * The size of the correction a lab needs (E₀), at every strength sample time s (see observables.occupiedCoupling):
 * `leakage` |λ̇|‖(1 − P)AP‖₂, the coupling the correction supplies out of the occupied subspace (P: the lowest
 * `occupied` transported states); `leakageCubic`, `leakagePotential` the same measure of the p³ and of the
 * potential-weighted part alone (they partly cancel, so each may exceed the whole); `window` the largest single
 * transition element |λ̇⟨m|A|n⟩| between an occupied n and a tracked m ≠ n.
 */
export interface CdStrength {
  occupied: number;
  time: number[];
  leakage: number[];
  leakageCubic: number[];
  leakagePotential: number[];
  window: number[];
}

export interface VerifyResult {
  grid: { n: number; length: number };
  ramp: RampKind;
  duration: number;
  lambdaEnd: number;
  states: StateResult[];
  boundStates: number;
  isospectralDrift: number;
  eigen: { method: string; detail: string; maxResidual: number; residualTol: number; wallMs: number };
  drives: DriveResult[];
  cdStrength: CdStrength | null;
  painted: PaintedInfo | null;
  /** wall times (ms) and the threads the KdV drives ran on */
  timings: { eigenMs: number; propagationMs: number; totalMs: number; threads: number };
  warnings: string[];
}

/** a state-count option (`states`, `fermions`) outside what the grid or the propagated set allows */
export class StateCountError extends RangeError {
  readonly option: 'states' | 'fermions';
  readonly value: number;
  constructor(option: 'states' | 'fermions', value: number, message: string) {
    super(message);
    this.name = 'StateCountError';
    this.option = option;
    this.value = value;
  }
}

function eigenWithBound(grid: Grid, u: Float64Array, method: EigenMethod | undefined): { res: EigenResult; bound: number } {
  const eb = boxThreshold(grid.length);
  let count = Math.min(grid.n, 16);
  for (;;) {
    const res = lowestEigenpairs(grid, u, count, { method });
    const bound = res.energies.filter((e) => e < eb).length;
    if (bound < count || count === grid.n) return { res, bound };
    count = Math.min(grid.n, 2 * count);
  }
}

/** eigenpairs at the start and the end of the sequence, the propagated count and the isospectrality drift */
interface Spectra {
  e0: EigenResult;
  e1: EigenResult;
  groups1: number[][];
  bound: number;
  /** propagated states */
  m: number;
  /** levels solved (m plus two, so a degenerate pair cut at the top is complete) */
  extra: number;
  /** the grid of the dense eigen solves, expected from the start potential (eigen.ts densePointsFor) */
  densePoints: number;
  states: StateResult[];
  drift: number;
  eigenMs: number;
}

/** the spectra at both ends; `started(e0, m)` runs once the start is solved, before the end (a caller may launch
 *  the propagations, which need only the start, while this thread solves the end) */
function endSpectra(opts: VerifyOptions, u0: Float64Array, u1: Float64Array, degTol: number, started: (e0: EigenResult, m: number) => void): Spectra {
  const { grid } = opts;
  const t0 = performance.now();
  const first = eigenWithBound(grid, u0, opts.eigenMethod);
  const m = opts.states ?? Math.min(grid.n, first.bound + EXTRA_STATES);
  if (!Number.isInteger(m) || m < 1 || m > grid.n) throw new StateCountError('states', m, `must be an integer in 1 … ${grid.n} (the grid points)`);
  const extra = Math.min(grid.n, m + 2);
  const densePoints = densePointsFor(u0, extra);
  const method = opts.eigenMethod ?? eigenMethodFor(grid.n, extra, densePoints);
  const e0 = first.res.energies.length >= extra ? first.res : lowestEigenpairs(grid, u0, extra, { method });
  started(e0, m);
  const e1 = lowestEigenpairs(grid, u1, extra, { method });
  const eigenMs = performance.now() - t0;
  const groups1 = groupDegenerate(e1.energies, degTol);
  const states: StateResult[] = [];
  let drift = 0;
  for (let i = 0; i < m; i++) {
    states.push({ index: i, energyStart: e0.energies[i], energyEnd: e1.energies[i], degeneracyEnd: groupOf(groups1, i).length });
    drift = Math.max(drift, Math.abs(e1.energies[i] - e0.energies[i]));
  }
  return { e0, e1, groups1, bound: first.bound, m, extra, densePoints, states, drift, eigenMs };
}

/** what every drive shares: the spectra, the initial states, the propagator and operator, the trace eigenbases */
interface DriveContext {
  opts: VerifyOptions;
  ramp: Ramp;
  spectra: Spectra;
  init: Float64Array[];
  prop: Propagator;
  op: SpectralOperator;
  scratch: Float64Array;
  occupied: number;
  degTol: number;
  /** the instantaneous eigenbasis depends only on the time, not the drive: solved once per sample time */
  traceBases: Map<number, { es: EigenResult; gs: number[][] }>;
  /** the potential at the end of the sequence */
  u1: Float64Array;
  warnings: string[];
  meter: WorkMeter;
  expectedSteps: ExpectedSteps;
  /** the fields of the painted drives */
  fields: Partial<Record<'painted' | 'painted_ground', VelocityField>>;
  /** the design's potential (opts.potential is the lab's, (1 + δ) times it under a depth error) and the errors */
  design: PotentialFn;
  errors: DriveErrors;
}

/**
 * Progress as the products with H done over those estimated (quantum/cost.ts): each eigen solve weighs `eigen`,
 * each group of states under a drive its own estimate (`groupWork`); within a running group the propagator's
 * fraction counts. The fraction never goes back and reaches 1 only at the end.
 */
class WorkMeter {
  private done = 0;
  private running = 0;
  private inRunning = 0;
  private shown = 0;
  constructor(private readonly total: number, readonly eigen: number, readonly groupWork: (drive: DriveKind | 'gauge', states: number) => number, private readonly report: (fraction: number, stage: string) => void) {}
  /** a finished piece of work */
  add(work: number, stage: string): void {
    this.done += work;
    this.show(stage);
  }
  /** fraction f of a running piece of the given work */
  at(work: number, f: number, stage: string): void {
    this.running = work;
    this.inRunning = Math.max(this.inRunning, f);
    this.show(stage);
  }
  /** the running piece is finished */
  finished(work: number, stage: string): void {
    this.inRunning = 0;
    this.add(work, stage);
  }
  private show(stage: string): void {
    this.shown = Math.max(this.shown, Math.min(0.999, (this.done + this.inRunning * this.running) / this.total));
    this.report(this.shown, stage);
  }
}

/** the sample times of a drive: fidelity-trace times and (cd only) correction-strength times */
interface DrivePlan {
  drive: DriveKind;
  traceTimes: number[];
  strengthTimes: number[];
  sampleTimes: number[];
  /** the painted potential's range (painted drives), filled while their Hamiltonian is evaluated */
  range: { min: number; max: number };
  /** the group tasks, in state order */
  tasks: GroupTask[];
  expectedSteps: ExpectedSteps;
}

function planDrive(opts: VerifyOptions, init: readonly Float64Array[], expectedSteps: ExpectedSteps, drive: DriveKind): DrivePlan {
  const nTrace = opts.traceSamples ?? 0;
  const nStrength = drive === 'cd' ? (opts.strengthSamples ?? STRENGTH_SAMPLES_DEFAULT) : 0;
  // n times from 0 to T, the last exactly T (T·i/(n − 1) at i = n − 1 can round above T, past the propagation's end)
  const evenly = (n: number) => Array.from({ length: n }, (_, i) => (i === n - 1 ? opts.duration : (opts.duration * i) / (n - 1)));
  const traceTimes = nTrace === 1 ? [opts.duration] : evenly(nTrace);
  const strengthTimes = nStrength === 1 ? [0] : evenly(nStrength);
  const sampleTimes = [...new Set([...traceTimes, ...strengthTimes])].sort((a, b) => a - b);
  const expected = drive === 'bare' ? expectedSteps.bare : expectedSteps.corrected;
  const control: GroupControl = { scheme: opts.scheme, tol: opts.tol, errorControl: opts.errorControl ?? 'global', expectedSteps: expected };
  // painted drives evaluate a closure: one group in the calling thread
  const groups = isPainted(drive) ? [[0, init.length] as [number, number]] : stateGroups(init.length);
  const tasks = groups.map(([a, b]): GroupTask => ({ states: init.slice(a, b), duration: opts.duration, sampleTimes, control }));
  return { drive, traceTimes, strengthTimes, sampleTimes, range: { min: Infinity, max: -Infinity }, tasks, expectedSteps };
}

/** the Hamiltonian of a drive in this thread */
function localHamiltonian(ctx: DriveContext, plan: DrivePlan): DrivenHamiltonian {
  const { opts, ramp } = ctx;
  const drive = plan.drive;
  if (isPainted(drive)) {
    // the lab paints V + V_loc as one image: the optics blur the whole frame (errors.psf, or the export's blur)
    const width = opts.blur ?? ctx.errors.psf;
    const blur = width > 0 ? new GaussianBlur(opts.grid, width) : null;
    const unblurred = labPotential(opts.grid, ctx.design, { ...ctx.errors, psf: 0, noise: null });
    return recordRange(withStaticNoise(paintedDrive(opts.grid, unblurred, fieldOf(ctx, drive), ramp, 0, blur), ctx.errors.noise), plan.range);
  }
  return opts.source
    ? sourceDrive(opts.grid, opts.source, ramp, DRIVE_SIGMA[drive], opts.drift ?? 0, ctx.errors)
    : kdvDrive(opts.grid, ctx.design, ramp, DRIVE_SIGMA[drive], opts.drift ?? 0, ctx.errors);
}

/** H with a shot's static noise δV added to its potential after the optics (propagator.ts labPotential) */
function withStaticNoise(H: DrivenHamiltonian, noise: Float64Array | null): DrivenHamiltonian {
  if (noise === null) return H;
  const v = new Float64Array(H.grid.n);
  return {
    grid: H.grid,
    terms(s, out) {
      H.terms(s, out);
      const u = out.v as Float64Array;
      for (let j = 0; j < v.length; j++) v[j] = u[j] + noise[j];
      out.v = v;
    },
  };
}

/** a drive's groups in this thread, in order */
function runPlanHere(ctx: DriveContext, plan: DrivePlan): GroupResult[] {
  const H = localHamiltonian(ctx, plan);
  return plan.tasks.map((task) => {
    const work = ctx.meter.groupWork(plan.drive, task.states.length);
    const res = runGroup(H, task, ctx.prop, (f) => ctx.meter.at(work, f, plan.drive));
    ctx.meter.finished(work, plan.drive);
    return res;
  });
}

/** fidelities, energies, traces and the CD strength of a drive from its groups' final and sampled states */
function finishDrive(ctx: DriveContext, plan: DrivePlan, parts: readonly GroupResult[]): { result: DriveResult; strength: CdStrength | null } {
  const { opts, ramp, spectra, warnings } = ctx;
  const { grid } = opts;
  const drive = plan.drive;
  const sigma = isPainted(drive) ? 0 : DRIVE_SIGMA[drive];
  const trace = plan.traceTimes.length > 0 ? { times: plan.traceTimes, fidelity: [] as number[][] } : null;
  const coupling: CdStrength = { occupied: ctx.occupied, time: [], leakage: [], leakageCubic: [], leakagePotential: [], window: [] };
  const uS = new Float64Array(grid.n);
  for (const p of parts) {
    if (p.samples.length !== plan.sampleTimes.length) throw new Error(`internal error: ${drive}: ${p.samples.length} samples for ${plan.sampleTimes.length} sample times`);
  }
  plan.sampleTimes.forEach((s, k) => {
    const sts = parts.flatMap((p) => p.samples[k]);
    opts.potential(ramp.value(s), uS);
    if (trace && plan.traceTimes.includes(s)) trace.fidelity.push(traceFidelities(ctx, s, uS, sts));
    if (plan.strengthTimes.includes(s)) recordCoupling(coupling, ctx, s, sts);
  });
  const states = parts.flatMap((p) => p.states);
  const stats = mergeStats(parts.map((p) => p.stats));
  const { e0, e1, groups1, m } = spectra;
  const fid = states.map((p, i) => eigenspaceFidelity(p, e1.vectors, groupOf(groups1, i)));
  const exc = states.map((p, i) => excessEnergy(ctx.op, ctx.u1, p, e1.energies[i], ctx.scratch));
  const thermal = opts.temperature !== undefined ? thermalSummary(e0.energies.slice(0, m), fid, exc, opts.temperature, grid.length) : null;
  if (thermal) {
    // the final Gibbs state on the same tracked levels at the same temperature
    const q = boltzmannWeights(e1.energies.slice(0, m), thermal.temperature);
    thermal.uhlmannFidelity = uhlmannFidelity(states, thermal.weights, e1.vectors.slice(0, m), q);
  }
  if (thermal?.tailWarning) warnings.push(`${drive}: ${thermal.tailWarning}`);
  const fermions = opts.fermions !== undefined ? fermionFidelity(states, e1.vectors, e1.energies, opts.fermions, ctx.degTol) : null;
  if (fermions?.note) warnings.push(`${drive}: ${fermions.note}`);
  return {
    result: { drive, sigma, fidelity: fid, excessEnergy: exc, minFidelity: Math.min(...fid), thermal, fermions, normDrift: stats.maxNormDrift, stats, trace, paintedRange: isPainted(drive) ? plan.range : null },
    strength: plan.strengthTimes.length > 0 ? coupling : null,
  };
}

/** the gauge check runs unless turned off or the painted frames are blurred (a blurred V_loc is no longer the gauge
 *  image of λ̇½{g, k}, so the two drives need not agree) */
function gaugeWanted(opts: VerifyOptions): boolean {
  return (opts.gaugeCheck ?? true) && !((opts.blur ?? 0) > 0 || (opts.errors?.psf ?? 0) > 0 || (opts.errors?.noise ?? null) !== null);
}

function fieldOf(ctx: DriveContext, drive: 'painted' | 'painted_ground'): VelocityField {
  const f = ctx.fields[drive];
  if (!f) throw new RangeError(`verify: drive "${drive}" needs ${drive === 'painted' ? 'the option paintedField' : 'its ground-state field'}`);
  return f;
}

/**
 * The gauge check (physics.md §7): the bound states (at least one) propagated under the painted potential and under
 * its momentum-linear partner λ̇½{g, k} must end with the same fidelities; box continuum states feel the seam of the
 * periodic gauge (painted.ts gaugeCheck) and are left out.
 */
function gaugeOf(ctx: DriveContext, drive: 'painted' | 'painted_ground', painted: DriveResult): GaugeCheckResult {
  const { opts, ramp, spectra } = ctx;
  const count = Math.min(spectra.m, Math.max(1, spectra.bound));
  const expected = ctx.expectedSteps.corrected;
  const work = ctx.meter.groupWork('gauge', count);
  const res = runGroup(velocityDrive(opts.grid, opts.potential, fieldOf(ctx, drive), ramp), {
    states: ctx.init.slice(0, count), duration: opts.duration, sampleTimes: [],
    control: { scheme: opts.scheme, tol: opts.tol, errorControl: opts.errorControl ?? 'global', expectedSteps: expected },
  }, ctx.prop, (f) => ctx.meter.at(work, f, `gauge:${drive}`));
  ctx.meter.finished(work, `gauge:${drive}`);
  const velocity = res.states.map((p, i) => eigenspaceFidelity(p, spectra.e1.vectors, groupOf(spectra.groups1, i)));
  const mine = painted.fidelity.slice(0, count);
  return { drive, states: count, painted: mine, velocity, maxDifference: Math.max(...mine.map((f, i) => Math.abs(f - velocity[i]))) };
}

/** one sample of the correction's coupling out of the occupied subspace (CdStrength): the correction the lab builds,
 *  (1 + ε)λ̇A[u] of the design at s + δs (propagator.ts kdvDrive), on the states at s */
function recordCoupling(c: CdStrength, ctx: DriveContext, s: number, sts: readonly Float64Array[]): void {
  const sA = Math.min(Math.max(s + ctx.errors.shift, 0), ctx.ramp.duration);
  const uS = new Float64Array(ctx.opts.grid.n);
  ctx.design(ctx.ramp.value(sA), uS);
  const rate = Math.abs(ctx.ramp.rate(sA) * (1 + ctx.errors.scale));
  const full = occupiedCoupling(ctx.op, laxTerms(uS, 'full', undefined, ctx.opts.drift ?? 0), sts, ctx.occupied, ctx.scratch);
  c.time.push(s);
  c.leakage.push(rate * full.leakage);
  c.window.push(rate * full.window);
  c.leakageCubic.push(rate * occupiedCoupling(ctx.op, laxTerms(uS, 'cubic'), sts, ctx.occupied, ctx.scratch).leakage);
  c.leakagePotential.push(rate * occupiedCoupling(ctx.op, laxTerms(uS, 'potential'), sts, ctx.occupied, ctx.scratch).leakage);
}

/** fidelities of the states in the instantaneous eigenspaces of H(s) */
function traceFidelities(ctx: DriveContext, s: number, uS: Float64Array, sts: readonly Float64Array[]): number[] {
  let basis = ctx.traceBases.get(s);
  if (!basis) {
    const e = lowestEigenpairs(ctx.opts.grid, uS, ctx.spectra.extra, { method: ctx.opts.eigenMethod ?? eigenMethodFor(ctx.opts.grid.n, ctx.spectra.extra, ctx.spectra.densePoints) });
    basis = { es: e, gs: groupDegenerate(e.energies, ctx.degTol) };
    ctx.traceBases.set(s, basis);
    ctx.meter.add(ctx.meter.eigen, 'trace eigenstates');
  }
  const { es, gs } = basis;
  return sts.map((p, i) => eigenspaceFidelity(p, es.vectors, groupOf(gs, i)));
}

/** expected accepted level of the global step control (quantum/cost.ts), corrected and bare drives */
type ExpectedSteps = { corrected: number; bare: number; control: ErrorControl };

/** estimated products with H of a group of states under a drive (a gauge check propagates like a corrected drive) */
function workOfGroup(expectedSteps: ExpectedSteps, drive: DriveKind | 'gauge', states: number): number {
  return driveSteps(drive === 'bare' ? expectedSteps.bare : expectedSteps.corrected, expectedSteps.control) * SCHRODINGER_MATVECS_PER_STEP * states;
}

function expectedLevels(opts: VerifyOptions, u0: Float64Array, u1: Float64Array): ExpectedSteps {
  let maxAbsU = 0;
  for (let j = 0; j < u0.length; j++) maxAbsU = Math.max(maxAbsU, Math.abs(u0[j]), Math.abs(u1[j]));
  const size = { points: opts.grid.n, length: opts.grid.length, maxAbsU, lambdaEnd: opts.lambdaEnd, ramp: opts.ramp, duration: opts.duration, tol: opts.tol ?? TOL_DEFAULT };
  return { corrected: estimateSchrodingerSteps(size, true), bare: estimateSchrodingerSteps(size, false), control: opts.errorControl ?? 'global' };
}

/** the work meter of a verify (eigen solves at the ends and the interior trace samples, the drives) and the expected
 *  accepted levels of the step control, from quantum/cost.ts; the end spectra count as done */
function workMeter(opts: VerifyOptions, spectra: Spectra, expectedSteps: ExpectedSteps, drives: readonly DriveKind[], progress: (fraction: number, stage: string) => void): { meter: WorkMeter; expectedSteps: ExpectedSteps } {
  const eigen = eigenSolveMatvecs(spectra.extra, opts.grid.n, spectra.densePoints);
  // a painted drive costs about a corrected one; its gauge check propagates the bound states once more
  const gaugeStates = Math.min(spectra.m, Math.max(1, spectra.bound));
  const groupWork = (d: DriveKind | 'gauge', states: number) => workOfGroup(expectedSteps, d, states);
  const solves = 2 + Math.max(0, (opts.traceSamples ?? 0) - 2);
  const gauges = drives.filter((d) => isPainted(d) && gaugeWanted(opts)).length;
  const propagation = drives.reduce((sum, d) => sum + groupWork(d, spectra.m), 0) + gauges * groupWork('gauge', gaugeStates);
  const meter = new WorkMeter(solves * eigen + propagation, eigen, groupWork, progress);
  meter.add(2 * eigen, 'eigen');
  return { meter, expectedSteps };
}

/** everything a verify has settled before its propagations: the context, the plans, and what the result needs */
interface Prepared {
  ctx: DriveContext;
  plans: DrivePlan[];
  u0: Float64Array;
  ground: ReturnType<typeof groundStateField> | null;
  tStart: number;
  tProp: number;
}

/** the spectra, context and plans of a verify; `launch(plans)` is called as soon as the plans exist (before the end
 *  spectrum is solved) */
function prepare(options: VerifyOptions, launch?: (plans: DrivePlan[], levels: number) => void): Prepared {
  const errors: DriveErrors = { ...NO_ERRORS, ...options.errors };
  for (const k of ['scale', 'depth', 'shift', 'psf'] as const) if (!Number.isFinite(errors[k])) throw new RangeError(`verify: errors.${k} = ${errors[k]} must be a finite number`);
  if (errors.noise !== null && (errors.noise.length !== options.grid.n || errors.noise.some((v) => !Number.isFinite(v)))) throw new RangeError(`verify: errors.noise must hold ${options.grid.n} finite values`);
  const design = options.potential;
  const opts: VerifyOptions = { ...options, potential: labPotential(options.grid, design, errors) };
  const tStart = performance.now();
  const { grid } = opts;
  const warnings: string[] = [];
  const ramp = makeRamp(opts.ramp, opts.duration, opts.lambdaEnd);
  if (!ramp.endSlopeZero) warnings.push(`ramp "${opts.ramp}" has λ' ≠ 0 at the ends: H_CD ≠ H at start and end, fidelities then refer to H(λ) and include the sudden switch of the correction`);
  const drives = opts.drives ?? ['cd', 'bare'];
  for (const d of drives) if (!DRIVE_KINDS.includes(d)) throw new RangeError(`verify: drive "${String(d)}" is not known; allowed: ${DRIVE_KINDS.join(', ')}`);
  const degTol = opts.degeneracyTol ?? DEGENERACY_TOL_DEFAULT;
  const progress = opts.onProgress ?? (() => undefined);
  const u0 = new Float64Array(grid.n);
  const u1 = new Float64Array(grid.n);
  opts.potential(0, u0);
  opts.potential(opts.lambdaEnd, u1);
  progress(0, 'eigen');
  const expectedSteps = expectedLevels(opts, u0, u1);
  let init: Float64Array[] = [];
  let plans: DrivePlan[] = [];
  const spectra = endSpectra(opts, u0, u1, degTol, (e0, count) => {
    init = e0.vectors.slice(0, count).map(complexFromReal);
    plans = drives.map((d) => planDrive(opts, init, expectedSteps, d));
    launch?.(plans, Math.min(grid.n, count + 2));
  });
  const { m } = spectra;
  const occupied = opts.fermions ?? Math.min(m, Math.max(1, spectra.bound));
  if (opts.fermions !== undefined && (opts.fermions < 1 || opts.fermions > m || !Number.isInteger(opts.fermions))) {
    throw new StateCountError('fermions', opts.fermions, `must be an integer in 1 … ${m} (the propagated states)`);
  }
  if (opts.fermions !== undefined && opts.fermions > spectra.bound) {
    const box = opts.fermions - spectra.bound;
    warnings.push(
      `${opts.fermions} fermions fill the lowest levels but the trap binds only ${spectra.bound} (E < −(2π/L)²): ` +
        `${box} of them sit in box states of the periodic grid, so the Fermi-sea fidelity describes the box as well as the trap`,
    );
  }
  const ground = drives.includes('painted_ground') ? groundStateField(grid, opts.potential, 0, opts.lambdaEnd, { eigenMethod: opts.eigenMethod }) : null;
  const ctx: DriveContext = {
    opts, ramp, spectra, fields: { painted: opts.paintedField, painted_ground: ground ?? undefined }, design, errors, init, prop: new Propagator(grid), op: new SpectralOperator(grid),
    scratch: new Float64Array(2 * grid.n), occupied, degTol, warnings, u1, ...workMeter(opts, spectra, expectedSteps, drives, progress),
    // the end points of a trace use the end spectra, so the trace ends exactly at the reported fidelities
    traceBases: new Map([[0, { es: spectra.e0, gs: groupDegenerate(spectra.e0.energies, degTol) }], [opts.duration, { es: spectra.e1, gs: spectra.groups1 }]]),
  };
  return { ctx, plans, u0, ground, tStart, tProp: performance.now() };
}

/** the result from every drive's group results (same order as the plans) */
function assemble(p: Prepared, parts: readonly GroupResult[][]): VerifyResult {
  const { ctx, u0, ground, tStart, tProp } = p;
  const { opts, spectra, warnings } = ctx;
  const progress = opts.onProgress ?? (() => undefined);
  const drives = p.plans.map((plan) => plan.drive);
  const results: DriveResult[] = [];
  let cdStrength: CdStrength | null = null;
  const gauge: GaugeCheckResult[] = [];
  p.plans.forEach((plan, i) => {
    const { result, strength } = finishDrive(ctx, plan, parts[i]);
    if (strength) cdStrength = strength;
    results.push(result);
    const drive = plan.drive;
    if (isPainted(drive) && gaugeWanted(opts)) gauge.push(gaugeOf(ctx, drive, result));
  });
  let startMin = Infinity, startMax = -Infinity;
  for (const v of u0) { startMin = Math.min(startMin, v); startMax = Math.max(startMax, v); }
  const painted: PaintedInfo | null = drives.some(isPainted)
    ? { ground: ground ? { clipDensity: ground.clipDensity, clippedWeight: ground.clippedWeight, degree: ground.degree } : null, gauge, startRange: { min: startMin, max: startMax } }
    : null;
  progress(1, 'done');
  const propagationMs = performance.now() - tProp;
  const { drift, e0, e1, eigenMs } = spectra;
  if (drift > 1e-6) warnings.push(`isospectrality drift ${drift.toExponential(2)} E₀: the sequence is not KdV-admissible or the potential is not resolved`);
  const maxRes = Math.max(...e0.residuals, ...e1.residuals);
  const { grid } = opts;
  return {
    grid: { n: grid.n, length: grid.length }, ramp: opts.ramp, duration: opts.duration, lambdaEnd: opts.lambdaEnd,
    states: spectra.states, boundStates: spectra.bound, isospectralDrift: drift,
    eigen: { method: e1.method, detail: e1.detail, maxResidual: maxRes, residualTol: e1.residualTol, wallMs: eigenMs },
    drives: results, cdStrength, painted, timings: { eigenMs, propagationMs, totalMs: performance.now() - tStart, threads: 1 }, warnings,
  };
}

/** the verification with every propagation in this thread */
export function verifySequence(options: VerifyOptions): VerifyResult {
  const p = prepare(options);
  return assemble(p, p.plans.map((plan) => runPlanHere(p.ctx, plan)));
}

/** below this estimated propagation time a verify runs in one thread (a worker's start-up costs ~0.1 s compiled,
 *  ~1 s from the TypeScript sources; common practice) */
export const THREADS_MIN_SECONDS = 1;

/**
 * The verification with the KdV drives' groups on `threads` worker threads (drive-worker.mjs) when the sequence is
 * given as plain data (`options.source`) and more than one thread is asked for; the painted drives and the gauge
 * checks run in this thread afterwards. The numbers equal those of `verifySequence` (drive-group.ts).
 */
export async function verifySequenceThreaded(options: VerifyOptions, threads: number, minSeconds = THREADS_MIN_SECONDS): Promise<VerifyResult> {
  const source = options.source;
  const { grid } = options;
  // the workers start before the spectra are solved, when the propagation is expected to take minSeconds or more
  const workers = threads > 1 && source !== undefined && estimatedDriveSeconds(options) >= minSeconds ? threads : 0;
  const shared: Omit<KdvDriveSpec, 'sigma'> | null = source === undefined ? null : {
    grid: { length: grid.length, n: grid.n }, potential: source, ramp: { kind: options.ramp, duration: options.duration, lambdaEnd: options.lambdaEnd },
    drift: options.drift ?? 0, errors: { ...NO_ERRORS, ...options.errors },
  };
  const pool = workers > 0 ? new WorkerPool<DriveTask | BasisTask, GroupResult | EigenResult>(new URL('./drive-worker.mjs', import.meta.url), workers, shared) : null;
  let running: Promise<Array<GroupResult | EigenResult>> | null = null;
  let jobs: Array<{ stage: string; work: number }> = [];
  let meter: WorkMeter | null = null;
  /** interior fidelity-trace times whose eigenbases the workers solve */
  let basisTimes: number[] = [];
  const cancel = new AbortController();
  const launch = (plans: DrivePlan[], levels: number) => {
    if (pool === null) return;
    const ramp = makeRamp(options.ramp, options.duration, options.lambdaEnd);
    // the lab's trap, as the one-thread path solves it (prepare): the same method whatever the thread count
    const u0 = new Float64Array(grid.n);
    labPotential(grid, options.potential, { ...NO_ERRORS, ...options.errors })(0, u0);
    const densePoints = densePointsFor(u0, levels);
    const method = options.eigenMethod ?? eigenMethodFor(grid.n, levels, densePoints);
    basisTimes = (plans[0]?.traceTimes ?? []).filter((t) => t > 0 && t < options.duration);
    const eigenWork = eigenSolveMatvecs(levels, grid.n, densePoints);
    // the eigen solves are the longest tasks: first, so that the groups fill the threads' ends
    const bases = basisTimes.map((t) => ({ task: { kind: 'basis' as const, lambda: ramp.value(t), levels, method }, stage: 'trace eigenstates', work: eigenWork }));
    const groups = plans.filter((plan) => !isPainted(plan.drive)).flatMap((plan) => plan.tasks.map((group) => ({
      task: { sigma: DRIVE_SIGMA[plan.drive as 'cd' | 'bare' | 'flipped'], group }, stage: plan.drive as string, work: workOfGroup(plan.expectedSteps, plan.drive, group.states.length),
    })));
    const tasks: Array<{ task: DriveTask | BasisTask; stage: string; work: number }> = [...bases, ...groups];
    jobs = tasks;
    // results arrive only once this thread waits, after `prepare` has made the meter
    running = pool.run(tasks.map((t) => t.task), (done) => meter?.add(jobs[done - 1].work, jobs[done - 1].stage), cancel.signal);
  };
  let p: Prepared;
  try {
    p = prepare(options, launch);
  } catch (e) {
    // the end spectrum or a check after the launch failed: stop the workers, drop their (cancelled) result
    if (running !== null) (running as Promise<unknown>).catch(() => undefined);
    cancel.abort();
    pool?.close();
    throw e;
  }
  const { ctx } = p;
  meter = ctx.meter;
  if (running === null) {
    pool?.close();
    return assemble(p, p.plans.map((plan) => runPlanHere(ctx, plan)));
  }
  let all: Array<GroupResult | EigenResult>;
  try {
    all = await (running as Promise<Array<GroupResult | EigenResult>>);
  } catch (e) {
    throw new NumericalError(`verify on ${workers} worker threads: ${e instanceof Error ? e.message : String(e)}`);
  }
  basisTimes.forEach((t, i) => {
    const es = all[i] as EigenResult;
    ctx.traceBases.set(t, { es, gs: groupDegenerate(es.energies, ctx.degTol) });
  });
  const results = all.slice(basisTimes.length) as GroupResult[];
  let next = 0;
  const parts = p.plans.map((plan) => (isPainted(plan.drive) ? runPlanHere(ctx, plan) : plan.tasks.map(() => results[next++])));
  const result = assemble(p, parts);
  result.timings.threads = workers;
  return result;
}

/** one group under one KdV drive, for a worker holding the shared part of the spec */
interface DriveTask {
  sigma: number;
  group: GroupTask;
}

/** the lowest `levels` eigenpairs of the lab's potential at λ (a fidelity-trace basis; drive-group.ts labBasis) */
interface BasisTask {
  kind: 'basis';
  lambda: number;
  levels: number;
  method: EigenMethod;
}

/** the propagation time of the KdV drives estimated before any eigen solve (quantum/cost.ts; the state count from
 *  the semiclassical bound-state count when not given) */
function estimatedDriveSeconds(opts: VerifyOptions): number {
  const { grid } = opts;
  const u0 = new Float64Array(grid.n);
  const u1 = new Float64Array(grid.n);
  opts.potential(0, u0);
  opts.potential(opts.lambdaEnd, u1);
  const expected = expectedLevels(opts, u0, u1);
  const states = opts.states ?? boundStateEstimate(u0, grid.length / grid.n) + EXTRA_STATES;
  const work = (opts.drives ?? ['cd', 'bare']).filter((d) => !isPainted(d)).reduce((sum, d) => sum + workOfGroup(expected, d, states), 0);
  return work * SECONDS_PER_MATVEC_POINT * grid.n * Math.log2(grid.n);
}
