/**
 * Verification of a KdV-admissible trap sequence by Schrödinger simulation (physics.md §1–§3, §5):
 * eigenpairs of H(0) and H(λ_end), propagation of the lowest M eigenstates under the CD drive (σ = +1), the bare
 * drive (σ = 0) and optionally the sign-flipped drive (σ = −1), fidelities in the degenerate eigenspaces of
 * H(λ_end), excess energies, thermal and fermion summaries, the size of the CD correction on the occupied
 * subspace, and the isospectrality drift (eigenvalues of H(λ_end) vs H(0): they must not move along an
 * admissible sequence). Results are plain JSON-serialisable objects.
 */
import { UserError } from '../core/errors.ts';
import type { Grid } from '../spectral/grid.ts';
import { lowestEigenpairs, groupDegenerate, type EigenMethod, type EigenResult } from './eigen.ts';
import { complexFromReal, laxTerms, SpectralOperator } from './hamiltonian.ts';
import { eigenspaceFidelity, excessEnergy, fermionFidelity, groupOf, projectedNorm, thermalSummary, type FermionSummary, type ThermalSummary } from './observables.ts';
import { kdvDrive, Propagator, type PotentialFn, type PropagationStats, type Scheme } from './propagator.ts';
import { makeRamp, type RampKind } from '../protocol/ramp.ts';
import { boxThreshold } from './bound.ts';

export type DriveKind = 'cd' | 'bare' | 'flipped';
export const DRIVE_SIGMA: Record<DriveKind, number> = { cd: 1, bare: 0, flipped: -1 };

/** levels closer than this (E₀) count as degenerate (the ±k pairs agree to round-off, ~1e-12) */
const DEGENERACY_TOL_DEFAULT = 1e-7;
/** states added above the bound ones by default (the brief: bound states plus 4) */
const EXTRA_STATES = 4;
/** samples of the protocol used for the CD-strength maximum */
const STRENGTH_SAMPLES_DEFAULT = 17;

export interface VerifyOptions {
  grid: Grid;
  potential: PotentialFn;
  lambdaEnd: number;
  ramp: RampKind;
  duration: number;
  /** number of propagated states; default: bound states (E < −(2π/L)²) + 4 */
  states?: number;
  /** infidelity budget of the time stepping (default 1e-8) */
  tol?: number;
  temperature?: number;
  fermions?: number;
  drives?: DriveKind[];
  scheme?: Scheme;
  /** time-step error control (propagator.ts); default 'global' (measured faster at equal true accuracy) */
  errorControl?: 'local' | 'global';
  eigenMethod?: EigenMethod;
  degeneracyTol?: number;
  /** number of fidelity-trace samples per drive (0 = none; each costs one eigen-solve) */
  traceSamples?: number;
  strengthSamples?: number;
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
}

export interface CdStrength {
  /** occupied subspace used: the lowest `occupied` transported states */
  occupied: number;
  /** max over the protocol of |λ'|·‖P A_λ P‖ (E₀), and the same for the p³ part (4k³) and the potential part (3{u,k}) */
  full: number;
  cubic: number;
  potential: number;
  atTime: number;
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
  timings: { eigenMs: number; propagationMs: number; totalMs: number };
  warnings: string[];
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

export function verifySequence(opts: VerifyOptions): VerifyResult {
  const tStart = performance.now();
  const { grid } = opts;
  const warnings: string[] = [];
  const ramp = makeRamp(opts.ramp, opts.duration, opts.lambdaEnd);
  if (!ramp.endSlopeZero) warnings.push(`ramp "${opts.ramp}" has λ' ≠ 0 at the ends: H_CD ≠ H at start and end, fidelities then refer to H(λ) and include the sudden switch of the correction`);
  const drives = opts.drives ?? ['cd', 'bare'];
  for (const d of drives) if (!(d in DRIVE_SIGMA)) throw new UserError(`verify: drive "${String(d)}" is not known; allowed: cd, bare, flipped`);
  const degTol = opts.degeneracyTol ?? DEGENERACY_TOL_DEFAULT;
  const progress = opts.onProgress ?? (() => undefined);
  const u0 = new Float64Array(grid.n);
  const u1 = new Float64Array(grid.n);
  opts.potential(0, u0);
  opts.potential(opts.lambdaEnd, u1);
  const t0 = performance.now();
  progress(0, 'eigen');
  const first = eigenWithBound(grid, u0, opts.eigenMethod);
  const m = opts.states ?? Math.min(grid.n, first.bound + EXTRA_STATES);
  if (!Number.isInteger(m) || m < 1 || m > grid.n) throw new UserError(`verify: states ${m} must be an integer in 1 … ${grid.n}`);
  // two extra levels complete a degenerate pair cut at the top
  const extra = Math.min(grid.n, m + 2);
  const e0 = first.res.energies.length >= extra ? first.res : lowestEigenpairs(grid, u0, extra, { method: opts.eigenMethod });
  const e1 = lowestEigenpairs(grid, u1, extra, { method: opts.eigenMethod });
  const eigenMs = performance.now() - t0;
  const groups1 = groupDegenerate(e1.energies, degTol);
  const states: StateResult[] = [];
  let drift = 0;
  for (let i = 0; i < m; i++) {
    states.push({ index: i, energyStart: e0.energies[i], energyEnd: e1.energies[i], degeneracyEnd: groupOf(groups1, i).length });
    drift = Math.max(drift, Math.abs(e1.energies[i] - e0.energies[i]));
  }
  const init = e0.vectors.slice(0, m).map(complexFromReal);
  const prop = new Propagator(grid);
  const op = new SpectralOperator(grid);
  const scratch = new Float64Array(2 * grid.n);
  const results: DriveResult[] = [];
  let cdStrength: CdStrength | null = null;
  const occupied = opts.fermions ?? Math.max(1, first.bound);
  if (opts.fermions !== undefined && (opts.fermions < 1 || opts.fermions > m || !Number.isInteger(opts.fermions))) {
    throw new UserError(`verify: fermions ${opts.fermions} must be an integer in 1 … ${m} (the propagated states)`);
  }
  const tProp = performance.now();
  const traceBases = new Map<number, { es: EigenResult; gs: number[][] }>();
  drives.forEach((drive, di) => {
    const sigma = DRIVE_SIGMA[drive];
    const H = kdvDrive(grid, opts.potential, ramp, sigma);
    const nTrace = opts.traceSamples ?? 0;
    const nStrength = drive === 'cd' ? (opts.strengthSamples ?? STRENGTH_SAMPLES_DEFAULT) : 0;
    const traceTimes = Array.from({ length: nTrace }, (_, i) => (opts.duration * (i + 1)) / (nTrace + 1));
    const strengthTimes = Array.from({ length: nStrength }, (_, i) => (opts.duration * i) / Math.max(1, nStrength - 1));
    const sampleTimes = [...new Set([...traceTimes, ...strengthTimes])].sort((a, b) => a - b);
    const trace = nTrace > 0 ? { times: traceTimes, fidelity: [] as number[][] } : null;
    const uS = new Float64Array(grid.n);
    let best = { full: 0, cubic: 0, potential: 0, atTime: 0 };
    const res = prop.propagate(H, init, 0, opts.duration, {
      scheme: opts.scheme, tol: opts.tol, sampleTimes, errorControl: opts.errorControl ?? 'global',
      onProgress: (f) => progress((di + f) / drives.length, drive),
      onSample: (s, sts) => {
        opts.potential(ramp.value(s), uS);
        if (trace && traceTimes.includes(s)) {
          // the instantaneous eigenbasis depends only on the time, not the drive: solve once per sample time
          let basis = traceBases.get(s);
          if (!basis) {
            const e = lowestEigenpairs(grid, uS, extra, { method: opts.eigenMethod });
            basis = { es: e, gs: groupDegenerate(e.energies, degTol) };
            traceBases.set(s, basis);
          }
          const { es, gs } = basis;
          trace.fidelity.push(sts.map((p, i) => eigenspaceFidelity(p, es.vectors, groupOf(gs, i))));
        }
        if (nStrength > 0 && strengthTimes.includes(s)) {
          const occ = sts.slice(0, occupied);
          const rate = Math.abs(ramp.rate(s));
          const full = rate * projectedNorm(op, laxTerms(uS, 'full'), occ, scratch);
          if (full >= best.full) {
            best = { full, cubic: rate * projectedNorm(op, laxTerms(uS, 'cubic'), occ, scratch), potential: rate * projectedNorm(op, laxTerms(uS, 'potential'), occ, scratch), atTime: s };
          }
        }
      },
    });
    if (nStrength > 0) cdStrength = { occupied, ...best };
    const fid = res.states.map((p, i) => eigenspaceFidelity(p, e1.vectors, groupOf(groups1, i)));
    const exc = res.states.map((p, i) => excessEnergy(op, u1, p, e1.energies[i], scratch));
    const thermal = opts.temperature !== undefined ? thermalSummary(e0.energies.slice(0, m), fid, exc, opts.temperature, grid.length) : null;
    if (thermal?.tailWarning) warnings.push(`${drive}: ${thermal.tailWarning}`);
    const fermions = opts.fermions !== undefined ? fermionFidelity(res.states, e1.vectors, e1.energies, opts.fermions, degTol) : null;
    if (fermions?.note) warnings.push(`${drive}: ${fermions.note}`);
    results.push({ drive, sigma, fidelity: fid, excessEnergy: exc, minFidelity: Math.min(...fid), thermal, fermions, normDrift: res.stats.maxNormDrift, stats: res.stats, trace });
  });
  progress(1, 'done');
  const propagationMs = performance.now() - tProp;
  if (drift > 1e-6) warnings.push(`isospectrality drift ${drift.toExponential(2)} E₀: the sequence is not KdV-admissible or the potential is not resolved`);
  const maxRes = Math.max(...e0.residuals, ...e1.residuals);
  return {
    grid: { n: grid.n, length: grid.length }, ramp: opts.ramp, duration: opts.duration, lambdaEnd: opts.lambdaEnd,
    states, boundStates: first.bound, isospectralDrift: drift,
    eigen: { method: e1.method, detail: e1.detail, maxResidual: maxRes, residualTol: e1.residualTol, wallMs: eigenMs },
    drives: results, cdStrength, timings: { eigenMs, propagationMs, totalMs: performance.now() - tStart }, warnings,
  };
}

/** one drive only (convenience wrapper) */
export function verifyDrive(opts: Omit<VerifyOptions, 'drives'>, drive: DriveKind): DriveResult {
  return verifySequence({ ...opts, drives: [drive] }).drives[0];
}
