/**
 * `check`: is a sequence from elsewhere admissible for exact cubic counterdiabatic driving (physics.md §2)?
 * Reads the sequence (io/external-sequence.ts), fits â, ĉ of (★) per frame (check/admissibility.ts), checks the
 * bound-state spectrum along the sequence, and integrates the repaired (admissible) sequence from the first
 * frame (check/repair.ts). Lab outputs: a = âℓ³/ħ² as a p³ coefficient (µm³/ħ² and SI s²/(kg²·m)), c = ĉℓ as
 * a velocity in length unit per unit λ. Exit codes for the CLI: 0 admissible, 1 not, 2 bad input (UserError).
 */
import { join } from 'node:path';
import { prepareOutputDir, writeFileAtomic } from '../io/files.ts';
import { encodeNpy } from '../io/npy.ts';
import { UserError } from '../core/errors.ts';
import { HBAR } from '../units/constants.ts';
import { fitFrames, spectrumCheck, STENCIL_WIDTH, type FrameFit, type SpectrumCheck } from '../check/admissibility.ts';
import { readSequence, type Sequence, type SequenceUnitsInput } from '../io/external-sequence.ts';
import { validateVariationalInput } from '../io/check-options.ts';
import { repairSequence, REPAIR_TOLERANCE, type Repair, type RepairMode } from '../check/repair.ts';
import { toJson } from './design.ts';
import { variationalFit, type VariationalFit } from '../check/variational.ts';
import { compareCorrections, cubicSchedule, variationalSchedule, type ComparisonResult } from '../check/drive.ts';
import type { RampKind } from '../protocol/ramp.ts';
import type { CheckReport, FrameReport, VariationalReport } from '../io/formats/check.ts';
export type { CheckReport, FrameReport, VariationalReport };

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

/** default tolerance on the relative residual and the relative bound-state drift */
export const DEFAULT_TOLERANCE = 1e-3;
/** frames up to this count all get their spectrum (each a dense diagonalisation, ~0.03–0.2 s); beyond it an
 * even selection plus every frame that fails the residual */
export const SPECTRUM_FRAMES_ALL = 201;

export const CHECK_FILES = ['check.json', 'repaired.npy', 'repaired.json'] as const;

export interface CheckOptions {
  /** .npy (with sidecar) or .csv sequence */
  input: string;
  /** tolerance on the relative residual and relative spectral drift, default 1e-3 */
  tolerance?: number;
  /** explicit sidecar path */
  sidecar?: string;
  /** units given on the command line (win over the sidecar) */
  units?: SequenceUnitsInput;
  /** how the repaired sequence gets its coefficients, default 'median' */
  repair?: RepairMode;
  /** opt-in variational correction and comparison (adds `variational` to the report) */
  variational?: VariationalCheckOptions;
}

export interface CheckResult {
  sequence: Sequence;
  fits: FrameFit[];
  spectrum: SpectrumCheck;
  repair: Repair;
  report: CheckReport;
  admissible: boolean;
  variational?: { fit: VariationalFit; comparison: ComparisonResult };
}

function median(v: number[]): number {
  if (v.length === 0) return 0;
  const s = [...v].sort((a, b) => a - b);
  const h = s.length >> 1;
  return s.length % 2 ? s[h] : 0.5 * (s[h - 1] + s[h]);
}

const fmt = (v: number) => v.toExponential(2);

/** frames whose bound-state spectrum is computed: all, or an even selection plus every frame failing the residual */
function spectrumFrames(fits: FrameFit[], count: number, tolerance: number, warnings: string[]): number[] {
  if (count <= SPECTRUM_FRAMES_ALL) return Array.from({ length: count }, (_, i) => i);
  const set = new Set<number>();
  for (let i = 0; i < SPECTRUM_FRAMES_ALL; i++) set.add(Math.round((i * (count - 1)) / (SPECTRUM_FRAMES_ALL - 1)));
  for (const f of fits) if (f.residual > tolerance) set.add(f.index);
  const indices = [...set].sort((a, b) => a - b);
  warnings.push(`${count} frames: bound-state spectra computed for ${indices.length} of them (an even selection plus every frame failing the residual)`);
  return indices;
}

/** conversions of the fitted coefficients to the sequence's units: a = âℓ³ (lab, µm³/ħ²) and a·ħ²/ℓ³ in SI */
function coefficientUnits(seq: Sequence): { aUser: (aHat: number) => number; aSi: (aHat: number) => number | null } {
  const lab = seq.system.system === 'lab';
  const ellUm = seq.units.length_unit_um ?? 1;
  return {
    aUser: (aHat) => (lab ? aHat * ellUm ** 3 : aHat),
    aSi: (aHat) => (lab ? (aHat * seq.system.ell ** 3) / (HBAR * HBAR) : null),
  };
}

/** what the per-frame reports need besides the fit of the frame */
interface FrameContext {
  seq: Sequence;
  spectrum: SpectrumCheck;
  /** spectrum row of each frame that has one */
  specOf: Map<number, number>;
  /** |E₀| of the deepest reference level (E₀), the scale of the relative drift */
  depth: number;
  tolerance: number;
  warnings: string[];
}

/** the report of one frame: residual and isospectrality verdicts, coefficients in the sequence's units */
function frameReport(f: FrameFit, c: FrameContext): FrameReport {
  const { seq, spectrum, tolerance } = c;
  const { system } = seq;
  const { aUser, aSi } = coefficientUnits(seq);
  const reasons: string[] = [];
  if (f.residual > tolerance) {
    let why = `residual ${fmt(f.residual)} > ${tolerance}: ∂_λV is not of the form (★) for any a, c`;
    if (f.lambdaResolution > tolerance) why += ` (the 3- and ${STENCIL_WIDTH}-point λ-derivatives differ by ${fmt(f.lambdaResolution)}: the frames are too far apart in λ, or the sequence is not smooth in λ here)`;
    reasons.push(why);
  }
  if (f.degenerate) c.warnings.push(`frame ${f.index}: the cubic and drift terms of (★) are parallel here (as for a single soliton): fitted as a pure translation, a = 0`);
  const si = c.specOf.get(f.index);
  let drift: number | null = null, rel: number | null = null, nb: number | null = null;
  if (si !== undefined) {
    nb = spectrum.energies[si].length;
    if (spectrum.levels > 0) {
      drift = system.energyFromNatural(spectrum.deviation[si]);
      rel = spectrum.deviation[si] / c.depth;
      if (rel > tolerance) {
        reasons.push(`not isospectral: bound-state energies off the sequence median by ${fmt(Math.abs(drift))} ${system.labels.energy} (relative ${fmt(rel)} > ${tolerance})`);
      }
    }
    if (spectrum.countChanged[si]) reasons.push(`not isospectral: ${nb} bound states, while most frames have ${spectrum.levels === nb ? 'more' : 'a different number'}`);
  }
  return {
    index: f.index,
    lambda: f.lambda,
    residual: f.residual,
    a: aUser(f.aHat),
    a_si: aSi(f.aHat),
    c: system.lengthFromNatural(f.cHat),
    a_hat: f.aHat,
    c_hat: f.cHat,
    admissible: reasons.length === 0,
    spectral_drift: drift,
    spectral_drift_relative: rel,
    bound_states: nb,
    stencil: f.stencil,
    lambda_resolution: f.lambdaResolution,
    degenerate: f.degenerate,
    static: f.static,
    reasons,
  };
}

/** the unit labels of check.json */
function reportUnits(seq: Sequence): CheckReport['units'] {
  const lab = seq.system.system === 'lab';
  const Lb = seq.system.labels.length;
  return {
    length: Lb,
    energy: seq.system.labels.energy,
    lambda: 'dimensionless (KdV time in the natural units of ℓ)',
    a: lab ? 'µm³/ħ² (a·ħ²/µm³)' : 'ℓ³/ħ² (â = aħ²/ℓ³)',
    a_si: lab ? 's²/(kg²·m)' : null,
    c: `${Lb} per unit λ`,
    species: seq.units.species,
    mass_u: seq.units.mass_u,
    length_unit_um: seq.units.length_unit_um,
  };
}

/** the fit, spectrum, repaired and grid sections of check.json */
function reportSections(seq: Sequence, fits: FrameFit[], spectrum: SpectrumCheck, repair: Repair): Pick<CheckReport, 'fit' | 'spectrum' | 'repaired' | 'grid'> {
  const { system, lambda, grid } = seq;
  const { aUser } = coefficientUnits(seq);
  const good = fits.filter((f) => !f.static && !f.degenerate);
  const aMed = median(good.map((f) => f.aHat));
  const cMed = median((good.length ? good : fits.filter((f) => !f.static)).map((f) => f.cHat));
  return {
    fit: {
      a_median: aUser(aMed),
      c_median: system.lengthFromNatural(cMed),
      a_hat_median: aMed,
      c_hat_median: cMed,
      stencil_width: STENCIL_WIDTH,
      method: `Fornberg ${STENCIL_WIDTH}-point λ-derivative (one-sided at the ends), spectral ξ-derivatives, least squares for â, ĉ of u_λ = â(−(3/2)uu_ξ + ¼u_ξξξ) − ĉu_ξ`,
    },
    spectrum: {
      frames: spectrum.indices,
      lambda: spectrum.indices.map((i) => lambda[i]),
      energies: spectrum.energies.map((row) => row.map((e) => system.energyFromNatural(e))),
      reference: spectrum.reference.map((e) => system.energyFromNatural(e)),
      threshold: system.energyFromNatural(spectrum.threshold),
      levels: spectrum.levels,
    },
    repaired: {
      mode: repair.mode,
      a: repair.aHat.map(aUser),
      c: repair.cHat.map((c) => system.lengthFromNatural(c)),
      max_distance: system.energyFromNatural(repair.maxDistance),
      relative_l2: repair.relativeL2,
      frame_relative: repair.frameRelative,
      tolerance: REPAIR_TOLERANCE,
      steps: repair.steps,
      files: [],
    },
    grid: { points: grid.n, length: system.lengthFromNatural(grid.length), dx: system.lengthFromNatural(grid.dx), x0: seq.xUser[0] },
  };
}

/** the variational correction and the side-by-side drives (check/variational.ts, check/drive.ts) */
function variationalStep(seq: Sequence, fits: FrameFit[], vo: VariationalCheckOptions): { fit: VariationalFit; comparison: ComparisonResult; report: VariationalReport } {
  const { grid, lambda, frames, system } = seq;
  if (!(Number.isFinite(vo.duration) && vo.duration > 0)) throw new UserError(`variational.duration = ${vo.duration} is not allowed: must be a finite number > 0 (${system.labels.time})`);
  const temp = vo.temperature !== undefined ? system.temperatureToNatural(vo.temperature) : undefined;
  validateVariationalInput({ states: vo.states, temperature: temp, legendre: vo.legendre }, grid.n);
  const vfit = variationalFit(grid, lambda, frames, { states: vo.states, temperature: temp, legendre: vo.legendre });
  const comparison = compareCorrections({
    grid, lambda, frames, states: vfit.states, temperature: temp, duration: system.timeToNatural(vo.duration), ramp: vo.ramp, tol: vo.tol,
    drives: [
      { label: 'variational', schedule: variationalSchedule(vfit) },
      { label: 'fitted cubic', schedule: cubicSchedule(fits, vfit.legendre) },
      { label: 'none', schedule: null },
    ],
  });
  const report: VariationalReport = {
    method: 'variational gauge potential: min Σ_m w_m Σ_{n∉deg m} |(∂_λH + i[A,H])_nm|² over A = a k³ + ½{g, k}, g over [u, 1, P_c(2ξ/L)] (natural units ℓ, E₀)',
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

/**
 * Run the whole check (no files written; see writeCheckOutputs): read → fit per frame → spectra → verdicts →
 * repair → optional variational step. Bad input throws a UserError.
 */
export function runCheck(opts: CheckOptions): CheckResult {
  const tolerance = opts.tolerance ?? DEFAULT_TOLERANCE;
  if (!(Number.isFinite(tolerance) && tolerance > 0)) throw new UserError(`tolerance = ${tolerance} is not allowed: must be a finite number > 0`);
  const mode = opts.repair ?? 'median';
  if (mode !== 'median' && mode !== 'piecewise') throw new UserError(`repair = ${JSON.stringify(mode)} is not allowed: must be "median" or "piecewise"`);
  const seq = readSequence(opts.input, { sidecar: opts.sidecar, units: opts.units });
  const { grid, frames, lambda, system } = seq;
  const warnings = [...seq.warnings];
  const fits = fitFrames(grid, lambda, frames);
  const indices = spectrumFrames(fits, frames.length, tolerance, warnings);
  const spectrum = spectrumCheck(grid, frames, indices);
  const depth = spectrum.levels > 0 ? Math.abs(spectrum.reference[0]) : 0;
  if (spectrum.levels === 0) warnings.push(`no bound state below the box threshold ${fmt(spectrum.threshold)} E₀ in some frame: isospectrality not tested`);

  const specOf = new Map<number, number>();
  indices.forEach((frame, i) => specOf.set(frame, i));
  const context: FrameContext = { seq, spectrum, specOf, depth, tolerance, warnings };
  const frameReports = fits.map((f) => frameReport(f, context));
  const failures = frameReports.filter((r) => !r.admissible).map((r) => `frame ${r.index} (λ = ${r.lambda}): ${r.reasons.join('; ')}`);
  const isospectral = spectrum.levels > 0 ? frameReports.every((r) => !r.reasons.some((s) => s.startsWith('not isospectral'))) : null;
  if (isospectral === false) {
    failures.push(`the sequence is not isospectral: the bound-state energies spread by ${fmt(system.energyFromNatural(spectrum.spread))} ${system.labels.energy} (relative ${fmt(spectrum.spread / depth)}) along it, so no exact cubic counterdiabatic term exists`);
  }
  const admissible = frameReports.every((r) => r.admissible);
  const repair = repairSequence(grid, lambda, frames, fits, mode);
  const report: CheckReport = {
    format: 'isotrap-check/1',
    input: seq.file,
    sidecar: seq.sidecar,
    admissible,
    tolerance,
    frames: frameReports,
    spectral_drift: system.energyFromNatural(spectrum.spread),
    spectral_drift_relative: depth > 0 ? spectrum.spread / depth : 0,
    isospectral,
    failures,
    units: reportUnits(seq),
    ...reportSections(seq, fits, spectrum, repair),
    warnings,
  };
  if (!opts.variational) return { sequence: seq, fits, spectrum, repair, report, admissible };
  const v = variationalStep(seq, fits, opts.variational);
  report.variational = v.report;
  return { sequence: seq, fits, spectrum, repair, report, admissible, variational: { fit: v.fit, comparison: v.comparison } };
}

/** CLI exit code of a finished check: 0 admissible, 1 not (bad input never gets here: UserError → 2) */
export function checkExitCode(result: CheckResult): 0 | 1 {
  return result.admissible ? 0 : 1;
}

/**
 * Write check.json, repaired.npy and repaired.json (a sidecar in the `design` format, so the repaired
 * sequence can itself be checked) into dir; refuses to overwrite without force. Returns the paths.
 */
export function writeCheckOutputs(result: CheckResult, dir: string, force: boolean): string[] {
  const outDir = prepareOutputDir(dir, { force, produces: [...CHECK_FILES] });
  const files = CHECK_FILES.map((f) => join(outDir, f));
  const { sequence: seq, repair } = result;
  const n = seq.grid.n;
  const flat = new Float64Array(repair.frames.length * n);
  repair.frames.forEach((f, k) => {
    for (let j = 0; j < n; j++) flat[k * n + j] = seq.system.energyFromNatural(f[j]);
  });
  result.report.repaired.files = [files[1], files[2]];
  writeFileAtomic(files[1], encodeNpy(flat, [repair.frames.length, n]));
  const sidecar = {
    format: 'isotrap-sequence/1',
    x: seq.xUser,
    lambda: seq.lambda,
    length_unit: seq.units.length_unit,
    energy_unit: seq.units.energy_unit,
    lambda_unit: 'dimensionless (KdV time τ in the natural units of ℓ)',
    species: seq.units.species,
    mass_u: seq.units.mass_u,
    length_unit_um: seq.units.length_unit_um,
    dispersion: 'quantum',
    repaired_from: seq.file,
    repair: { mode: repair.mode, a: result.report.repaired.a, c: result.report.repaired.c, a_unit: result.report.units.a, c_unit: result.report.units.c },
  };
  writeFileAtomic(files[2], toJson(sidecar));
  writeFileAtomic(files[0], toJson(result.report, 2));
  return files;
}
