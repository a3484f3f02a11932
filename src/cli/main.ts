/**
 * The isotrap command line. Thin: parse options, call the typed job functions in src/jobs, print a summary.
 * Exit codes: 0 success, 1 ran but failed its own acceptance (e.g. a flow that broke before λ_end),
 * 2 bad input (a UserError: message only, no stack trace), 3 internal error.
 */
import { Command, CommanderError } from 'commander';
import { join } from 'node:path';
import { readFileSync } from 'node:fs';
import { NumericalError, UserError } from '../core/errors.ts';
import { isRampKind, RAMP_KINDS } from '../protocol/ramp.ts';
import { runDesign, toJson, writeDesignOutputs } from '../jobs/design.ts';
import { compareFigures, renderFolder, writeFigures, writeLatticeFigures, type CompareFileLike } from '../jobs/report.ts';
import { runVerify, writeVerifyOutputs, type VerifyFile } from '../jobs/verify.ts';
import type { DesignResult } from '../jobs/design.ts';
import { checkExitCode, runCheck, writeCheckOutputs } from '../jobs/check.ts';
import { quantumDrives, runCompare, writeCompareOutputs } from '../jobs/compare.ts';
// every command reads the same scenario file, so all of them validate against the full schema (compare, lattice)
import { loadLatticeConfig as loadScenario, runLattice, writeLatticeOutputs } from '../jobs/lattice.ts';
import { basename, dirname, extname } from 'node:path';
import { makeProgress } from './progress.ts';
import { num, table } from './table.ts';

interface CommonOptions {
  out?: string;
  force?: boolean;
  json?: boolean;
  quiet?: boolean;
}

export function outputDir(name: string, opts: CommonOptions): string {
  return opts.out ?? join('outputs', name);
}

function version(): string {
  const pkg = JSON.parse(readFileSync(new URL('../../package.json', import.meta.url), 'utf8')) as { version: string };
  return pkg.version;
}

async function designCommand(configPath: string, opts: CommonOptions): Promise<number> {
  const config = loadScenario(configPath);
  const progress = makeProgress('design', opts.quiet ?? false);
  const result = runDesign(config, { onProgress: (l, end) => progress.update(l / end) });
  progress.stop();
  const dir = outputDir(config.name, opts);
  const files = writeDesignOutputs(result, dir, opts.force ?? false);
  const s = result.summary;
  if (opts.json) {
    process.stdout.write(toJson({ ...s, outputs: files }, 2) + '\n');
  } else {
    const E = s.units.energy;
    const rows: [string, string][] = [
      ['scenario', `${s.name} (${s.dispersion} flow${result.ctx.speciesLabel ? `, ${result.ctx.speciesLabel}` : ''})`],
      ['units', `${s.scales.ell}, ${s.scales.E0}, ${s.scales.t0}; energies in ${E}, lengths in ${s.units.length}, λ dimensionless`],
      ['δ² = ħ²/(2mV₀w²)', `${num(s.delta2)}  (small: nearly classical; order 1: strongly quantum)`],
      ['frames × points', `${s.frames} × ${s.points}, λ = 0 … ${num(s.lambda_reached)}${s.complete ? '' : ` (asked ${s.lambda_end})`}`],
      ['integrator', `${s.integrator.steps} steps (${s.integrator.rejected} rejected), ${num(s.integrator.seconds, 3)} s, tolerance ${s.integrator.tolerance}`],
      ['invariant drift (max rel.)', num(s.max_invariant_drift, 3)],
      ['bound-state drift', `${num(s.spectral_drift, 3)} ${E} (isospectrality along the sequence)`],
      ['predicted solitons', s.predicted_solitons.map((p) => `depth ${num(p.depth)} ${E}, speed ${num(p.speed)} ${s.units.speed}`).join('; ') || 'none'],
      ['wells in last frame', s.wells_found.map((w) => `depth ${num(w.depth)} ${E} at ${num(w.position)} ${s.units.length}`).join('; ') || 'none'],
      ['outputs', dir],
    ];
    process.stdout.write(`isotrap design\n${table(rows)}\n`);
    for (const w of s.warnings) process.stderr.write(`warning: ${w}\n`);
  }
  return s.complete ? 0 : 1;
}

interface CheckCliOptions extends CommonOptions {
  tolerance?: string;
  sidecar?: string;
  repair?: 'median' | 'piecewise';
  lengthUnit?: string;
  energyUnit?: string;
  species?: string;
  massU?: string;
  lengthUnitUm?: string;
  variationalDuration?: string;
  variationalStates?: string;
  variationalTemperature?: string;
  variationalRamp?: string;
  variationalLegendre?: string;
}

/** a numeric command-line option: undefined when absent, UserError naming the option when not a number */
function numberOption(name: string, v: string | undefined): number | undefined {
  if (v === undefined) return undefined;
  const x = Number(v);
  if (!Number.isFinite(x)) throw new UserError(`option --${name} = ${JSON.stringify(v)} is not allowed: must be a finite number`);
  return x;
}

function variationalOptions(opts: CheckCliOptions) {
  const duration = numberOption('variational-duration', opts.variationalDuration);
  const others = [opts.variationalStates, opts.variationalTemperature, opts.variationalRamp, opts.variationalLegendre];
  if (duration === undefined) {
    if (others.some((o) => o !== undefined)) throw new UserError('the --variational-* options need --variational-duration <t> (ramp duration, in the sequence\'s time unit), which turns the variational step on');
    return undefined;
  }
  const ramp = opts.variationalRamp;
  if (ramp !== undefined && !isRampKind(ramp)) {
    throw new UserError(`option --variational-ramp = ${JSON.stringify(ramp)} is not allowed: must be one of ${RAMP_KINDS.join(', ')}`);
  }
  const int = (name: string, v: string | undefined) => {
    const x = numberOption(name, v);
    if (x !== undefined && !(Number.isInteger(x) && x >= 1)) throw new UserError(`option --${name} = ${v} is not allowed: must be a whole number ≥ 1`);
    return x;
  };
  return {
    duration,
    states: int('variational-states', opts.variationalStates),
    temperature: numberOption('variational-temperature', opts.variationalTemperature),
    ramp,
    legendre: int('variational-legendre', opts.variationalLegendre),
  };
}

async function checkCommand(input: string, opts: CheckCliOptions): Promise<number> {
  if (opts.repair !== undefined && opts.repair !== 'median' && opts.repair !== 'piecewise') {
    throw new UserError(`option --repair = ${JSON.stringify(opts.repair)} is not allowed: must be median or piecewise`);
  }
  const result = runCheck({
    input,
    tolerance: numberOption('tolerance', opts.tolerance),
    sidecar: opts.sidecar,
    repair: opts.repair,
    units: {
      length_unit: opts.lengthUnit,
      energy_unit: opts.energyUnit,
      species: opts.species,
      mass_u: numberOption('mass-u', opts.massU),
      length_unit_um: numberOption('length-unit-um', opts.lengthUnitUm),
    },
    variational: variationalOptions(opts),
  });
  const dir = opts.out ?? join(dirname(input), `${basename(input, extname(input))}-check`);
  const files = writeCheckOutputs(result, dir, opts.force ?? false);
  const r = result.report;
  if (opts.json) process.stdout.write(toJson(r, 2) + '\n');
  else {
    const rows: [string, string][] = [
      ['input', `${r.input}${r.sidecar ? ` (units from ${r.sidecar})` : ''}`],
      ['verdict', r.admissible ? `admissible (tolerance ${r.tolerance})` : `NOT admissible (tolerance ${r.tolerance})`],
      ['frames', `${r.frames.length}, ${r.frames.filter((f) => f.admissible).length} pass`],
      ['fitted a (median)', `${num(r.fit.a_median)} ${r.units.a}`],
      ['fitted c (median)', `${num(r.fit.c_median)} ${r.units.c}`],
      ['bound-state drift', `${num(r.spectral_drift, 3)} ${r.units.energy} (relative ${num(r.spectral_drift_relative, 3)})`],
      ['repaired sequence', `max distance ${num(r.repaired.max_distance, 3)} ${r.units.energy}, relative L² ${num(r.repaired.relative_l2, 3)}`],
      ...(r.variational
        ? r.variational.comparison.drives.map((d): [string, string] => [`drive: ${d.label}`, `worst fidelity ${num(d.min_fidelity, 8)} over ${d.fidelity.length} states (ramp ${r.variational!.comparison.ramp}, ${r.variational!.comparison.duration})`])
        : []),
      ['outputs', files.join(', ')],
    ];
    process.stdout.write(`isotrap check\n${table(rows)}\n`);
    for (const f of r.failures) process.stdout.write(`  fails: ${f}\n`);
    for (const w of r.warnings) process.stderr.write(`warning: ${w}\n`);
  }
  return checkExitCode(result);
}

function verifyRows(d: DesignResult, v: VerifyFile): [string, string][] {
  const E = v.units.energy;
  const rows: [string, string][] = [
    ['protocol', `${v.protocol.ramp} ramp, ${v.protocol.duration} ${v.units.time}, λ = 0 … ${v.protocol.lambda_end}`],
    ['eigenstates', `${v.states.length} tracked (${v.bound_states} bound); ${v.eigen.method}`],
  ];
  for (const st of v.states) {
    rows.push([`state ${st.index} (E = ${num(st.energy)} ${E})`, `fidelity ${num(st.fidelity_cd, 10)} with correction, ${num(st.fidelity_bare, 4)} bare; excess ${num(st.excess_cd, 3)} / ${num(st.excess_bare, 3)} ${E}`]);
  }
  if (v.thermal) rows.push([`thermal (T = ${v.thermal.temperature} ${v.thermal.unit})`, `fidelity ${num(v.thermal.fidelity_cd, 10)} / ${num(v.thermal.fidelity_bare, 4)}, excess energy ${num(v.thermal.mean_excess_cd, 3)} / ${num(v.thermal.mean_excess_bare, 3)} ${E}`]);
  if (v.fermions) rows.push([`Fermi sea (${v.fermions.count} fermions)`, `fidelity ${num(v.fermions.fidelity_cd, 10)} / ${num(v.fermions.fidelity_bare, 4)}`]);
  rows.push(['correction size', `max |λ̇|‖A‖ = ${num(v.cd_strength.max_total)} ${E} (p³ part ${num(v.cd_strength.max_cubic)}, potential part ${num(v.cd_strength.max_potential)})`]);
  if (v.classical) rows.push(['classical sequence + correction', `to λ = ${num(v.classical.lambda_reached)} (t = ${num(v.classical.time_reached)} ${v.units.time}): worst fidelity ${num(Math.min(...v.classical.fidelity), 6)}`]);
  rows.push(['isospectrality drift', `${num(v.isospectral_drift, 3)} ${E}`]);
  rows.push(['verdict', v.acceptance]);
  void d;
  return rows;
}

async function verifyCommand(configPath: string, opts: CommonOptions, withReport: boolean): Promise<number> {
  const started = performance.now();
  const config = loadScenario(configPath);
  const dir = outputDir(config.name, opts);
  const quiet = opts.quiet ?? false;
  const pd = makeProgress('design', quiet);
  const design = runDesign(config, { onProgress: (l, end) => pd.update(l / end) });
  pd.stop();
  if (!design.summary.complete) {
    writeDesignOutputs(design, dir, opts.force ?? false);
    throw new UserError(`${config.meta.source}: the ${config.flow.dispersion} flow stops at λ = ${design.summary.lambda_reached} before flow.lambda_end = ${config.flow.lambda_end} (${design.summary.breaking?.reason}); nothing to verify (the frames it has are in ${dir})`);
  }
  const pv = makeProgress('verify', quiet);
  const verify = runVerify(config, design, { onProgress: (f) => pv.update(f) });
  pv.stop();
  const files = [...writeDesignOutputs(design, dir, opts.force ?? false), ...writeVerifyOutputs(verify, dir, opts.force ?? false)];
  if (withReport) files.push(...renderFolder(dir, { force: opts.force ?? false, toolVersion: version(), runSeconds: (performance.now() - started) / 1000 }));
  const v = verify.file;
  const s = design.summary;
  if (opts.json) {
    process.stdout.write(toJson({ design: s, ...v, outputs: files }, 2) + '\n');
  } else {
    const E = s.units.energy;
    const rows: [string, string][] = [
      ['scenario', `${s.name}${design.ctx.speciesLabel ? ` (${design.ctx.speciesLabel})` : ' (natural units)'}`],
      ['units', `${s.scales.ell}, ${s.scales.E0}, ${s.scales.t0}`],
      ['δ² = ħ²/(2mV₀w²)', num(s.delta2)],
      ['solitons predicted / found', `${s.predicted_solitons.map((p) => num(p.depth)).join(', ') || 'none'} / ${s.wells_found.map((w) => num(w.depth)).join(', ') || 'none'} ${E}`],
      ...verifyRows(design, v),
      ['outputs', dir],
    ];
    process.stdout.write(`isotrap ${withReport ? 'run' : 'verify'}\n${table(rows)}\n`);
    for (const w of [...s.warnings, ...v.warnings]) process.stderr.write(`warning: ${w}\n`);
  }
  return v.accepted ? 0 : 1;
}

async function compareCommand(configPath: string, opts: CommonOptions): Promise<number> {
  const config = loadScenario(configPath);
  const progress = makeProgress('compare', opts.quiet ?? false);
  const result = runCompare(config, { onProgress: (_stage, fraction) => progress.update(0.7 * fraction) });
  const s = quantumDrives(config, result);
  progress.stop();
  const files = writeCompareOutputs(s, outputDir(config.name, opts), opts.force ?? false);
  files.push(...writeFigures(compareFigures(s as unknown as CompareFileLike), outputDir(config.name, opts), opts.force ?? false));
  if (opts.json) {
    const { sequences: _omit, ...rest } = s as typeof s & { sequences?: unknown };
    process.stdout.write(toJson({ ...rest, outputs: files }, 2) + '\n');
  } else {
    const E = s.units.energy;
    const rows: [string, string][] = [
      ['scenario', `${s.name}${s.species ? ` (${s.species})` : ''}, δ² = ${num(s.delta2)}`],
      ['classical breaking λ', `${num(s.breaking_lambda)} (characteristics, 1/max(6∂ξu₀))`],
      ['1 % difference at λ', num(s.distance.lambda_1pct)],
      ['ħ-scaling exponent', `${num(s.scaling.exponent)} ± ${num(s.scaling.uncertainty, 2)} (expected 2: dispersion ∝ ħ²)`],
      ['phase-space energy drift', `classical sequence ${num(s.classical_phase_space.max.classical_energy_drift, 3)} ${E}, quantum sequence ${num(s.classical_phase_space.max.quantum_energy_drift, 3)} ${E}`],
      ...s.quantum.drives.map((d): [string, string] => [`Schrödinger: ${d.drive}`, `worst fidelity ${num(Math.min(...d.states.map((x) => x.fidelity)), 8)} over ${d.states.length} states; largest excess ${num(Math.max(...d.states.map((x) => Math.abs(x.excess_energy))), 3)} ${E}`]),
      ['outputs', files.join(', ')],
    ];
    process.stdout.write(`isotrap compare\n${table(rows)}\n`);
    for (const w of s.warnings) process.stderr.write(`warning: ${w}\n`);
  }
  return 0;
}

async function latticeCommand(configPath: string, opts: CommonOptions): Promise<number> {
  const config = loadScenario(configPath);
  const progress = makeProgress('lattice', opts.quiet ?? false);
  const result = runLattice(config, { onProgress: (p) => progress.update(p.fraction) });
  progress.stop();
  const files = writeLatticeOutputs(result, outputDir(config.name, opts), opts.force ?? false);
  files.push(...writeLatticeFigures(result, outputDir(config.name, opts), opts.force ?? false));
  const s = result.summary;
  if (opts.json) process.stdout.write(toJson({ ...s, outputs: files }, 2) + '\n');
  else {
    const E = s.units.energy;
    const v = s.verification;
    const rows: [string, string][] = [
      ['lattice', `spacing ${num(s.lattice.spacing)} ${s.units.length}, J = ${num(s.lattice.tunnelling)} ${E} (${s.lattice.tunnelling_source}), ${s.lattice.sites} sites`],
      ['effective mass', `m* = ${num(s.mass.effective_u)} u (atom ${num(s.mass.atomic_u)} u); δ² with m* = ${num(s.delta2.with_effective_mass)}`],
      ['sites per soliton width', num(s.soliton_width.sites_per_width)],
      ['largest CD coupling', `${num(s.couplings.largest_cd_coupling)} ${E} = ${num(s.couplings.fraction_of_band_width)} × band width 4J`],
      ['lattice fidelities', `worst infidelity with correction ${num(v.infidelity_cd_max, 3)}; bare ${v.fidelity_bare.map((f) => num(f, 4)).join(', ')}`],
      ['target', `${s.study.target_infidelity}: ${v.meets_target ? 'met' : 'NOT met'}`],
      ['recommendation', s.study.recommended ? `${num(s.study.recommended.sites_per_width)} sites per width (spacing ${num(s.study.recommended.spacing)} ${s.units.length})` : s.study.note],
      ['outputs', files.length > 4 ? `${files.length} files in ${outputDir(config.name, opts)}` : files.join(', ')],
    ];
    process.stdout.write(`isotrap lattice\n${table(rows)}\n`);
    for (const w of s.warnings) process.stderr.write(`warning: ${w}\n`);
  }
  return s.verification.meets_target ? 0 : 1;
}

async function reportCommand(dir: string, opts: CommonOptions): Promise<number> {
  const files = renderFolder(dir, { force: opts.force ?? false, toolVersion: version() });
  if (opts.json) process.stdout.write(toJson({ outputs: files }, 2) + '\n');
  else process.stdout.write(`isotrap report\n${table(files.map((f) => ['wrote', f] as [string, string]))}\n`);
  return 0;
}

export function buildProgram(handlers: { exit: (code: number) => void }): Command {
  const program = new Command();
  program
    .name('isotrap')
    .description('Design KdV-admissible trap sequences and verify exact cubic counterdiabatic driving')
    .version(version())
    .exitOverride()
    .configureOutput({ writeErr: (s) => process.stderr.write(s) });
  const common = (c: Command) =>
    c
      .option('--out <dir>', 'output folder (default: outputs/<name>)')
      .option('--force', 'overwrite results already in the output folder')
      .option('--json', 'print the summary as JSON on stdout')
      .option('--quiet', 'no progress on stderr');
  common(program.command('design').argument('<config>', 'YAML scenario').description('integrate the KdV (or Hopf) flow from the configured trap'))
    .action(async (config: string, opts: CommonOptions) => handlers.exit(await designCommand(config, opts)));
  common(program.command('verify').argument('<config>', 'YAML scenario with protocol (and verify) sections').description('Schrödinger proof: eigenstates, thermal ensembles and Fermi seas with and without the cubic correction'))
    .action(async (config: string, opts: CommonOptions) => handlers.exit(await verifyCommand(config, opts, false)));
  common(program.command('run').argument('<config>', 'YAML scenario').description('design → verify → report into one output folder'))
    .action(async (config: string, opts: CommonOptions) => handlers.exit(await verifyCommand(config, opts, true)));
  common(program.command('lattice').argument('<config>', 'YAML scenario with a lattice section').description('tight-binding realisation of the design: on-site energies, tunnellings and Peierls couplings, verified on the lattice'))
    .action(async (config: string, opts: CommonOptions) => handlers.exit(await latticeCommand(config, opts)));
  common(program.command('compare').argument('<config>', 'YAML scenario').description('quantum (KdV) against classical (Hopf) design: distance, ħ-scaling, phase-space check'))
    .action(async (config: string, opts: CommonOptions) => handlers.exit(await compareCommand(config, opts)));
  program
    .command('check')
    .argument('<sequence>', '.npy (with a JSON/YAML sidecar, e.g. a design folder) or .csv (x column + one column per frame headed by λ)')
    .description('test a potential sequence from elsewhere for admissibility to exact cubic counterdiabatic driving')
    .option('--out <dir>', 'output folder (default: <sequence>-check beside the input)')
    .option('--force', 'overwrite results already in the output folder')
    .option('--json', 'print the report as JSON on stdout')
    .option('--tolerance <t>', 'tolerance on the relative residual and spectral drift (default 1e-3)')
    .option('--sidecar <file>', 'JSON/YAML file with x, lambda and units')
    .option('--repair <mode>', 'coefficients of the repaired sequence: median or piecewise')
    .option('--length-unit <u>', 'length unit of the input: µm or ℓ')
    .option('--energy-unit <u>', 'energy unit of the input: h·kHz, µK or E₀')
    .option('--species <name>', 'species for lab units (Rb87, K40, …)')
    .option('--mass-u <m>', 'mass in u for a custom species')
    .option('--length-unit-um <l>', 'the length unit ℓ in µm')
    .option('--variational-duration <t>', 'also fit the variational correction and drive the sequence over this ramp time (sequence time unit)')
    .option('--variational-states <n>', 'low-energy states weighted in the variational fit (default: bound states + 4)')
    .option('--variational-temperature <T>', 'Boltzmann-weight the subspace at this temperature (nK lab, E₀ natural)')
    .option('--variational-ramp <kind>', 'ramp shape for the comparison: sin2, smooth or linear')
    .option('--variational-legendre <K>', 'Legendre terms in g (default 24)')
    .action(async (input: string, opts: CheckCliOptions) => handlers.exit(await checkCommand(input, opts)));
  program
    .command('report')
    .argument('<dir>', 'a finished output folder')
    .description('re-render the figures and report.html of an output folder without recomputing')
    .option('--force', 'overwrite figures already there')
    .option('--json', 'print the written files as JSON')
    .action(async (dir: string, opts: CommonOptions) => handlers.exit(await reportCommand(dir, opts)));
  return program;
}

/** Run the CLI; returns the process exit code. */
export async function main(argv: string[]): Promise<number> {
  let code = 0;
  const program = buildProgram({ exit: (c) => (code = c) });
  try {
    await program.parseAsync(argv);
    return code;
  } catch (err) {
    if (err instanceof CommanderError) return err.exitCode === 0 ? 0 : 2;
    if (err instanceof UserError || err instanceof NumericalError) {
      process.stderr.write(`isotrap: ${err.message}\n`);
      return err.exitCode;
    }
    process.stderr.write(`isotrap: internal error (please report): ${(err as Error).stack ?? String(err)}\n`);
    return 3;
  }
}
