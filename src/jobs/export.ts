/**
 * `export`: the protocol of a finished design/verify folder in lab time, at the hardware's update rate. The flow is
 * integrated again from the folder's first frame with dense output (flow/kdv.ts, flow/dense.ts), so the potential
 * between the stored frames is the design to the flow's tolerance, not an interpolation between coarse frames; the
 * ramp gives λ, λ̇, λ̈ (protocol/ramp.ts) and the correction's pieces come from quantum/drive-pieces.ts.
 * Reads only manifest-recorded files of one configuration (io/run-folder.ts) through the readers of io/formats.
 */
import { randomBytes } from 'node:crypto';
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { UserError } from '../core/errors.ts';
import { assertExportAffordable, denseOutputBudget } from '../io/cost.ts';
import { writeCsv } from '../io/csv.ts';
import { checkOutputDir } from '../io/files.ts';
import { readNpyFile } from '../io/formats/read.ts';
import { readSequenceFile } from '../io/formats/sequence.ts';
import { readVerifyFile } from '../io/formats/verify.ts';
import { EXPORT_FORMAT, PAINTED_WHAT, recordedSettings, type ExportArray, type ExportFile } from '../io/formats/export.ts';
import { unitSystemOf } from '../io/config.ts';
import { encodeNpy } from '../io/npy.ts';
import { requireOneConfig, verifiedEntries, writeRun } from '../io/run-folder.ts';
import { integrateFlow, naturalFlowEquation, type FlowEquation, type FlowRun } from '../flow/kdv.ts';
import { makeRamp, type Ramp, type RampKind } from '../protocol/ramp.ts';
import { GaussianBlur } from '../spectral/blur.ts';
import { groundStateField, paintedDrive, type VelocityField } from '../quantum/painted.ts';
import { driveCondensate } from '../quantum/condensate.ts';
import { emptyTerms } from '../quantum/hamiltonian.ts';
import { verifySequence } from '../quantum/verify.ts';
import { variationalFieldOf } from './verify.ts';
import { drivePieces } from '../quantum/drive-pieces.ts';
import { makeGrid, type Grid } from '../spectral/grid.ts';
import type { UnitSystem } from '../units/scales.ts';
import { toJson } from './design.ts';
import { sequenceFrameSpeed } from './context.ts';
import type { ReportFigure } from '../report/index.ts';
import { EXPORT_FIGURE_IDS, exportFigures, PAINTED_FIGURE_IDS } from '../report/panels/export.ts';
export { EXPORT_FIGURE_IDS, PAINTED_FIGURE_IDS };

export const EXPORT_JSON = 'export.json';
/** the .npy files by array key (export.json names each with its axes and unit) */
export const EXPORT_NPY = {
  x: 'export-x.npy',
  t: 'export-t.npy',
  lambda: 'export-lambda.npy',
  lambda_rate: 'export-lambda-rate.npy',
  lambda_accel: 'export-lambda-accel.npy',
  potential: 'export-potential.npy',
  cubic: 'export-cubic.npy',
  velocity: 'export-velocity.npy',
} as const;
export const EXPORT_CSV = ['export-potential.csv', 'export-ramp.csv'] as const;
/** the painted potentials' .npy files by drive (written when verify.json holds painted drives) */
export const PAINTED_NPY = { painted: 'export-painted.npy', painted_ground: 'export-painted-ground.npy', painted_condensate: 'export-painted-condensate.npy' } as const;
/** blurring that changes a painted frame by more than this fraction of its range means features narrower than the
 *  optics resolve (common practice: 1 % of the painted range) */
export const PSF_CHANGE_WARN = 0.01;
/** the largest rate or sample count accepted before the memory estimate (a guard against typos such as 1e12) */
export const MAX_SAMPLES = 10_000_000;

export interface ExportOptions {
  /** hardware update rate, samples per time unit (kHz in lab units: per ms) */
  rate?: number;
  /** number of samples on [0, T] (both ends included) */
  samples?: number;
  csv: boolean;
  /** 1/e² radius (µm) of a Gaussian point-spread function blurring every painted frame (--psf-um) */
  psfUm?: number;
  onProgress?: (fraction: number, stage: string) => void;
  /** output folder (default: the design folder itself) */
  out?: string;
  force: boolean;
}

/** --psf-um: a number > 0, a source in lab units (µm) with painted drives (`source` names the file without them) */
export function validatePsf(psfUm: number | undefined, lengthUnit: string, painted: boolean, source: string): void {
  if (psfUm === undefined) return;
  if (!(Number.isFinite(psfUm) && psfUm > 0)) throw new UserError(`option --psf-um = ${psfUm} is not allowed: must be a number > 0 (1/e² radius of the optics' point-spread function, µm)`);
  if (lengthUnit !== 'µm') throw new UserError(`option --psf-um needs a source in lab units (lengths in µm); this one is in ${lengthUnit}`);
  if (!painted) throw new UserError(`option --psf-um blurs the painted potentials, but ${source} has none: add verify.painted (e.g. [ground]) to the config and run isotrap run again`);
}

/** the sample times t_i in the config's time unit, and how they were chosen */
export interface Sampling {
  times: Float64Array;
  rate: number;
  step: number;
  rule: string;
  /** what set the count, for messages ("--rate 500") */
  option: string;
}

/**
 * t_i = i/rate for i = 0 … ⌈T·rate⌉ (the hardware's clock; samples past T hold the end of the ramp), or
 * t_i = i·T/(n − 1) for --samples n. UserError naming the option for a value that is not allowed.
 */
export function sampleTimes(duration: number, opts: Pick<ExportOptions, 'rate' | 'samples'>, timeUnit: string): Sampling {
  if (opts.rate !== undefined && opts.samples !== undefined) throw new UserError('options --rate and --samples are not allowed together: give one');
  if (opts.samples !== undefined) {
    const n = opts.samples;
    if (!(Number.isInteger(n) && n >= 2 && n <= MAX_SAMPLES)) throw new UserError(`option --samples = ${n} is not allowed: must be a whole number from 2 to ${MAX_SAMPLES}`);
    const step = duration / (n - 1);
    const times = Float64Array.from({ length: n }, (_, i) => (i === n - 1 ? duration : i * step));
    return { times, rate: 1 / step, step, rule: `t_i = i·T/(n − 1), i = 0 … ${n - 1} (--samples ${n}): both ends of the ramp included`, option: `--samples ${n}` };
  }
  const rate = opts.rate;
  if (rate === undefined) throw new UserError('give the hardware update rate with --rate <per time unit> (kHz in lab units) or the sample count with --samples <n>');
  const count = Math.ceil(duration * rate - 1e-9) + 1;
  if (!(Number.isFinite(rate) && rate > 0) || !(count <= MAX_SAMPLES)) {
    throw new UserError(`option --rate = ${rate} is not allowed: must be a number > 0 giving at most ${MAX_SAMPLES} samples over the ramp of ${duration} ${timeUnit} (updates per ${timeUnit}${timeUnit === 'ms' ? ', i.e. kHz' : ''})`);
  }
  const n = Math.max(2, count);
  const times = Float64Array.from({ length: n }, (_, i) => i / rate);
  return { times, rate, step: 1 / rate, rule: `t_i = i/rate, i = 0 … ${n - 1} (--rate ${rate}): the hardware clock from t = 0; a sample past T holds the end of the ramp (λ = λ_end, λ̇ = λ̈ = 0)`, option: `--rate ${rate}` };
}

/** what the natural-units computation needs */
export interface LabSeriesInput {
  grid: Grid;
  eq: FlowEquation;
  /** the first frame u(ξ, 0) */
  u0: Float64Array;
  /** flow.tolerance of the design */
  tolerance: number;
  /** λ of the stored frames (the flow lands on each, as the design did) */
  frameLambdas: readonly number[];
  /** the ramp in the config's time unit, and t₀ in that unit (τ′ = dλ/ds = λ̇·t₀) */
  ramp: Ramp;
  t0: number;
  times: Float64Array;
}

/** natural-units series on the sample times: potential u, A's field τ′g (ℓ/t₀) and the p³ coefficient τ′a */
export interface LabSeries {
  lambda: Float64Array;
  /** dλ/dt, d²λ/dt² in the config's time unit */
  rate: Float64Array;
  accel: Float64Array;
  /** [samples × points], E₀ */
  potential: Float64Array;
  /** [samples × points], the velocity field w = τ′(s) g(ξ) in ℓ/t₀ */
  velocity: Float64Array;
  /** [samples], τ′(s)·a: the k³ coefficient of the drive term in E₀ (k in 1/ℓ) */
  cubic: Float64Array;
  /** the re-integrated frames at the stored λ, for the agreement check, and the flow's dense output */
  frames: Float64Array[];
  lambdas: number[];
  dense: FlowRun['dense'];
}

/**
 * Sample the design on the lab-time grid: λ(t_i), λ̇(t_i), λ̈(t_i) from the ramp; u(ξ, λ(t_i)) from the flow's dense
 * output; the drive's pieces τ′(s)·(a k³ + ½{g, k}) with τ′ = dλ/ds = λ̇·t₀ (physics.md §3).
 */
export function labSeries(input: LabSeriesInput): LabSeries {
  const { grid, ramp, times } = input;
  const frameSpeed = sequenceFrameSpeed(grid, input.eq, input.u0);
  const run = integrateFlow(grid, input.eq, input.u0, { tolerance: input.tolerance, frames: input.frameLambdas, keepDense: true, maxDenseBytes: denseOutputBudget(), frameSpeed });
  if (run.breaking) throw new UserError(`the flow stops at λ = ${run.breaking.lambdaReached} before λ_end = ${ramp.lambdaEnd} (${run.breaking.reason}): only a complete design can be exported`);
  const n = grid.n;
  const m = times.length;
  const out: LabSeries = {
    lambda: new Float64Array(m), rate: new Float64Array(m), accel: new Float64Array(m),
    potential: new Float64Array(m * n), velocity: new Float64Array(m * n), cubic: new Float64Array(m), frames: run.frames, lambdas: run.lambdas, dense: run.dense,
  };
  const u = new Float64Array(n);
  const field = new Float64Array(n);
  const end = run.dense.end;
  for (let i = 0; i < m; i++) {
    const t = times[i];
    const lambda = Math.min(Math.max(ramp.value(t), 0), end);
    out.lambda[i] = ramp.value(t);
    out.rate[i] = ramp.rate(t);
    out.accel[i] = ramp.accel(t);
    run.dense.at(lambda, u);
    out.potential.set(u, i * n);
    const tauPrime = out.rate[i] * input.t0;
    const pieces = drivePieces(u, input.eq.drift, field);
    out.cubic[i] = tauPrime * pieces.cubic;
    for (let j = 0; j < n; j++) out.velocity[i * n + j] = tauPrime * field[j];
  }
  return out;
}

/** the design/verify files the export reads */
const SOURCES = ['sequence.json', 'potential.npy', 'verify.json'] as const;

/** refuse a folder without the design or the verification, naming what is missing */
function requireSources(dir: string): void {
  if (!existsSync(dir)) throw new UserError(`folder ${dir} does not exist: give a finished isotrap run/verify output folder`);
  const missing = SOURCES.filter((f) => !existsSync(join(dir, f)));
  if (missing.length === 0) return;
  const what = missing.length === 1 && missing[0] === 'verify.json'
    ? 'verify.json: the design was not verified; give the config a protocol section (duration and ramp) and run isotrap verify (or run) on it, so the exported correction is proven'
    : `${missing.join(', ')}: it is not a finished design/verify folder; run isotrap run on the config first`;
  throw new UserError(`${dir} is missing ${what}`);
}

export interface ExportResult {
  file: ExportFile;
  arrays: Record<keyof typeof EXPORT_NPY, { data: Float64Array; shape: number[] }>;
  /** the painted potentials [samples × points] in the energy unit, by drive */
  painted: Partial<Record<keyof typeof PAINTED_NPY, { data: Float64Array; shape: number[] }>>;
  csv: { name: string; text: string }[];
  figures: ReportFigure[];
  /** where the outputs go and the config hash of the sources */
  dir: string;
  configHash: string;
  /** the source folder, the source files and the SHA-256 of each as read */
  sources: { dir: string; names: string[]; sha256: string[] };
}

/** the file names an export writes */
export function exportProduces(csv: boolean, figures: readonly string[], painted: readonly (keyof typeof PAINTED_NPY)[] = []): string[] {
  return [...Object.values(EXPORT_NPY), ...painted.map((d) => PAINTED_NPY[d]), ...(csv ? EXPORT_CSV : []), ...figures.map((f) => `${f}.svg`), EXPORT_JSON];
}


/** largest |x| of a series and its index */
function peak(xs: ArrayLike<number>): { value: number; index: number } {
  let best = { value: 0, index: 0 };
  for (let i = 0; i < xs.length; i++) if (Math.abs(xs[i]) > best.value) best = { value: Math.abs(xs[i]), index: i };
  return best;
}

/**
 * Compute the export of folder `dir` (nothing written): validation and refusals first (sources, options, memory,
 * existing outputs), then the flow and the samples, converted to the config's units.
 */
export function runExport(dir: string, opts: ExportOptions): ExportResult {
  const started = performance.now();
  requireSources(dir);
  const entries = requireOneConfig(dir, [...SOURCES]);
  const seqPath = join(dir, 'sequence.json');
  const seq = readSequenceFile(seqPath);
  const verify = readVerifyFile(join(dir, 'verify.json'));
  const stored = readNpyFile(join(dir, 'potential.npy'));
  const settings = recordedSettings(seq.config, seqPath);
  if (!seq.summary.complete) throw new UserError(`${seqPath}: the design stops at λ = ${seq.summary.lambda_reached} before λ_end = ${seq.summary.lambda_end}: only a complete design can be exported`);
  const units = unitSystemOf(settings.units);
  const L = units.labels;
  const { duration, ramp: rampKind } = settings.protocol;
  const lambdaEnd = settings.flow.lambda_end;
  if (verify.protocol.duration !== duration || verify.protocol.ramp !== rampKind || verify.protocol.lambda_end !== lambdaEnd) {
    throw new UserError(`${join(dir, 'verify.json')}: protocol ${verify.protocol.ramp} over ${verify.protocol.duration} ${L.time} to λ = ${verify.protocol.lambda_end} differs from the design's (${rampKind} over ${duration} ${L.time} to λ = ${lambdaEnd}): run isotrap run again`);
  }
  const sampling = sampleTimes(duration, opts, L.time);
  const [nF, n] = stored.shape;
  if (stored.shape.length !== 2 || nF !== seq.lambda.length || n !== seq.x.length) throw new UserError(`${join(dir, 'potential.npy')}: shape [${stored.shape.join(', ')}] does not match sequence.json (${seq.lambda.length} frames × ${seq.x.length} points)`);
  assertExportAffordable(sampling.times.length, n, opts.csv, sampling.option);
  // the condensate's painted protocol (verify.interaction) is the potential a lab with a condensate would program
  const condensate = verify.interaction?.drives.find((d) => d.drive === 'painted_condensate') ? verify.interaction : null;
  const paintedDrives: PaintedDriveKind[] = [...(verify.painted?.drives ?? []).map((d) => d.drive), ...(condensate ? ['painted_condensate' as const] : [])];
  validatePsf(opts.psfUm, L.length, paintedDrives.length > 0, join(dir, 'verify.json'));
  const outDir = opts.out ?? dir;
  checkOutputDir(outDir, { force: opts.force, produces: exportProduces(opts.csv, [...EXPORT_FIGURE_IDS, ...paintedDrives.map((d) => PAINTED_FIGURE_IDS[d])], paintedDrives) });

  const grid = makeGrid(units.lengthToNatural(settings.grid.length), n);
  const u0 = Float64Array.from(stored.data.subarray(0, n), (v) => units.energyToNatural(v));
  const ramp = makeRamp(rampKind, duration, lambdaEnd);
  const eq = naturalFlowEquation(settings.flow.dispersion, units.lengthToNatural(settings.flow.drift));
  const series = labSeries({ grid, eq, u0, tolerance: settings.flow.tolerance, frameLambdas: seq.lambda, ramp, t0: units.timeFromNatural(1), times: sampling.times });
  const agreement = framesAgreement(series.frames, stored.data, n, units);
  let paintedOut: ReturnType<typeof paintedPotentials> | null = null;
  if (paintedDrives.length > 0) {
    const potential = (l: number, out: Float64Array): Float64Array => series.dense.at(Math.min(Math.max(l, 0), lambdaEnd), out);
    const occupied = verify.fermions?.count ?? Math.max(1, verify.bound_states);
    const temperature = verify.thermal ? units.temperatureToNatural(verify.thermal.temperature) : undefined;
    const verifyConfig = (seq.config.verify ?? {}) as { tolerance?: number };
    paintedOut = paintedPotentials({
      grid, units, potential, drives: paintedDrives, start: series.potential.subarray(0, n), rampKind, duration, lambdaEnd, drift: eq.drift, times: sampling.times,
      fieldOf: (drive) => drive === 'painted_ground' ? groundStateField(grid, potential, 0, lambdaEnd)
        : drive === 'painted_condensate' ? groundStateField(grid, potential, 0, lambdaEnd, { coupling: condensate?.coupling_natural })
          : variationalFieldOf(grid, { lambdas: series.lambdas, frames: series.frames, dense: series.dense }, occupied, temperature),
      states: verify.states.length, tol: verifyConfig.tolerance ?? 1e-8,
      unblurred: {
        ...Object.fromEntries((verify.painted?.drives ?? []).map((d) => [d.drive, d.fidelity])),
        ...(condensate ? { painted_condensate: [condensate.drives.find((d) => d.drive === 'painted_condensate')?.fidelity ?? NaN] } : {}),
      },
      coupling: condensate?.coupling_natural,
      psfUm: opts.psfUm, onProgress: opts.onProgress,
    });
  }
  const result = toLabUnits(series, { units, grid, sampling, seq: { x: seq.x, kappas: seq.solitons.predicted.map((p) => p.kappa) }, form: CORRECTION_FORM });
  const file: ExportFile = {
    format: EXPORT_FORMAT,
    source: dir,
    units: { length: L.length, energy: L.energy, time: L.time, velocity: L.velocity },
    protocol: { ramp: rampKind, duration, lambda_end: lambdaEnd },
    sampling: { samples: sampling.times.length, rate: sampling.rate, step: sampling.step, rule: sampling.rule },
    arrays: arraysIndex(sampling.times.length, n, L),
    tables: opts.csv ? csvIndex(L) : [],
    correction: result.correction,
    accuracy: {
      flow_tolerance: settings.flow.tolerance,
      frames_agreement: agreement,
      statement:
        `V(x, t_i) is the KdV flow integrated again from the first stored frame with the design's flow.tolerance = ${settings.flow.tolerance} ` +
        '(local error per step relative to max|V(0)|, embedded ETD5(3) pair) and read at λ(t_i) from its dense output (cubic Hermite in λ between accepted steps); ' +
        `at the stored frames it differs from potential.npy by ${agreement.toExponential(2)} of max|V(0)|`,
    },
    painted: paintedOut?.section ?? null,
    seconds: 0,
    warnings: paintedOut?.warnings ?? [],
  };
  if (paintedOut) Object.assign(file.arrays, paintedIndex(paintedDrives, sampling.times.length, n, L));
  file.seconds = (performance.now() - started) / 1000;
  const csv = opts.csv ? csvTables(result.arrays, seq.x, L) : [];
  return { file, arrays: result.arrays, painted: paintedOut?.arrays ?? {}, csv, figures: exportFigures(file, result.arrays, paintedOut?.arrays), dir: outDir, configHash: entries[0].config_hash, sources: { dir, names: [...SOURCES], sha256: entries.map((e) => e.sha256) } };
}

/** max over the stored frames of |re-integrated − stored|, relative to max|V(0)| */
function framesAgreement(frames: Float64Array[], stored: Float64Array, n: number, units: UnitSystem): number {
  let scale = 0;
  for (let j = 0; j < n; j++) scale = Math.max(scale, Math.abs(stored[j]));
  let worst = 0;
  frames.forEach((f, i) => {
    for (let j = 0; j < n; j++) worst = Math.max(worst, Math.abs(units.energyFromNatural(f[j]) - stored[i * n + j]));
  });
  return worst / (scale || 1);
}

const CORRECTION_FORM =
  'H_lab(t) = p²/2m + V(x, t) + λ̇(t)·A, A = a p³ + ½{g, p}: the drive term is C₃(t)·q³ + ½{w(x, t), p} with q = p/ħ the wavenumber, ' +
  'C₃ = λ̇·a·ħ³ (the cubic array, energy × length³) and w = λ̇·g (the velocity array); a = −4ℓ³/ħ² and g = ℓ·(c − 6V/E₀) in the natural units of physics.md §3';

/** the natural-units series in the config's units, with the size summary of the correction (`form`: what A is) */
export function toLabUnits(s: Pick<LabSeries, 'lambda' | 'rate' | 'accel' | 'potential' | 'velocity' | 'cubic'>, ctx: { units: UnitSystem; grid: Grid; sampling: Sampling; seq: { x: number[]; kappas: number[] }; form: string; noBound?: string }): { arrays: ExportResult['arrays']; correction: ExportFile['correction'] } {
  const { units, grid, sampling } = ctx;
  const n = grid.n;
  const m = sampling.times.length;
  const ell = units.lengthFromNatural(1);
  const potential = s.potential.map((v) => units.energyFromNatural(v));
  const velocity = s.velocity.map((v) => units.velocityFromNatural(v));
  const cubic = s.cubic.map((c) => units.energyFromNatural(c) * ell ** 3);
  for (const a of [potential, velocity, cubic, s.lambda, s.rate, s.accel]) for (const v of a) if (!Number.isFinite(v)) throw new Error('internal error: a non-finite exported value');
  // the size of each term at the reference wavenumber: the deepest predicted bound state's κ, else 1/ℓ
  const kRefNatural = ctx.seq.kappas.length > 0 ? Math.max(...ctx.seq.kappas) : 1;
  const maxW = new Float64Array(m);
  for (let i = 0; i < m; i++) maxW[i] = peak(s.velocity.subarray(i * n, (i + 1) * n)).value;
  const pc = peak(s.cubic);
  const pw = peak(maxW);
  const L = units.labels;
  const correction: ExportFile['correction'] = {
    form: ctx.form,
    cubic_unit: `${L.energy}·${L.length}³`,
    velocity_unit: L.velocity,
    k_ref: units.lengthToNatural(kRefNatural),
    max_cubic_energy: units.energyFromNatural(pc.value * kRefNatural ** 3),
    max_velocity: units.velocityFromNatural(pw.value),
    max_linear_energy: units.energyFromNatural(pw.value * kRefNatural),
    at_time_cubic: sampling.times[pc.index],
    at_time_linear: sampling.times[pw.index],
    explanation:
      `sizes of the two terms at the reference wavenumber k_ref (${ctx.seq.kappas.length > 0 ? 'κ of the deepest bound state of the start, the momentum scale of the trapped states' : (ctx.noBound ?? '1/ℓ: the start has no bound state')}): ` +
      `|C₃|·k_ref³ for the p³ term and ħ·k_ref·max_x|w| for the momentum-linear term, in ${L.energy}; the p³ coefficient is given as C₃ = λ̇aħ³ in ${L.energy}·${L.length}³ so that C₃q³ is an energy for q in 1/${L.length}, ` +
      `and the momentum-linear term by its velocity field w in ${L.velocity}, the form a moving frame or a painted potential needs (physics.md §7)`,
  };
  return {
    arrays: {
      x: { data: Float64Array.from(ctx.seq.x), shape: [n] },
      t: { data: sampling.times, shape: [m] },
      lambda: { data: s.lambda, shape: [m] },
      lambda_rate: { data: s.rate, shape: [m] },
      lambda_accel: { data: s.accel, shape: [m] },
      potential: { data: potential, shape: [m, n] },
      cubic: { data: cubic, shape: [m] },
      velocity: { data: velocity, shape: [m, n] },
    },
    correction,
  };
}

/** the sidecar's entry of every array */
export function arraysIndex(m: number, n: number, L: UnitSystem['labels'], xMeaning = 'grid positions x_j = −L/2 + jL/N of the periodic box'): Record<string, ExportArray> {
  const t = `time sample t_i (${m})`;
  const x = `position x_j (${n})`;
  const a = (key: keyof typeof EXPORT_NPY, shape: number[], axes: string[], unit: string, meaning: string): [string, ExportArray] => [key, { file: EXPORT_NPY[key], shape, axes, unit, meaning }];
  return Object.fromEntries([
    a('x', [n], [x], L.length, xMeaning),
    a('t', [m], [t], L.time, 'lab time of each sample, from the start of the ramp'),
    a('lambda', [m], [t], 'dimensionless', 'λ(t_i), the flow parameter (KdV time) the ramp has reached'),
    a('lambda_rate', [m], [t], `1/${L.time}`, 'λ̇(t_i) = dλ/dt'),
    a('lambda_accel', [m], [t], `1/${L.time}²`, 'λ̈(t_i) = d²λ/dt²'),
    a('potential', [m, n], [t, x], L.energy, 'V(x_j, t_i) = V(x_j, λ(t_i)): the trap to program at each update'),
    a('cubic', [m], [t], `${L.energy}·${L.length}³`, 'C₃(t_i) = λ̇·a·ħ³: the drive term C₃·q³ (q = p/ħ, 1/length) of the exact correction'),
    a('velocity', [m, n], [t, x], L.velocity, 'w(x_j, t_i) = λ̇·g: the velocity field of the momentum-linear drive term ½{w, p}'),
  ]);
}

export function csvIndex(L: UnitSystem['labels']): ExportFile['tables'] {
  return [
    { file: EXPORT_CSV[0], columns: [`x (${L.length})`, `one column per sample, headed t=<t_i> (${L.time})`], meaning: `V(x, t_i) in ${L.energy} (the potential array as a table)` },
    { file: EXPORT_CSV[1], columns: [`t (${L.time})`, 'lambda', `lambda_rate (1/${L.time})`, `lambda_accel (1/${L.time}²)`, `cubic (${L.energy}·${L.length}³)`], meaning: 'the ramp and the p³ coefficient per sample' },
  ];
}

export function csvTables(a: ExportResult['arrays'], x: number[], L: UnitSystem['labels']): { name: string; text: string }[] {
  const m = a.t.data.length;
  const n = x.length;
  const cols = Array.from({ length: m }, (_, i) => a.potential.data.subarray(i * n, (i + 1) * n));
  const header = [`x (${L.length})`, ...Array.from(a.t.data, (t) => `t=${t}`)];
  return [
    { name: EXPORT_CSV[0], text: `# potential V(x, t) in ${L.energy}; t in ${L.time}\n` + writeCsv(header, [x, ...cols]) },
    { name: EXPORT_CSV[1], text: writeCsv(csvIndex(L)[1].columns, [a.t.data, a.lambda.data, a.lambda_rate.data, a.lambda_accel.data, a.cubic.data]) },
  ];
}

/** write the export as one run into its folder (locked, staged, manifest; io/run-folder.ts) */
export function writeExportOutputs(r: ExportResult, force: boolean): string[] {
  const produces = exportProduces(r.csv.length > 0, r.figures.map((f) => f.id), Object.keys(r.painted) as (keyof typeof PAINTED_NPY)[]);
  const identity = { run: `${new Date().toISOString()}-${randomBytes(4).toString('hex')}`, configHash: r.configHash };
  return writeRun(r.dir, { force, produces, job: 'export', identity }, (out) => {
    // under the lock: the sources must still be the files that were read (no run committed in between)
    const now = verifiedEntries(r.sources.dir, r.sources.names);
    const changed = r.sources.names.filter((_, i) => now[i].sha256 !== r.sources.sha256[i]);
    if (changed.length > 0) throw new UserError(`${changed.map((n) => join(r.sources.dir, n)).join(', ')} changed while the export was computed (another run committed): run isotrap export again`);
    for (const [key, name] of Object.entries(EXPORT_NPY)) {
      const a = r.arrays[key as keyof typeof EXPORT_NPY];
      out.write(name, encodeNpy(a.data, a.shape));
    }
    for (const [key, name] of Object.entries(PAINTED_NPY)) {
      const a = r.painted[key as keyof typeof PAINTED_NPY];
      if (a) out.write(name, encodeNpy(a.data, a.shape));
    }
    for (const c of r.csv) out.write(c.name, c.text);
    for (const f of r.figures) out.write(`${f.id}.svg`, f.svg);
    out.write(EXPORT_JSON, toJson(r.file, 1));
  });
}

/** what paintedPotentials needs */
export interface PaintedInput {
  grid: Grid;
  units: UnitSystem;
  /** u(ξ, λ) for λ in [0, lambdaEnd] (natural units) */
  potential: (lambda: number, out: Float64Array) => Float64Array;
  drives: readonly PaintedDriveKind[];
  /** the velocity field of a painted drive (quantum/painted.ts) over the same λ */
  fieldOf: (drive: PaintedDriveKind) => VelocityField;
  /** u at λ = 0 (E₀): the starting trap the painted range is compared with */
  start: Float64Array;
  rampKind: RampKind;
  duration: number;
  lambdaEnd: number;
  drift: number;
  times: Float64Array;
  /** propagated states and infidelity budget of a simulation with the blurred potentials */
  states: number;
  tol: number;
  /** the sharp painted drives' fidelities by drive (what the blur is compared with) */
  unblurred: Partial<Record<PaintedDriveKind, number[]>>;
  /** what the painted arrays are (export.json painted.meaning); default: verify.json's painted drives */
  meaning?: string;
  /** g = g₁D N/(E₀ℓ) of the condensate whose painted protocol is among the drives (verify.interaction) */
  coupling?: number;
  psfUm?: number;
  onProgress?: (fraction: number, stage: string) => void;
}

export type PaintedDriveKind = keyof typeof PAINTED_NPY;

/**
 * The painted potentials V + V_loc of the painted drives on the lab-time samples (quantum/painted.ts), their range
 * against the starting trap, and with --psf-um the blurred potentials, the change the blur makes and the painted
 * drives simulated blurred (quantum/verify.ts) against the sharp fidelities.
 */
export function paintedPotentials(p: PaintedInput): { arrays: ExportResult['painted']; section: NonNullable<ExportFile['painted']>; warnings: string[]; fields: Map<string, VelocityField> } {
  const { grid, units, times, potential, drives } = p;
  const n = grid.n, m = times.length;
  const E = (x: number) => units.energyFromNatural(x);
  const T = units.timeToNatural(p.duration);
  const ramp = makeRamp(p.rampKind, T, p.lambdaEnd);
  const blur = p.psfUm !== undefined ? new GaussianBlur(grid, units.lengthToNatural(p.psfUm)) : null;
  const fields = new Map<string, VelocityField>();
  const warnings: string[] = [];
  const arrays: ExportResult['painted'] = {};
  const entries: NonNullable<ExportFile['painted']>['drives'] = [];
  const blurred = new Float64Array(n), terms = emptyTerms();
  drives.forEach((drive, k) => {
    p.onProgress?.(k / (drives.length + (blur ? 1 : 0)), `painted field ${drive}`);
    const field = p.fieldOf(drive);
    fields.set(drive, field);
    const H = paintedDrive(grid, potential, field, ramp, 0, blur);
    const raw = paintedDrive(grid, potential, field, ramp, 0, null);
    const data = new Float64Array(m * n);
    let lo = Infinity, hi = -Infinity, change = 0, changeAt = 0;
    for (let i = 0; i < m; i++) {
      const s = Math.min(units.timeToNatural(times[i]), T);
      raw.terms(s, terms);
      const v = terms.v as Float64Array;
      let vlo = Infinity, vhi = -Infinity;
      for (let j = 0; j < n; j++) { vlo = Math.min(vlo, v[j]); vhi = Math.max(vhi, v[j]); }
      lo = Math.min(lo, vlo); hi = Math.max(hi, vhi);
      if (blur) {
        blurred.set(v);
        blur.apply(blurred, blurred);
        let d = 0;
        for (let j = 0; j < n; j++) d = Math.max(d, Math.abs(blurred[j] - v[j]));
        if (d / (vhi - vlo || 1) > change) { change = d / (vhi - vlo || 1); changeAt = times[i]; }
        H.terms(s, terms);
      }
      const out = terms.v as Float64Array;
      for (let j = 0; j < n; j++) data[i * n + j] = E(out[j]);
    }
    for (const v of data) if (!Number.isFinite(v)) throw new Error('internal error: a non-finite painted potential');
    arrays[drive] = { data, shape: [m, n] };
    entries.push({ drive, deepest: E(lo), highest: E(hi), psf_change: blur ? change : null, psf_change_at: blur ? changeAt : null });
    if (blur && change > PSF_CHANGE_WARN) {
      warnings.push(`${drive}: the painted potential has features narrower than the optics resolve: a point-spread function of ${p.psfUm} µm changes it by ${(100 * change).toPrecision(3)} % of its range (at t = ${changeAt.toPrecision(4)} ${units.labels.time}); the exported array is the blurred one`);
    }
  });
  let start = { deepest: Infinity, highest: -Infinity };
  for (let j = 0; j < n; j++) start = { deepest: Math.min(start.deepest, E(p.start[j])), highest: Math.max(start.highest, E(p.start[j])) };
  const psf = blur && p.psfUm !== undefined ? blurredFidelities(p, p.psfUm, fields) : null;
  return {
    arrays,
    warnings,
    fields,
    section: {
      meaning: p.meaning ?? 'V(x, t_i) + V_loc(x, t_i): the pure potential that replaces the correction (physics.md §7), one array per painted drive of verify.json (painted_condensate: the condensate’s own painted protocol of verify.interaction); with --psf-um the blurred potential the optics would make',
      drives: entries,
      start,
      psf,
    },
  };
}

/** the painted drives simulated with every painted potential blurred by the PSF (quantum/verify.ts), against
 *  verify.json's sharp fidelities */
function blurredFidelities(p: PaintedInput, psfUm: number, fields: Map<string, VelocityField>): NonNullable<NonNullable<ExportFile['painted']>['psf']> {
  const { grid, units, drives } = p;
  p.onProgress?.(drives.length / (drives.length + 1), 'blurred painted drives');
  const T = units.timeToNatural(p.duration);
  const width = units.lengthToNatural(psfUm);
  const single = drives.filter((d): d is 'painted' | 'painted_ground' => d !== 'painted_condensate');
  const runs: { drive: string; fidelity: number[] }[] = single.length === 0 ? [] : verifySequence({
    grid, potential: p.potential, lambdaEnd: p.lambdaEnd, ramp: p.rampKind, duration: T, drift: p.drift, states: p.states, tol: p.tol,
    drives: single, paintedField: fields.get('painted'), blur: width, gaugeCheck: false, traceSamples: 0, strengthSamples: 0,
  }).drives;
  const field = fields.get('painted_condensate');
  if (field && p.coupling !== undefined) {
    // the condensate's painted protocol blurred as one image, from its nonlinear ground state (quantum/condensate.ts)
    const c = driveCondensate({ grid, potential: p.potential, ramp: makeRamp(p.rampKind, T, p.lambdaEnd), coupling: p.coupling, tol: p.tol, drives: ['painted_condensate'], field, blur: new GaussianBlur(grid, width) });
    runs.push({ drive: 'painted_condensate', fidelity: [c.drives[0].fidelity] });
  }
  return {
    radius: psfUm,
    unit: 'µm',
    rule: 'Gaussian point-spread function of 1/e² intensity radius w, Fourier multiplier exp(−k²w²/8), applied to the whole painted potential V + V_loc at every time (spectral/blur.ts)',
    drives: runs.map((d) => {
      const unblurred = p.unblurred[d.drive as PaintedDriveKind] ?? [];
      return { drive: d.drive, fidelity: d.fidelity, fidelity_unblurred: unblurred, lost: Math.max(0, ...d.fidelity.map((f, i) => (unblurred[i] ?? f) - f)) };
    }),
  };
}

/** the sidecar's entries of the painted arrays */
export function paintedIndex(drives: readonly (keyof typeof PAINTED_NPY)[], m: number, n: number, L: UnitSystem['labels']): Record<string, ExportArray> {
  return Object.fromEntries(drives.map((d) => [d, { file: PAINTED_NPY[d], shape: [m, n], axes: [`time sample t_i (${m})`, `position x_j (${n})`], unit: L.energy, meaning: `V(x_j, t_i) + V_loc(x_j, t_i) of ${PAINTED_WHAT[d]} painted as a potential: the trap to program instead of V and the correction` }]));
}
