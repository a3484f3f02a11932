/**
 * The unit of propagation work of a verify (verify.ts): one group of states under one drive, from s = 0 to T, with
 * copies of the states at the requested sample times. The groups are fixed by the state count alone
 * (`stateGroups`), never by the number of threads, and each group runs its own step control, so a verify gives the
 * same numbers serially and on any number of worker threads (drive-worker.mjs).
 *
 * A KdV drive is described by plain data (`KdvDriveSpec`: the grid, the designed sequence as its dense flow, the
 * ramp, σ, drift and the lab's errors), so a worker thread can rebuild its Hamiltonian; drives whose Hamiltonian is
 * a closure (painted drives, callers' potential functions) run in the calling thread.
 */
import { sequencePotential, type SequenceSource } from '../flow/dense.ts';
import { makeRamp, type Ramp, type RampKind } from '../protocol/ramp.ts';
import { makeGrid, type Grid } from '../spectral/grid.ts';
import { ComplexTranslation } from '../spectral/translate.ts';
import { kdvDrive, labPotential, Propagator, type DriveErrors, type PropagateOptions, type PropagationStats } from './propagator.ts';
import type { DrivenHamiltonian } from './scheme.ts';
import { lowestEigenpairs, type EigenMethod, type EigenResult } from './eigen.ts';

/** states per group at least: small enough to spread a verify of a few bound states over two to eight cores, large
 *  enough that the per-step work shared by a group's states (H at the stage times, the φ-coefficients) stays minor
 *  (common practice) */
export const STATE_GROUP_SIZE = 4;
/** at most this many groups: a large ensemble is cut into this many, so the shared per-step work stays minor too */
export const MAX_STATE_GROUPS = 16;

/** the groups [start, end) of m states: of STATE_GROUP_SIZE, or of ⌈m/MAX_STATE_GROUPS⌉ when that is larger (a
 *  function of m alone, never of the thread count) */
export function stateGroups(m: number): Array<[number, number]> {
  const size = Math.max(STATE_GROUP_SIZE, Math.ceil(m / MAX_STATE_GROUPS));
  const out: Array<[number, number]> = [];
  for (let a = 0; a < m; a += size) out.push([a, Math.min(m, a + size)]);
  return out;
}

/** a KdV drive H + σλ̇A as plain data (propagator.ts kdvDrive) */
export interface KdvDriveSpec {
  grid: { length: number; n: number };
  potential: SequenceSource;
  ramp: { kind: RampKind; duration: number; lambdaEnd: number };
  sigma: number;
  drift: number;
  errors: DriveErrors;
}

/** the Hamiltonian of a spec */
export function kdvDriveOf(spec: KdvDriveSpec): DrivenHamiltonian {
  const grid = makeGrid(spec.grid.length, spec.grid.n);
  const ramp = makeRamp(spec.ramp.kind, spec.ramp.duration, spec.ramp.lambdaEnd);
  return sourceDrive(grid, spec.potential, ramp, spec.sigma, spec.drift, spec.errors);
}

/**
 * The KdV drive of a designed sequence (propagator.ts kdvDrive). When the flow was integrated in a moving frame
 * (dense.frameSpeed c_f ≠ 0) and the lab adds no errors, the drive runs in that frame too: the potential is read
 * there, w(ξ; λ) = u(ξ + c_fλ; λ), the Hamiltonian is T_X⁻¹HT_X − Ẋk with X(s) = c_fλ(s) (scheme.ts `offset`), and
 * runGroup translates the states. The states then change slowly (the eigenstates ride with the solitons), so the
 * same step count errs far less: two-soliton split, N = 512, 8 states, 128 steps: amplitude error 9.2e-5 against
 * 2.0e-3 in the lab frame (measured). With errors (timing, noise, …) the drive runs in the lab.
 */
export function sourceDrive(grid: Grid, source: SequenceSource, ramp: Ramp, sigma: number, drift: number, errors: DriveErrors): DrivenHamiltonian {
  const c = source.dense.frameSpeed;
  if (!runsInFrame(source, errors)) return kdvDrive(grid, sequencePotential(source), ramp, sigma, drift, errors);
  const inFrame = kdvDrive(grid, sequencePotential(source, true), ramp, sigma, drift);
  return {
    grid,
    offset: (s) => c * ramp.value(s),
    terms(s, out) {
      inFrame.terms(s, out);
      out.c1 -= c * ramp.rate(s);
    },
  };
}

/** the lowest `levels` eigenpairs of the lab's potential (propagator.ts labPotential) of a spec (σ unused): a fidelity-trace basis
 *  solved on a worker thread */
export function labBasis(spec: Omit<KdvDriveSpec, 'sigma'>, lambda: number, levels: number, method: EigenMethod): EigenResult {
  const grid = makeGrid(spec.grid.length, spec.grid.n);
  const u = new Float64Array(grid.n);
  labPotential(grid, sequencePotential(spec.potential), spec.errors)(lambda, u);
  return lowestEigenpairs(grid, u, levels, { method });
}

/** the step control of a group (propagator.ts PropagateOptions, plain data) */
export type GroupControl = Pick<PropagateOptions, 'scheme' | 'tol' | 'errorControl' | 'expectedSteps'>;

export interface GroupTask {
  /** the initial states of the group (interleaved complex) */
  states: Float64Array[];
  duration: number;
  /** times at which copies of the states are returned (ascending) */
  sampleTimes: number[];
  control: GroupControl;
}

export interface GroupResult {
  states: Float64Array[];
  /** per sample time, copies of the group's states there */
  samples: Float64Array[][];
  stats: PropagationStats;
}

/** whether sourceDrive runs in the flow's moving frame: it has one and the lab adds no errors */
export function runsInFrame(source: SequenceSource, errors: Partial<DriveErrors>): boolean {
  const clean = !errors.scale && !errors.depth && !errors.shift && !errors.psf && !errors.noise;
  return source.dense.frameSpeed !== 0 && clean;
}

/** propagate one group under H (module comment); a Hamiltonian in a moving frame (`offset`) gets its states
 *  translated in at s = 0 and the sampled and final ones translated back, so the result is in the lab */
export function runGroup(H: DrivenHamiltonian, task: GroupTask, prop: Propagator = new Propagator(H.grid), onProgress?: (fraction: number) => void): GroupResult {
  const samples: Float64Array[][] = [];
  const frame = H.offset ? { offset: H.offset, shift: new ComplexTranslation(H.grid.k) } : null;
  // a copy translated by direction·X(s): +1 from the frame to the lab, ψ(x, s) = φ(x − X(s), s); −1 into the frame
  const translated = (s: number, x: Float64Array, direction: 1 | -1): Float64Array => {
    const copy = Float64Array.from(x);
    frame?.shift.apply(copy, direction * frame.offset(s));
    return copy;
  };
  // φ(ξ, 0) = ψ(ξ + X(0), 0)
  const initial = frame ? task.states.map((x) => translated(0, x, -1)) : task.states;
  const res = prop.propagate(H, initial, 0, task.duration, {
    ...task.control,
    sampleTimes: task.sampleTimes,
    onSample: task.sampleTimes.length > 0 ? (s, sts) => samples.push(sts.map((x) => translated(s, x, 1))) : undefined,
    onProgress,
  });
  const states = frame ? res.states.map((x) => translated(task.duration, x, 1)) : res.states;
  return { states, samples, stats: res.stats };
}

/** the statistics of a drive run in groups: steps and step sizes over all groups, work summed, errors the worst */
export function mergeStats(parts: readonly PropagationStats[]): PropagationStats {
  const first = parts[0];
  const levels = parts.flatMap((p) => p.levels ?? []);
  return {
    ...first,
    levels: levels.length > 0 ? [...new Set(levels)].sort((a, b) => a - b) : undefined,
    steps: Math.max(...parts.map((p) => p.steps)),
    rejected: parts.reduce((a, p) => a + p.rejected, 0),
    matvecs: parts.reduce((a, p) => a + p.matvecs, 0),
    krylovCalls: parts.reduce((a, p) => a + p.krylovCalls, 0),
    krylovSubsteps: parts.reduce((a, p) => a + p.krylovSubsteps, 0),
    krylovMaxDimUsed: Math.max(...parts.map((p) => p.krylovMaxDimUsed)),
    minStep: Math.min(...parts.map((p) => p.minStep)),
    maxStep: Math.max(...parts.map((p) => p.maxStep)),
    estimatedAmplitudeError: Math.max(...parts.map((p) => p.estimatedAmplitudeError)),
    maxNormDrift: Math.max(...parts.map((p) => p.maxNormDrift)),
    wallMs: parts.reduce((a, p) => a + p.wallMs, 0),
  };
}
