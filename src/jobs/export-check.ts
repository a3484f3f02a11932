/**
 * `export` of a `check` folder: a sequence from elsewhere in lab time, with the correction its check fitted on its
 * own frames (check.json `variational`: A = â p³ + ½{g, p}, check/variational.ts) and its painted forms (the
 * a = 0 variational field, check/painted.ts, and the one-state exact field of the ground state, quantum/painted.ts),
 * at the hardware's update rate, in the same files and sidecar as the export of a design (jobs/export.ts).
 *
 * V(x, t_i) is the sequence the check's comparison simulated: the cubic Hermite interpolant in λ through the input
 * frames and their rates ∂_λV (the flow fit's where an interval passes, else Fornberg; check/rates.ts, check/drive.ts
 * SequenceInterpolant); â and g come from check/drive.ts correctionDrive, the drive the comparison ran. The painted
 * drives are simulated here (quantum/verify.ts) on the check's states, since no verify.json holds them.
 */
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { UserError } from '../core/errors.ts';
import { assertExportAffordable } from '../io/cost.ts';
import { checkOutputDir } from '../io/files.ts';
import { readCheckFile, type CheckReport } from '../io/formats/check.ts';
import { EXPORT_FORMAT, type ExportFile } from '../io/formats/export.ts';
import { readNpyFile } from '../io/formats/read.ts';
import { unitSystemOfSequence, type EnergyUnitLabel, type LengthUnit } from '../io/external-sequence.ts';
import { requireOneConfig } from '../io/run-folder.ts';
import { correctionDrive, SequenceInterpolant, type CorrectionSchedule } from '../check/drive.ts';
import { paintedVariationalField } from '../check/painted.ts';
import { frameRates } from '../check/rates.ts';
import { isRampKind, makeRamp, type RampKind } from '../protocol/ramp.ts';
import { emptyTerms } from '../quantum/hamiltonian.ts';
import { assertPaintableRamp, groundStateField, RampNotPaintableError, type VelocityField } from '../quantum/painted.ts';
import { verifySequence } from '../quantum/verify.ts';
import { makeGrid, type Grid } from '../spectral/grid.ts';
import type { UnitSystem } from '../units/scales.ts';
import { exportFigures, EXPORT_FIGURE_IDS, PAINTED_FIGURE_IDS } from '../report/panels/export.ts';
import {
  arraysIndex, csvIndex, csvTables, exportProduces, paintedIndex, paintedPotentials, sampleTimes, toLabUnits, validatePsf,
  type ExportOptions, type ExportResult, type PaintedDriveKind,
} from './export.ts';

/** the check files an export reads */
export const CHECK_SOURCES = ['check.json', 'input.npy'] as const;
/** the painted drives of a check export: the variational a = 0 field and the ground state's exact field */
const CHECK_PAINTED: readonly ('painted' | 'painted_ground')[] = ['painted', 'painted_ground'];
/** infidelity budget of the painted drives' simulation (verify's default) */
const CHECK_PAINTED_TOL = 1e-8;

/** a folder written by `isotrap check` (check.json and no design) */
export function isCheckFolder(dir: string): boolean {
  return existsSync(join(dir, 'check.json')) && !existsSync(join(dir, 'sequence.json'));
}

const CORRECTION_FORM =
  'H_lab(t) = p²/2m + V(x, t) + λ̇(t)·A, A = â p³ + ½{g, p}: the variational correction of check.json, fitted on the sequence\'s own frames ' +
  'and interpolated linearly in λ between them (the drive the check\'s comparison simulated); the drive term is C₃(t)·q³ + ½{w(x, t), p} with ' +
  'q = p/ħ, C₃ = λ̇·â·ħ³ (the cubic array) and w = λ̇·g (the velocity array)';

/** the unit system of check.json's units (UserError naming the key when it is not one check writes) */
function checkUnits(r: CheckReport, path: string) {
  const u = r.units;
  if (u.length !== 'µm' && u.length !== 'ℓ') throw new UserError(`${path}: key units.length = ${JSON.stringify(u.length)} is not allowed: must be µm or ℓ`);
  if (!['h·kHz', 'µK', 'E₀'].includes(u.energy)) throw new UserError(`${path}: key units.energy = ${JSON.stringify(u.energy)} is not allowed: must be h·kHz, µK or E₀`);
  return unitSystemOfSequence({ length_unit: u.length as LengthUnit, energy_unit: u.energy as EnergyUnitLabel, species: u.species, mass_u: u.mass_u, length_unit_um: u.length_unit_um });
}

/**
 * Compute the export of check folder `dir` (nothing written; module comment): refusals first (sources, the
 * variational step, options, memory, existing outputs), then the samples, the painted potentials and their drives.
 */
export function runCheckExport(dir: string, opts: ExportOptions): ExportResult {
  const started = performance.now();
  const checkPath = join(dir, 'check.json');
  const missing = CHECK_SOURCES.filter((f) => !existsSync(join(dir, f)));
  if (missing.length > 0) throw new UserError(`${dir} is missing ${missing.join(', ')}: it is not a finished check folder; run isotrap check on the sequence with --out ${dir}`);
  const entries = requireOneConfig(dir, [...CHECK_SOURCES]);
  const report = readCheckFile(checkPath);
  const v = report.variational;
  if (!v) {
    throw new UserError(`${checkPath} holds no variational correction, so there is no correction to export: run isotrap check on the sequence again with --variational-duration <ramp duration in ${report.units.time}> --out ${dir} --force`);
  }
  const rampKind = v.comparison.ramp;
  if (!isRampKind(rampKind)) throw new UserError(`${checkPath}: key variational.comparison.ramp = ${JSON.stringify(rampKind)} is not a ramp isotrap knows`);
  const units = checkUnits(report, checkPath);
  const L = units.labels;
  const input = readNpyFile(join(dir, 'input.npy'));
  const [nF, n] = input.shape;
  if (input.shape.length !== 2 || n !== report.grid.points || nF !== v.frames.length || nF !== report.frames.length || report.intervals.length !== nF - 1) {
    throw new UserError(`${join(dir, 'input.npy')}: shape [${input.shape.join(', ')}] does not match check.json (${report.frames.length} frames, ${v.frames.length} fitted, × ${report.grid.points} points): run isotrap check again`);
  }
  const duration = v.comparison.duration;
  const sampling = sampleTimes(duration, opts, L.time);
  assertExportAffordable(sampling.times.length, n, opts.csv, sampling.option);
  // the painted forms need λ̇ = λ̈ = 0 at both ends (quantum/painted.ts): without them the export has V and the correction only
  const span0 = v.frames[nF - 1].lambda - v.frames[0].lambda;
  let unpaintable: string | null = null;
  try {
    assertPaintableRamp(makeRamp(rampKind, duration, span0));
  } catch (err) {
    if (!(err instanceof RampNotPaintableError)) throw err;
    unpaintable = `the check's ramp (variational.comparison.ramp = ${rampKind}) has ${err.reason.replace(/ \(t₀⁻¹\)| \(t₀⁻²\)/, '')}: a painted correction ends in the corrected state only when λ̇ = λ̈ = 0 at both ends, so no painted potential is exported; run isotrap check again with --variational-ramp sin2 or smooth for them`;
  }
  const paintedDrives = unpaintable === null ? CHECK_PAINTED : [];
  if (unpaintable !== null && opts.psfUm !== undefined) throw new UserError(`option --psf-um blurs the painted potentials, but ${unpaintable}`);
  validatePsf(opts.psfUm, L.length, true, checkPath);
  const outDir = opts.out ?? dir;
  checkOutputDir(outDir, { force: opts.force, produces: exportProduces(opts.csv, [...EXPORT_FIGURE_IDS, ...paintedDrives.map((d) => PAINTED_FIGURE_IDS[d])], paintedDrives) });

  // the sequence in natural units (physics.md §3), as the check's comparison built it
  const grid = makeGrid(units.lengthToNatural(report.grid.length), n);
  const frames = Array.from({ length: nF }, (_, k) => Float64Array.from(input.data.subarray(k * n, (k + 1) * n), (e) => units.energyToNatural(e)));
  const lambda = v.frames.map((f) => f.lambda);
  const intervals = report.intervals.map((it) => ({ drift: units.lengthToNatural(it.drift), pass: it.pass }));
  const rates = frameRates(grid, lambda, report.frames.map((f) => f.tau), frames, intervals);
  const sequence = new SequenceInterpolant(lambda, frames, rates.rates);
  const schedule: CorrectionSchedule = { label: 'variational', lambda, a: v.frames.map((f) => f.a_hat), coefficients: v.frames.map((f) => f.coefficients) };
  const lambda0 = lambda[0];
  const span = lambda[nF - 1] - lambda0;
  const T = units.timeToNatural(duration);
  const rampLab = makeRamp(rampKind, duration, span);
  const H = correctionDrive(grid, sequence, schedule, makeRamp(rampKind, T, span), lambda0);

  const m = sampling.times.length;
  const series = { lambda: new Float64Array(m), rate: new Float64Array(m), accel: new Float64Array(m), potential: new Float64Array(m * n), velocity: new Float64Array(m * n), cubic: new Float64Array(m) };
  const terms = emptyTerms();
  for (let i = 0; i < m; i++) {
    const t = sampling.times[i];
    series.lambda[i] = lambda0 + rampLab.value(t);
    series.rate[i] = rampLab.rate(t);
    series.accel[i] = rampLab.accel(t);
    H.terms(units.timeToNatural(t), terms); // past T the ramp holds λ_end with λ̇ = 0: no correction there
    series.potential.set(terms.v as Float64Array, i * n);
    series.cubic[i] = terms.c3;
    // H ∋ b{w, k} = ½{2b·w, k}: the velocity field of ½{w, p} is 2b·w
    if (terms.w) for (let j = 0; j < n; j++) series.velocity[i * n + j] = 2 * terms.b * terms.w[j];
  }
  // the painted drives: their fields, their simulation (sharp) and their potentials on the samples
  const painted = paintedDrives.length > 0 ? paintedForms(grid, units, sequence, { lambda, frames, rates: rates.rates, states: v.states, legendre: v.frames[0].coefficients.length - 2, temperature: v.temperature, rampKind, duration, times: sampling.times, psfUm: opts.psfUm, onProgress: opts.onProgress }) : null;
  const bound = (report.spectrum.energies[0] ?? []).map((e) => units.energyToNatural(e)).filter((e) => e < 0);
  const x = Array.from({ length: n }, (_, j) => report.grid.x0 + j * report.grid.dx);
  const result = toLabUnits(series, { units, grid, sampling, seq: { x, kappas: bound.map((e) => Math.sqrt(-e)) }, form: CORRECTION_FORM, noBound: '1/ℓ: the first frame has no level below zero energy' });
  const file: ExportFile = {
    format: EXPORT_FORMAT,
    source: dir,
    source_kind: 'check',
    units: { length: L.length, energy: L.energy, time: L.time, velocity: L.velocity },
    protocol: { ramp: rampKind, duration, lambda_end: lambda0 + span, lambda_start: lambda0 },
    sampling: { samples: m, rate: sampling.rate, step: sampling.step, rule: sampling.rule },
    arrays: { ...arraysIndex(m, n, L, `grid positions x_j = x₀ + j·dx of the check's periodic grid (x₀ = ${report.grid.x0} ${L.length})`), ...paintedIndex(paintedDrives, m, n, L) },
    tables: opts.csv ? csvIndex(L) : [],
    correction: result.correction,
    accuracy: {
      flow_tolerance: report.fit.flow_tolerance,
      frames_agreement: 0,
      statement:
        'V(x, t_i) is the cubic Hermite interpolant in λ through the input frames and their rates ∂_λV (from the flow fit where an interval passes, ' +
        "else a Fornberg λ-derivative; check/rates.ts): the sequence the check's comparison simulated, equal to input.npy at the frames by construction (frames_agreement 0); " +
        `between frames it is as good as the frames resolve the sequence; ${painted ? `the painted drives are simulated on the lowest ${v.states} states with infidelity budget ${CHECK_PAINTED_TOL}` : 'no painted drive'}`,
    },
    painted: painted?.section ?? null,
    seconds: 0,
    warnings: [...(painted?.warnings ?? []), ...(unpaintable ? [unpaintable] : [])],
  };
  file.seconds = (performance.now() - started) / 1000;
  const csv = opts.csv ? csvTables(result.arrays, x, L) : [];
  return {
    file, arrays: result.arrays, painted: painted?.arrays ?? {}, csv, figures: exportFigures(file, result.arrays, painted?.arrays), dir: outDir, configHash: entries[0].config_hash,
    sources: { dir, names: [...CHECK_SOURCES], sha256: entries.map((e) => e.sha256) },
  };
}

/** what the painted forms of a check need (natural units unless stated) */
interface PaintedFormsInput {
  lambda: number[];
  frames: Float64Array[];
  rates: Float64Array[];
  states: number;
  legendre: number;
  /** in the check's temperature unit, or null */
  temperature: number | null;
  rampKind: RampKind;
  /** in the check's time unit */
  duration: number;
  times: Float64Array;
  psfUm?: number;
  onProgress?: (fraction: number, stage: string) => void;
}

/**
 * Both painted forms of a check's sequence (module comment): the variational a = 0 field fitted as the check fitted
 * its correction (same states, temperature and Legendre terms) and the ground state's exact field, simulated on the
 * check's states, then sampled (jobs/export.ts paintedPotentials) with their fidelities and excess energies.
 */
function paintedForms(grid: Grid, units: UnitSystem, sequence: SequenceInterpolant, p: PaintedFormsInput): ReturnType<typeof paintedPotentials> {
  const lambda0 = p.lambda[0];
  const span = p.lambda[p.lambda.length - 1] - lambda0;
  const potential = (l: number, out: Float64Array): Float64Array => sequence.at(lambda0 + Math.min(Math.max(l, 0), span), out);
  const temperature = p.temperature !== null ? units.temperatureToNatural(p.temperature) : undefined;
  p.onProgress?.(0, 'painted fields');
  const variational = paintedVariationalField(grid, p.lambda, p.frames, { states: p.states, temperature, legendre: p.legendre }, p.rates);
  const fields = new Map<PaintedDriveKind, VelocityField>([
    ['painted', { grid, at: (l, g, gl) => variational.at(lambda0 + l, g, gl) }],
    ['painted_ground', groundStateField(grid, potential, 0, span)],
  ]);
  p.onProgress?.(0.3, 'painted drives');
  const sharp = verifySequence({
    grid, potential, lambdaEnd: span, ramp: p.rampKind, duration: units.timeToNatural(p.duration), drift: 0, states: p.states, tol: CHECK_PAINTED_TOL,
    drives: [...CHECK_PAINTED], paintedField: fields.get('painted'), gaugeCheck: false, traceSamples: 0, strengthSamples: 0,
  });
  const painted = paintedPotentials({
    grid, units, potential, drives: CHECK_PAINTED, fieldOf: (d) => fields.get(d) as VelocityField, start: p.frames[0], rampKind: p.rampKind, duration: p.duration, lambdaEnd: span, drift: 0,
    times: p.times, states: p.states, tol: CHECK_PAINTED_TOL, unblurred: Object.fromEntries(sharp.drives.map((d) => [d.drive, d.fidelity])), psfUm: p.psfUm,
    meaning: 'V(x, t_i) + V_loc(x, t_i): the pure potential that replaces the correction (physics.md §7), one array per painted form of the check\'s sequence (simulated here); with --psf-um the blurred potential the optics would make',
    onProgress: (f, stage) => p.onProgress?.(0.6 + 0.4 * f, stage),
  });
  for (const d of painted.section.drives) {
    const run = sharp.drives.find((r) => r.drive === d.drive);
    if (run) Object.assign(d, { fidelity: run.fidelity, excess: run.excessEnergy.map((e) => units.energyFromNatural(e)) });
  }
  return painted;
}
