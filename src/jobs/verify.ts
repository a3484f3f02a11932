/**
 * `verify`: drive the designed sequence at the configured speed and prove by Schrödinger simulation that the
 * cubic counterdiabatic correction keeps the eigenstates (physics.md §1–§3, §5), against the bare drive; and
 * optionally drive the classical (Hopf) sequence of the same start with the same correction until it breaks.
 * Converts the natural-units results of quantum/verify.ts into the config's units.
 */
import { join } from 'node:path';
import { UserError } from '../core/errors.ts';
import type { Config } from '../io/config.ts';
import { prepareOutputDir, writeFileAtomic } from '../io/files.ts';
import { encodeNpy } from '../io/npy.ts';
import { integrateFlow, naturalFlowEquation } from '../flow/kdv.ts';
import { makeRamp } from '../protocol/ramp.ts';
import { verifySequence, type DriveKind, type DriveResult, type VerifyResult } from '../quantum/verify.ts';
import type { SummaryRow } from '../report/index.ts';
import { toJson, type DesignResult } from './design.ts';

export const VERIFY_FILES = ['verify.json', 'traces.npy'] as const;
/** a design verifies when every tracked state keeps fidelity ≥ 1 − this with the correction (common practice:
 * well above the default time-stepping budget 1e-8, well below any physically visible loss) */
export const ACCEPT_INFIDELITY = 1e-6;
/** fidelity-trace samples per drive (each costs one eigen-solve) */
export const TRACE_SAMPLES = 10;
/** samples of the correction's size against time for the figure (cheap: closed-form bounds) */
export const CORRECTION_SAMPLES = 101;

export interface VerifyJobOptions {
  onProgress?: (fraction: number, stage: string) => void;
  /** fidelity traces (default TRACE_SAMPLES; 0 for none) */
  traceSamples?: number;
}

export interface VerifyFile {
  format: 'isotrap-verify/1';
  units: { energy: string; time: string; length: string; temperature: string };
  protocol: { duration: number; ramp: string; lambda_end: number; duration_natural: number };
  eigen: VerifyResult['eigen'];
  bound_states: number;
  isospectral_drift: number;
  states: {
    index: number;
    energy: number;
    energy_start: number;
    energy_end: number;
    degeneracy: number;
    fidelity_cd: number;
    fidelity_bare: number;
    excess_cd: number;
    excess_bare: number;
  }[];
  thermal: null | { temperature: number; unit: string; fidelity_cd: number; fidelity_bare: number; mean_excess_cd: number; mean_excess_bare: number; tail_weight: number; definition: string };
  fermions: null | { count: number; fidelity_cd: number; fidelity_bare: number; fermi_level_cuts_group: boolean };
  cd_strength: {
    unit: string;
    occupied: number;
    max_total: number;
    max_cubic: number;
    max_potential: number;
    at_time: number;
    definition: string;
    samples: { time: number[]; cubic: number[]; potential: number[]; total: number[]; definition: string };
  };
  classical: null | { lambda_break: number; lambda_reached: number; time_reached: number; fidelity: number[]; note: string };
  propagation: Record<string, { steps: number; rejected: number; matvecs: number; scheme: string; norm_drift: number; seconds: number; estimated_amplitude_error: number }>;
  traces: { file: string; times: number[]; rows: { drive: string; state: number }[] };
  accepted: boolean;
  acceptance: string;
  seconds: number;
  warnings: string[];
  summary_rows: SummaryRow[];
}

export interface VerifyJobResult {
  file: VerifyFile;
  traces: { data: Float64Array; shape: [number, number] };
  natural: VerifyResult;
}

function driveOf(r: VerifyResult, kind: DriveKind): DriveResult {
  const d = r.drives.find((x) => x.drive === kind);
  if (!d) throw new Error(`internal error: drive ${kind} missing`);
  return d;
}

export function runVerify(config: Config, design: DesignResult, opts: VerifyJobOptions = {}): VerifyJobResult {
  const started = performance.now();
  const { units, grid } = design.ctx;
  const src = config.meta.source;
  if (!config.protocol) throw new UserError(`${src}: protocol is missing: verify needs e.g. protocol: { duration: 2.0, ramp: sin2 } (duration in ${units.labels.time})`);
  if (!design.summary.complete) throw new UserError(`${src}: the designed sequence stops at λ = ${design.summary.lambda_reached} before flow.lambda_end = ${config.flow.lambda_end}; verify needs a complete sequence`);
  const v = config.verify ?? { tolerance: 1e-8, compare_classical: false };
  const duration = units.timeToNatural(config.protocol.duration);
  const lambdaEnd = config.flow.lambda_end;
  const temperature = v.temperature !== undefined && v.temperature > 0 ? units.temperatureToNatural(v.temperature) : undefined;
  const dense = design.run.dense;
  const natural = verifySequence({
    grid,
    potential: (l, out) => dense.at(Math.min(Math.max(l, 0), lambdaEnd), out),
    lambdaEnd,
    ramp: config.protocol.ramp,
    duration,
    states: v.states,
    tol: v.tolerance,
    temperature,
    fermions: v.fermions,
    drives: ['cd', 'bare'],
    traceSamples: opts.traceSamples ?? TRACE_SAMPLES,
    onProgress: opts.onProgress,
  });
  const cd = driveOf(natural, 'cd');
  const bare = driveOf(natural, 'bare');
  const E = (x: number) => units.energyFromNatural(x);
  const Lt = units.labels;
  const warnings = [...natural.warnings];

  // classical sequence of the same start, same correction, until it breaks
  let classical: VerifyFile['classical'] = null;
  if (v.compare_classical) {
    const flow = integrateFlow(grid, naturalFlowEquation('classical'), design.ctx.u0, { tolerance: config.flow.tolerance, frames: [lambdaEnd] });
    const reach = flow.breaking ? flow.breaking.lambdaReached : lambdaEnd;
    const ramp = makeRamp(config.protocol.ramp, duration, lambdaEnd);
    // the time at which the ramp reaches the last λ the classical sequence has (ramps are monotonic)
    let lo = 0, hi = duration;
    for (let i = 0; i < 60; i++) {
      const mid = 0.5 * (lo + hi);
      if (ramp.value(mid) < reach) lo = mid;
      else hi = mid;
    }
    const tReach = lo;
    const cv = verifySequence({
      grid,
      potential: (l, out) => flow.dense.at(Math.min(Math.max(l, 0), reach), out),
      lambdaEnd: reach,
      ramp: config.protocol.ramp,
      duration: tReach,
      states: natural.states.length,
      tol: v.tolerance,
      drives: ['cd'],
      traceSamples: 0,
      strengthSamples: 0,
    });
    classical = {
      lambda_break: flow.breaking?.lambdaExtrapolated ?? NaN,
      lambda_reached: reach,
      time_reached: units.timeFromNatural(tReach),
      fidelity: cv.drives[0].fidelity,
      note: 'the Hopf (ħ → 0) sequence of the same start, driven with the same cubic correction over the part of the ramp it exists on (a ramp reaching its last λ, same shape); fidelities against the eigenstates of H at that λ',
    };
  }

  // size of the correction against time: the p³ term at p = ħ/ℓ, 4|λ̇|E₀, and the potential term 6|λ̇| max|u| E₀
  const ramp = makeRamp(config.protocol.ramp, duration, lambdaEnd);
  const uS = new Float64Array(grid.n);
  const samples = { time: [] as number[], cubic: [] as number[], potential: [] as number[], total: [] as number[], definition: 'at momentum p = ħ/ℓ: p³ part 4|λ̇|·E₀, potential part 6|λ̇|·max|V|/E₀·E₀ (the Weyl symbol of 3{u,k} is 6uk); total their sum' };
  for (let i = 0; i < CORRECTION_SAMPLES; i++) {
    const s = (duration * i) / (CORRECTION_SAMPLES - 1);
    const rate = Math.abs(ramp.rate(s));
    dense.at(ramp.value(s), uS);
    let umax = 0;
    for (const x of uS) umax = Math.max(umax, Math.abs(x));
    samples.time.push(units.timeFromNatural(s));
    samples.cubic.push(E(4 * rate));
    samples.potential.push(E(6 * rate * umax));
    samples.total.push(E(4 * rate + 6 * rate * umax));
  }

  // traces: rows (drive, state) × times
  const rows: { drive: string; state: number }[] = [];
  const times = cd.trace ? cd.trace.times.map((s) => units.timeFromNatural(s)) : [];
  const traceRows: number[][] = [];
  for (const d of [cd, bare]) {
    if (!d.trace) continue;
    for (let i = 0; i < natural.states.length; i++) {
      rows.push({ drive: d.drive, state: i });
      traceRows.push(d.trace.fidelity.map((f) => f[i]));
    }
  }
  const nT = times.length;
  const traceData = new Float64Array(rows.length * nT);
  traceRows.forEach((r, i) => traceData.set(r, i * nT));

  const minCd = cd.minFidelity;
  const accepted = 1 - minCd <= ACCEPT_INFIDELITY;
  const acceptance = accepted
    ? `every tracked state keeps fidelity ≥ 1 − ${ACCEPT_INFIDELITY} with the correction (worst ${minCd.toPrecision(10)})`
    : `a tracked state loses more than ${ACCEPT_INFIDELITY} fidelity with the correction (worst ${minCd.toPrecision(10)}): the sequence is not admissible at this resolution, or the time stepping is too coarse`;
  const st = natural.cdStrength;
  const file: VerifyFile = {
    format: 'isotrap-verify/1',
    units: { energy: Lt.energy, time: Lt.time, length: Lt.length, temperature: Lt.temperature },
    protocol: { duration: config.protocol.duration, ramp: config.protocol.ramp, lambda_end: lambdaEnd, duration_natural: duration },
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
    thermal:
      cd.thermal && bare.thermal
        ? {
            temperature: v.temperature ?? NaN,
            unit: Lt.temperature,
            fidelity_cd: cd.thermal.ensembleFidelity,
            fidelity_bare: bare.thermal.ensembleFidelity,
            mean_excess_cd: E(cd.thermal.meanExcessEnergy),
            mean_excess_bare: E(bare.thermal.meanExcessEnergy),
            tail_weight: cd.thermal.tailWeight,
            definition: cd.thermal.definition,
          }
        : null,
    fermions:
      cd.fermions && bare.fermions
        ? { count: cd.fermions.particles, fidelity_cd: cd.fermions.manyBodyFidelity, fidelity_bare: bare.fermions.manyBodyFidelity, fermi_level_cuts_group: cd.fermions.fermiLevelCutsGroup }
        : null,
    cd_strength: {
      unit: Lt.energy,
      occupied: st?.occupied ?? 0,
      max_total: E(st?.full ?? NaN),
      max_cubic: E(st?.cubic ?? NaN),
      max_potential: E(st?.potential ?? NaN),
      at_time: units.timeFromNatural(st?.atTime ?? NaN),
      definition: 'max over the protocol of |λ̇|·‖P A P‖ on the occupied low-energy subspace (P: the lowest transported states), and the same for the p³ part and the potential-weighted momentum part separately',
      samples,
    },
    classical,
    propagation: Object.fromEntries(
      natural.drives.map((d) => [
        d.drive,
        { steps: d.stats.steps, rejected: d.stats.rejected, matvecs: d.stats.matvecs, scheme: d.stats.scheme, norm_drift: d.normDrift, seconds: d.stats.wallMs / 1000, estimated_amplitude_error: d.stats.estimatedAmplitudeError },
      ]),
    ),
    traces: { file: 'traces.npy', times, rows },
    accepted,
    acceptance,
    seconds: (performance.now() - started) / 1000,
    warnings,
    summary_rows: [],
  };
  const worstBare = Math.min(...bare.fidelity);
  file.summary_rows = [
    { key: 'protocol', value: `${config.protocol.ramp} ramp over ${config.protocol.duration} ${Lt.time}` },
    { key: 'states tracked', value: natural.states.length },
    { key: 'worst infidelity 1 − F with correction', value: 1 - minCd },
    { key: 'worst infidelity 1 − F bare drive', value: 1 - worstBare },
    { key: 'ground-state fidelity with / without', value: `${cd.fidelity[0].toPrecision(10)} / ${bare.fidelity[0].toPrecision(6)}` },
    ...(file.thermal ? [{ key: `thermal ensemble at ${file.thermal.temperature} ${Lt.temperature}: fidelity with / without`, value: `${file.thermal.fidelity_cd.toPrecision(10)} / ${file.thermal.fidelity_bare.toPrecision(6)}` }, { key: 'thermal excess energy with / without', value: `${file.thermal.mean_excess_cd.toExponential(3)} / ${file.thermal.mean_excess_bare.toExponential(3)}`, unit: Lt.energy }] : []),
    ...(file.fermions ? [{ key: `Fermi sea (${file.fermions.count} fermions): fidelity with / without`, value: `${file.fermions.fidelity_cd.toPrecision(10)} / ${file.fermions.fidelity_bare.toPrecision(6)}` }] : []),
    { key: 'largest correction |λ̇|‖A‖ (p³ / potential part)', value: `${file.cd_strength.max_total.toPrecision(4)} (${file.cd_strength.max_cubic.toPrecision(4)} / ${file.cd_strength.max_potential.toPrecision(4)})`, unit: Lt.energy },
    { key: 'isospectrality drift', value: file.isospectral_drift, unit: Lt.energy },
    { key: 'verdict', value: file.acceptance },
  ];
  for (const x of [...file.states.flatMap((s) => [s.fidelity_cd, s.fidelity_bare, s.excess_cd, s.excess_bare])]) {
    if (!Number.isFinite(x)) throw new Error('internal error: a non-finite verify result');
  }
  return { file, traces: { data: traceData, shape: [rows.length, nT] }, natural };
}

export function writeVerifyOutputs(result: VerifyJobResult, dir: string, force: boolean): string[] {
  const out = prepareOutputDir(dir, { force, produces: [...VERIFY_FILES] });
  const files = VERIFY_FILES.map((f) => join(out, f));
  writeFileAtomic(files[1], encodeNpy(result.traces.data, result.traces.shape));
  writeFileAtomic(files[0], toJson(result.file, 1));
  return files;
}
