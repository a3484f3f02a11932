/**
 * `verify`: drive the designed sequence at the configured speed and prove by Schrödinger simulation that the
 * cubic counterdiabatic correction keeps the eigenstates (physics.md §1–§3, §5), against the bare drive; and
 * optionally drive the classical (Hopf) sequence of the same start with the same correction until it breaks.
 * Converts the natural-units results of quantum/verify.ts into the config's units.
 */
import { UserError } from '../core/errors.ts';
import { verifySchema, type Config } from '../io/config.ts';
import { encodeNpy } from '../io/npy.ts';
import { driveClassicalSequence } from '../classical/corrected.ts';
import type { UnitSystem } from '../units/scales.ts';
import { StateCountError, verifySequenceThreaded, type CdStrength, type DriveKind, type DriveResult, type VerifyResult } from '../quantum/verify.ts';
import type { SummaryRow } from '../report/index.ts';
import { toJson, type DesignResult } from './design.ts';
import type { VerifyFile } from '../io/formats/verify.ts';
import { configIdentity, writeRun } from '../io/run-folder.ts';
import type { PaintedKind } from '../io/config.ts';
import { paintedVariationalField, type PaintedVariationalField } from '../check/painted.ts';
import { assertPaintableRamp, CLIP_FLOOR, RampNotPaintableError, type VelocityField } from '../quantum/painted.ts';
import { makeRamp } from '../protocol/ramp.ts';
import type { Grid } from '../spectral/grid.ts';
import type { FlowRun } from '../flow/kdv.ts';
import { sequencePotential, type SequenceSource } from '../flow/dense.ts';
import { coreCount } from '../core/worker-pool.ts';
import { averageShots, shotNoise, type ShotNoise, type ShotSpread } from '../quantum/shots.ts';
import type { PaintedSection } from '../io/formats/verify.ts';
import { interactionRows, prepareInteraction } from './condensate.ts';
export type { VerifyFile };

export const VERIFY_FILES = ['verify.json', 'traces.npy'] as const;
/** a design verifies when every tracked state keeps fidelity ≥ 1 − this with the correction (common practice:
 * well above the default time-stepping budget 1e-8, well below any physically visible loss) */
export const ACCEPT_INFIDELITY = 1e-6;
/** design frames the variational painted field is fitted at (evenly spread, both ends included): θ(λ) is smooth
 *  and cubic-Hermite interpolated between them, and each costs an eigen-solve of the subspace (common practice) */
export const PAINTED_FIT_FRAMES = 11;
/** the gauge check passes when the painted and the ½{g, p} drive's fidelities differ by at most this factor times
 *  √tolerance: each final state is within √tolerance of the exact one, and a fidelity moves by at most twice a
 *  state's error (common practice) */
export const GAUGE_BUDGET_FACTOR = 2;
const PAINTED_DRIVE: Record<PaintedKind, 'painted' | 'painted_ground'> = { variational: 'painted', ground: 'painted_ground' };
const PAINTED_MEANING: Record<PaintedKind, string> = {
  variational: 'the best momentum-linear correction ½{g, p} on the occupied states (variational fit without p³, check/painted.ts), simulated as the pure potential V + V_loc',
  ground: 'the one-state exact correction of the ground state (continuity field of its adiabatic density), simulated as the pure potential V + V_loc',
};

/** fidelity-trace samples per drive (each costs one eigen-solve) */
export const TRACE_SAMPLES = 10;

export interface VerifyJobOptions {
  onProgress?: (fraction: number, stage: string) => void;
  /** fidelity traces (default TRACE_SAMPLES; 0 for none) */
  traceSamples?: number;
  /** worker threads for the drives (default: every core; quantum/verify.ts verifySequenceThreaded) */
  threads?: number;
}

export interface VerifyJobResult {
  config: Config;
  file: VerifyFile;
  traces: { data: Float64Array; shape: [number, number] };
  natural: VerifyResult;
}

function driveOf(r: VerifyResult, kind: DriveKind): DriveResult {
  const d = r.drives.find((x) => x.drive === kind);
  if (!d) throw new Error(`internal error: drive ${kind} missing`);
  return d;
}

/** the protocol and verify sections in natural units, after the checks verify needs */
interface VerifyInput {
  protocol: NonNullable<Config['protocol']>;
  verify: NonNullable<Config['verify']>;
  duration: number;
  lambdaEnd: number;
  temperature: number | undefined;
}

function verifyInput(config: Config, design: DesignResult): VerifyInput {
  const { units } = design.ctx;
  const src = config.meta.source;
  if (!config.protocol) throw new UserError(`${src}: protocol is missing: verify needs e.g. protocol: { duration: 2.0, ramp: sin2 } (duration in ${units.labels.time})`);
  if (!design.summary.complete) throw new UserError(`${src}: the designed sequence stops at λ = ${design.summary.lambda_reached} before flow.lambda_end = ${config.flow.lambda_end}; verify needs a complete sequence`);
  const v = config.verify ?? verifySchema.parse({});
  return {
    protocol: config.protocol,
    verify: v,
    duration: units.timeToNatural(config.protocol.duration),
    lambdaEnd: config.flow.lambda_end,
    temperature: v.temperature !== undefined && v.temperature > 0 ? units.temperatureToNatural(v.temperature) : undefined,
  };
}

/** a state count the Schrödinger proof cannot use becomes an input error naming the config key */
async function withStateCountKeys<T>(config: Config, run: () => Promise<T>): Promise<T> {
  try {
    return await run();
  } catch (err) {
    if (err instanceof StateCountError) throw new UserError(`${config.meta.source}: verify.${err.option} = ${err.value} is not allowed: ${err.message}`);
    throw err;
  }
}

const CLASSICAL_NOTE =
  'the Hopf (ħ → 0) sequence of the same start, driven with the same cubic correction over the part of the ramp it exists on (a ramp reaching its last λ, same shape); fidelities against the eigenstates of H at that λ';

/** the classical sequence of the same start, same correction, until it breaks (classical/corrected.ts) */
function classicalSection(config: Config, design: DesignResult, input: VerifyInput, states: number): VerifyFile['classical'] {
  const { grid, u0, units } = design.ctx;
  const c = driveClassicalSequence({
    grid,
    u0,
    flowTolerance: config.flow.tolerance,
    lambdaEnd: input.lambdaEnd,
    ramp: input.protocol.ramp,
    duration: input.duration,
    states,
    tol: input.verify.tolerance,
  });
  return { lambda_break: c.lambdaBreak, lambda_reached: c.lambdaReached, time_reached: units.timeFromNatural(c.timeReached), fidelity: c.fidelity, note: CLASSICAL_NOTE };
}


/** fidelity traces as a (drive, state) × time table */
function traceTable(natural: VerifyResult, drives: DriveResult[], timeFromNatural: (s: number) => number): { data: Float64Array; shape: [number, number]; times: number[]; rows: { drive: string; state: number }[] } {
  const rows: { drive: string; state: number }[] = [];
  const times = drives[0].trace ? drives[0].trace.times.map(timeFromNatural) : [];
  const traceRows: number[][] = [];
  for (const d of drives) {
    if (!d.trace) continue;
    for (let i = 0; i < natural.states.length; i++) {
      rows.push({ drive: d.drive, state: i });
      traceRows.push(d.trace.fidelity.map((f) => f[i]));
    }
  }
  const nT = times.length;
  const data = new Float64Array(rows.length * nT);
  traceRows.forEach((r, i) => data.set(r, i * nT));
  return { data, shape: [rows.length, nT], times, rows };
}

function acceptanceText(accepted: boolean, minCd: number): string {
  return accepted
    ? `every tracked state keeps fidelity ≥ 1 − ${ACCEPT_INFIDELITY} with the correction (worst ${minCd.toPrecision(10)})`
    : `a tracked state loses more than ${ACCEPT_INFIDELITY} fidelity with the correction (worst ${minCd.toPrecision(10)}): the sequence is not admissible at this resolution, or the time stepping is too coarse`;
}

const CD_STRENGTH_DEFINITION =
  'leakage: |λ̇|·‖(1 − P) A P‖₂, the coupling the correction λ̇A supplies out of the occupied subspace (P: the lowest `occupied` transported states), ' +
  'at each sample time; leakage_cubic / leakage_potential: the same for the p³ part and the potential-weighted momentum part alone (they partly cancel, so each may exceed the whole); ' +
  'window: the largest single element |λ̇⟨m|A|n⟩| between an occupied state n and a tracked state m ≠ n; max_*: the largest value over the protocol, at_time: where max_leakage occurs';

/** the correction's size (quantum/verify.ts CdStrength) in the config's units */
function correctionSection(st: CdStrength | null, units: UnitSystem): VerifyFile['cd_strength'] {
  const E = (x: number) => units.energyFromNatural(x);
  const c = st ?? { occupied: 0, time: [], leakage: [], leakageCubic: [], leakagePotential: [], window: [] };
  const peak = c.leakage.reduce((best, v, i) => (v > c.leakage[best] ? i : best), 0);
  const max = (xs: number[]) => (xs.length ? E(Math.max(...xs)) : NaN);
  return {
    unit: units.labels.energy,
    occupied: c.occupied,
    definition: CD_STRENGTH_DEFINITION,
    max_leakage: max(c.leakage),
    max_leakage_cubic: max(c.leakageCubic),
    max_leakage_potential: max(c.leakagePotential),
    max_window: max(c.window),
    at_time: c.time.length ? units.timeFromNatural(c.time[peak]) : NaN,
    time: c.time.map((s) => units.timeFromNatural(s)),
    leakage: c.leakage.map(E),
    leakage_cubic: c.leakageCubic.map(E),
    leakage_potential: c.leakagePotential.map(E),
    window: c.window.map(E),
  };
}

/** the thermal and Fermi-sea sections, when both drives have them */
function ensembleSections(cd: DriveResult, bare: DriveResult, temperature: number | undefined, units: UnitSystem): Pick<VerifyFile, 'thermal' | 'fermions'> {
  const E = (x: number) => units.energyFromNatural(x);
  return {
    thermal:
      cd.thermal && bare.thermal
        ? {
            temperature: temperature ?? NaN,
            unit: units.labels.temperature,
            fidelity_cd: cd.thermal.ensembleFidelity,
            fidelity_bare: bare.thermal.ensembleFidelity,
            uhlmann_cd: cd.thermal.uhlmannFidelity ?? NaN,
            uhlmann_bare: bare.thermal.uhlmannFidelity ?? NaN,
            mean_excess_cd: E(cd.thermal.meanExcessEnergy),
            mean_excess_bare: E(bare.thermal.meanExcessEnergy),
            tail_weight: cd.thermal.tailWeight,
            definition: `fidelity: ${cd.thermal.definition}; uhlmann: (tr √(√σρ√σ))² of the evolved ensemble ρ and the final Gibbs state σ on the same levels (Nielsen & Chuang 2000, §9.2.2)`,
          }
        : null,
    fermions:
      cd.fermions && bare.fermions
        ? { count: cd.fermions.particles, fidelity_cd: cd.fermions.manyBodyFidelity, fidelity_bare: bare.fermions.manyBodyFidelity, fermi_level_cuts_group: cd.fermions.fermiLevelCutsGroup }
        : null,
  };
}

/** the verify.json content (config units) from the natural-units result; summary_rows filled by `summaryRows` */
function verifyFile(design: DesignResult, input: VerifyInput, natural: VerifyResult, parts: { classical: VerifyFile['classical']; traces: ReturnType<typeof traceTable> }): VerifyFile {
  const { units } = design.ctx;
  const cd = driveOf(natural, 'cd');
  const bare = driveOf(natural, 'bare');
  const E = (x: number) => units.energyFromNatural(x);
  const Lt = units.labels;
  const accepted = 1 - cd.minFidelity <= ACCEPT_INFIDELITY;
  return {
    format: 'isotrap-verify/1',
    units: { energy: Lt.energy, time: Lt.time, length: Lt.length, temperature: Lt.temperature },
    protocol: { duration: input.protocol.duration, ramp: input.protocol.ramp, lambda_end: input.lambdaEnd, duration_natural: input.duration },
    eigen: natural.eigen,
    bound_states: natural.boundStates,
    isospectral_drift: E(natural.isospectralDrift),
    states: natural.states.map((s, i) => ({
      index: s.index,
      energy: E(s.energyStart),
      energy_start: E(s.energyStart),
      energy_end: E(s.energyEnd),
      degeneracy: s.degeneracyEnd,
      fidelity_cd: cd.fidelity[i],
      fidelity_bare: bare.fidelity[i],
      excess_cd: E(cd.excessEnergy[i]),
      excess_bare: E(bare.excessEnergy[i]),
    })),
    ...ensembleSections(cd, bare, input.verify.temperature, units),
    cd_strength: correctionSection(natural.cdStrength, units),
    classical: parts.classical,
    propagation: Object.fromEntries(
      natural.drives.map((d) => [
        d.drive,
        { steps: d.stats.steps, rejected: d.stats.rejected, matvecs: d.stats.matvecs, scheme: d.stats.scheme, norm_drift: d.normDrift, seconds: d.stats.wallMs / 1000, estimated_amplitude_error: d.stats.estimatedAmplitudeError },
      ]),
    ),
    traces: { file: 'traces.npy', times: parts.traces.times, rows: parts.traces.rows },
    painted: null,
    interaction: null,
    errors: { correction_scale: input.verify.errors.correction_scale, depth: input.verify.errors.depth, timing: input.verify.errors.timing, time_unit: Lt.time, psf: input.verify.errors.psf, length_unit: Lt.length },
    accepted,
    acceptance: acceptanceText(accepted, cd.minFidelity),
    seconds: 0,
    warnings: [...natural.warnings],
    summary_rows: [],
  };
}

/** the painted drives' rows: ground-state fidelity, worst infidelity, the painted potential's range, the gauge check */
function paintedRows(file: VerifyFile): SummaryRow[] {
  const p = file.painted;
  if (!p) return [];
  const E = file.units.energy;
  const name = (d: string) => (d === 'painted' ? 'painted, best ½{g,p}' : 'painted, ground state exact');
  return [
    ...p.drives.flatMap((d) => [
      { key: `${name(d.drive)}: ground-state fidelity / worst infidelity 1 − F`, value: `${d.fidelity[0].toPrecision(10)} / ${(1 - d.min_fidelity).toExponential(3)}` },
      { key: `${name(d.drive)}: painted potential lowest … highest (start ${p.start.deepest.toPrecision(4)} … ${p.start.highest.toPrecision(4)})`, value: `${d.deepest.toPrecision(4)} … ${d.highest.toPrecision(4)}`, unit: E },
    ]),
    ...p.gauge_check.map((g) => ({ key: `gauge check ${name(g.drive)}: painted vs ½{g,p} drive, ${g.states} bound state(s)`, value: `${g.max_difference.toExponential(2)} (budget ${g.budget.toExponential(1)}: ${g.passed ? 'passed' : 'FAILED'})` })),
  ];
}

/** the rows of the report's summary table */
function summaryRows(file: VerifyFile, natural: VerifyResult): SummaryRow[] {
  const protocol = file.protocol;
  const T = file.units.time;
  const cd = driveOf(natural, 'cd');
  const bare = driveOf(natural, 'bare');
  return [
    { key: 'protocol', value: `${protocol.ramp} ramp over ${protocol.duration} ${T}` },
    { key: 'states tracked', value: natural.states.length },
    { key: 'worst infidelity 1 − F with correction', value: 1 - cd.minFidelity },
    { key: 'worst infidelity 1 − F bare drive', value: 1 - Math.min(...bare.fidelity) },
    { key: 'ground-state fidelity with / without', value: `${cd.fidelity[0].toPrecision(10)} / ${bare.fidelity[0].toPrecision(6)}` },
    ...(file.thermal ? [{ key: `thermal ensemble at ${file.thermal.temperature} ${file.units.temperature}: fidelity with / without`, value: `${file.thermal.fidelity_cd.toPrecision(10)} / ${file.thermal.fidelity_bare.toPrecision(6)}` }, { key: 'thermal excess energy with / without', value: `${file.thermal.mean_excess_cd.toExponential(3)} / ${file.thermal.mean_excess_bare.toExponential(3)}`, unit: file.units.energy }] : []),
    ...(file.fermions ? [{ key: `Fermi sea (${file.fermions.count} fermions): fidelity with / without`, value: `${file.fermions.fidelity_cd.toPrecision(10)} / ${file.fermions.fidelity_bare.toPrecision(6)}` }] : []),
    { key: 'correction out of the occupied states, max |λ̇|‖(1 − P)AP‖ (p³ / potential part alone)', value: `${file.cd_strength.max_leakage.toPrecision(4)} (${file.cd_strength.max_leakage_cubic.toPrecision(4)} / ${file.cd_strength.max_leakage_potential.toPrecision(4)})`, unit: file.units.energy },
    { key: 'largest single transition element |λ̇⟨m|A|n⟩|', value: file.cd_strength.max_window.toPrecision(4), unit: file.units.energy },
    ...paintedRows(file),
    ...(file.errors && (file.errors.correction_scale !== 0 || file.errors.depth !== 0 || file.errors.timing !== 0 || (file.errors.psf ?? 0) !== 0 || (file.errors.noise_rms ?? 0) !== 0)
      ? [{ key: 'errors simulated (verify.errors)', value: `correction scale ε = ${file.errors.correction_scale}, depth δ = ${file.errors.depth}, correction late by ${file.errors.timing} ${file.errors.time_unit}, point-spread radius ${file.errors.psf ?? 0} ${file.errors.length_unit ?? ''}` +
          ((file.errors.noise_rms ?? 0) !== 0 ? `, shot-to-shot noise ${file.errors.noise_rms} ${file.errors.energy_unit} rms over ${file.errors.noise_correlation} ${file.errors.length_unit}, mean of ${file.errors.noise_shots} shots` : '') }]
      : []),
    ...(file.errors?.noise_spread ?? []).map((d) => ({ key: `${d.drive}: ground-state fidelity spread over shots (std / worst shot)`, value: `${d.fidelity_std[0].toExponential(2)} / ${d.worst_fidelity[0].toPrecision(8)}` })),
    ...(file.interaction ? interactionRows(file.interaction, file.units.energy) : []),
    { key: 'isospectrality drift', value: file.isospectral_drift, unit: file.units.energy },
    { key: 'verdict', value: file.acceptance },
  ];
}

/**
 * Run the verification of a complete design: load → Schrödinger proof (quantum/verify.ts) → optional classical
 * drive (classical/corrected.ts) → correction sizes (quantum/correction.ts) → conversion to the config's units.
 */
export async function runVerify(config: Config, design: DesignResult, opts: VerifyJobOptions = {}): Promise<VerifyJobResult> {
  const started = performance.now();
  const input = verifyInput(config, design);
  const { units, grid } = design.ctx;
  const dense = design.run.dense;
  const painted = input.verify.painted;
  const paintedField = painted.includes('variational') ? variationalField(config, design, input) : undefined;
  if (painted.length > 0) paintableRamp(config, input);
  const source: SequenceSource = { dense: dense.data(), lo: 0, hi: input.lambdaEnd };
  const errors = { scale: input.verify.errors.correction_scale, depth: input.verify.errors.depth, shift: units.timeToNatural(input.verify.errors.timing), psf: units.lengthToNatural(input.verify.errors.psf) };
  const noise = shotNoiseOf(config, input, units);
  const shots = noise?.shots ?? 1;
  const interaction = input.verify.interaction;
  const condensate = interaction ? prepareInteraction(config, design, { duration: input.duration, lambdaEnd: input.lambdaEnd, ramp: input.protocol.ramp, tolerance: input.verify.tolerance, interaction }) : null;
  // progress: the condensate's three one-state drives against the single-particle drives of every shot
  const share = interaction ? (2 * shots * (input.verify.states ?? 8)) / (2 * shots * (input.verify.states ?? 8) + 4) : 1;
  const runShot = (shot: number) => withStateCountKeys(config, () => verifySequenceThreaded({
    grid,
    potential: sequencePotential(source),
    source,
    lambdaEnd: input.lambdaEnd,
    ramp: input.protocol.ramp,
    duration: input.duration,
    drift: design.ctx.units.lengthToNatural(config.flow.drift),
    states: input.verify.states,
    tol: input.verify.tolerance,
    errorControl: input.verify.step_control,
    temperature: input.temperature,
    fermions: input.verify.fermions,
    drives: ['cd', 'bare', ...painted.map((k) => PAINTED_DRIVE[k])],
    paintedField,
    errors: { ...errors, noise: noise ? shotNoise(grid, noise, shot) : null },
    traceSamples: opts.traceSamples ?? TRACE_SAMPLES,
    onProgress: opts.onProgress ? (f, stage) => opts.onProgress?.(share * ((shot + f) / shots), shots > 1 ? `${stage} (shot ${shot + 1} of ${shots})` : stage) : undefined,
  }, opts.threads ?? coreCount()));
  const results: VerifyResult[] = [];
  for (let shot = 0; shot < shots; shot++) results.push(await runShot(shot));
  const averaged = noise ? averageShots(results) : null;
  const natural = averaged?.result ?? results[0];
  const classical = input.verify.compare_classical ? classicalSection(config, design, input, natural.states.length) : null;
  const traces = traceTable(natural, natural.drives, (s) => units.timeFromNatural(s));
  const file = verifyFile(design, input, natural, { classical, traces });
  if (noise && averaged) file.errors = { ...file.errors, ...noiseSection(input, units, averaged.spread) } as VerifyFile['errors'];
  file.painted = paintedSection(natural, painted, input, units, paintedField);
  for (const g of file.painted?.gauge_check ?? []) {
    if (!g.passed) file.warnings.push(`gauge check of ${g.drive}: the painted potential and the ½{g, p} drive end ${g.max_difference.toExponential(2)} apart in fidelity, above the time-stepping budget ${g.budget.toExponential(2)}`);
  }
  for (const d of file.painted?.drives ?? []) {
    const start = -(file.painted?.start.deepest ?? 0);
    if (start > 0 && -d.deepest > start) file.warnings.push(`${d.drive}: the painted potential reaches ${d.deepest.toPrecision(4)} ${units.labels.energy}, ${(-d.deepest / start).toPrecision(3)} times the starting depth (${(-start).toPrecision(4)} ${units.labels.energy}): the laser power must allow it`);
  }
  if (file.painted && config.budget?.depth !== undefined) {
    for (const d of file.painted.drives) {
      if (-d.deepest > config.budget.depth) file.warnings.push(`${d.drive}: the painted potential reaches ${d.deepest.toPrecision(4)} ${units.labels.energy}, deeper than budget.depth = ${config.budget.depth} ${units.labels.energy}`);
    }
  }
  if (condensate) {
    const onProgress = opts.onProgress ? (f: number, stage: string) => opts.onProgress?.(share + (1 - share) * f, stage) : undefined;
    const out = condensate.finish(file.states[0], onProgress);
    file.interaction = out.section;
    file.warnings.push(...out.warnings);
  }
  file.seconds = (performance.now() - started) / 1000;
  file.summary_rows = summaryRows(file, natural);
  const ia = file.interaction;
  const condensateNumbers = ia ? [ia.g1d, ia.start.chemical_potential, ia.start.energy, ia.end.chemical_potential, ia.end.energy, ia.peak_interaction, ...ia.drives.flatMap((d) => [d.fidelity, d.excess])] : [];
  for (const x of [...file.states.flatMap((s) => [s.fidelity_cd, s.fidelity_bare, s.excess_cd, s.excess_bare]), ...condensateNumbers]) {
    if (!Number.isFinite(x)) throw new Error('internal error: a non-finite verify result');
  }
  return { config, file, traces: { data: traces.data, shape: traces.shape }, natural };
}

/** the shot-to-shot noise of verify.errors in natural units, or null without it (noise_rms = 0) */
function shotNoiseOf(config: Config, input: VerifyInput, units: UnitSystem): ShotNoise | null {
  const e = input.verify.errors;
  if (e.noise_rms === 0) return null;
  if (e.noise_correlation === undefined) {
    throw new UserError(`${config.meta.source}: verify.errors.noise_correlation is missing: shot-to-shot noise (noise_rms = ${e.noise_rms}) needs its correlation length, in ${units.labels.length}`);
  }
  return { rms: units.energyToNatural(e.noise_rms), correlation: units.lengthToNatural(e.noise_correlation), shots: e.noise_shots, seed: e.noise_seed };
}

/** verify.json's account of the noise: its parameters in the config's units and the spread over shots */
function noiseSection(input: VerifyInput, units: UnitSystem, spread: ShotSpread[]) {
  const e = input.verify.errors;
  return {
    noise_rms: e.noise_rms, noise_correlation: e.noise_correlation ?? null, noise_shots: e.noise_shots, noise_seed: e.noise_seed, energy_unit: units.labels.energy,
    noise_rule: `each shot s adds its own static potential δV_s(x), a Gaussian random field with rms ${e.noise_rms} ${units.labels.energy} and correlation σ²exp(−r²/2ℓ_c²), ℓ_c = ${e.noise_correlation} ${units.labels.length}, seed noise_seed + s (spectral/random-field.ts), to the trap the atoms see; its states are prepared and judged in that trap; fidelities, excess energies, ensembles and traces are the means over the ${e.noise_shots} shots`,
    noise_spread: spread.map((d) => ({ drive: d.drive, fidelity_std: d.fidelityStd, worst_fidelity: d.worstFidelity, min_fidelity_per_shot: d.minFidelityPerShot })),
  };
}

/** the ramp must have λ̇ = λ̈ = 0 at both ends for a painted drive: refused naming protocol.ramp otherwise */
function paintableRamp(config: Config, input: VerifyInput): void {
  try {
    assertPaintableRamp(makeRamp(input.protocol.ramp, input.duration, input.lambdaEnd));
  } catch (err) {
    if (err instanceof RampNotPaintableError) {
      throw new UserError(`${config.meta.source}: protocol.ramp = ${err.ramp} is not allowed with verify.painted = [${input.verify.painted.join(', ')}]: ${err.reason}; a painted correction ends in the corrected state only when λ̇ = λ̈ = 0 at both ends (allowed: sin2, smooth), or leave verify.painted out`);
    }
    throw err;
  }
}

function variationalField(config: Config, design: DesignResult, input: VerifyInput): PaintedVariationalField {
  const occupied = input.verify.fermions ?? Math.max(1, design.bound.energies.length);
  return variationalFieldOf(design.ctx.grid, design.run, occupied, input.temperature);
}

/** the variational ½{g, p} of a designed flow (check/painted.ts) on PAINTED_FIT_FRAMES of its frames with the
 *  flow's exact rates ∂_λV, fitted on the lowest `occupied` states (verify.fermions, else the bound states), with
 *  Boltzmann weights at `temperature` (E₀) when given; the one rule verify and export share */
export function variationalFieldOf(grid: Grid, run: Pick<FlowRun, 'lambdas' | 'frames' | 'dense'>, occupied: number, temperature: number | undefined): PaintedVariationalField {
  const { lambdas, frames, dense } = run;
  const count = Math.min(PAINTED_FIT_FRAMES, lambdas.length);
  const picks = [...new Set(Array.from({ length: count }, (_, i) => Math.round((i * (lambdas.length - 1)) / (count - 1))))];
  const rates = picks.map((i) => dense.rateAt(lambdas[i], new Float64Array(grid.n)));
  return paintedVariationalField(grid, picks.map((i) => lambdas[i]), picks.map((i) => frames[i]), { states: occupied, temperature }, rates);
}

/** the painted section of verify.json in the config's units */
function paintedSection(natural: VerifyResult, kinds: readonly PaintedKind[], input: VerifyInput, units: UnitSystem, variational: PaintedVariationalField | undefined): PaintedSection | null {
  const info = natural.painted;
  if (!info || kinds.length === 0) return null;
  const E = (x: number) => units.energyFromNatural(x);
  const tol = input.verify.tolerance;
  return {
    definition: 'each painted drive is the pure potential V(x, λ(t)) + V_loc(x, t) with no momentum term, V_loc = −(m/2)w² − m∂_tW of its velocity field w (physics.md §7); fidelities in the eigenspaces of H(λ_end) as for the other drives',
    drives: kinds.map((k) => {
      const d = driveOf(natural, PAINTED_DRIVE[k]);
      const range = d.paintedRange ?? { min: NaN, max: NaN };
      return {
        drive: PAINTED_DRIVE[k], kind: k, meaning: PAINTED_MEANING[k], fidelity: d.fidelity, excess: d.excessEnergy.map(E), min_fidelity: d.minFidelity,
        thermal_fidelity: d.thermal?.ensembleFidelity ?? null, fermion_fidelity: d.fermions?.manyBodyFidelity ?? null, deepest: E(range.min), highest: E(range.max),
      };
    }),
    start: { deepest: E(info.startRange.min), highest: E(info.startRange.max) },
    ground_clip: info.ground
      ? {
          clip_density: units.lengthToNatural(info.ground.clipDensity), unit: `1/${units.labels.length}`, clipped_weight: info.ground.clippedWeight, chebyshev_degree: info.ground.degree,
          rule: `where the adiabatic density ρ falls below ρ_c = ${CLIP_FLOOR}·max ρ the velocity field −J/ρ is replaced by −Jρ/(ρ² + ρ_c²), which goes smoothly to zero (a flat painted correction there); clipped_weight is the ground state's weight where the clip acts, about the fidelity it costs`,
        }
      : null,
    variational_fit: variational
      ? {
          states: variational.fit.states, temperature: variational.fit.temperature === null ? null : units.temperatureFromNatural(variational.fit.temperature), frames: variational.fit.frames.length,
          basis: variational.fit.basis, max_residual: Math.max(...variational.fit.frames.map((f) => f.residual)),
          rule: `the painted drive's ½{g, p} (a = 0) is fitted on the lowest ${variational.fit.states} states of each of ${variational.fit.frames.length} frames (verify.fermions, else the bound states), Boltzmann-weighted when verify.temperature is given, g over the basis listed (check/painted.ts); max_residual is the largest relative residual of the fit at a frame`,
        }
      : null,
    gauge_check: info.gauge.map((g) => {
      const budget = GAUGE_BUDGET_FACTOR * Math.sqrt(tol);
      return { drive: g.drive, states: g.states, painted: g.painted, velocity: g.velocity, max_difference: g.maxDifference, budget, passed: g.maxDifference <= budget };
    }),
  };
}

export function writeVerifyOutputs(result: VerifyJobResult, dir: string, force: boolean, identity = configIdentity(result.config)): string[] {
  return writeRun(dir, { force, produces: VERIFY_FILES, job: 'verify', identity }, (out) => {
    out.write(VERIFY_FILES[1], encodeNpy(result.traces.data, result.traces.shape));
    out.write(VERIFY_FILES[0], toJson(result.file, 1));
  });
}
