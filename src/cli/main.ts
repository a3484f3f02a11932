/**
 * The isotrap command line: commander wiring; each command lives in commands/ (parse, call a job, print).
 * Exit codes: 0 success, 1 ran but failed its own acceptance (e.g. a flow that broke before λ_end),
 * 2 bad input (a UserError: message only, no stack trace), 3 internal error.
 */
import { Command, CommanderError } from 'commander';
import { AcceptanceFailure, NumericalError, UserError } from '../core/errors.ts';
import type { CheckCliOptions } from './commands/check.ts';
import type { ExportCliOptions } from './commands/export.ts';
import type { SweepCliOptions } from './commands/sweep.ts';
import { FIGURES_HELP, version, type CommonOptions } from './options.ts';

/** a command's entry: its argument and options in, exit code out */
type CommandFn<O> = (arg: string, opts: O) => Promise<number>;

/** a command loaded on first use, so that `--version`, `--help` and one command load only what they need */
function lazy<O>(load: () => Promise<CommandFn<O>>): CommandFn<O> {
  return async (arg, opts) => (await load())(arg, opts);
}
const checkCommand = lazy<CheckCliOptions>(async () => (await import('./commands/check.ts')).checkCommand);
const compareCommand = lazy<CommonOptions>(async () => (await import('./commands/compare.ts')).compareCommand);
const exportCommand = lazy<ExportCliOptions>(async () => (await import('./commands/export.ts')).exportCommand);
const designCommand = lazy<CommonOptions>(async () => (await import('./commands/design.ts')).designCommand);
const latticeCommand = lazy<CommonOptions>(async () => (await import('./commands/lattice.ts')).latticeCommand);
const reportCommand = lazy<CommonOptions>(async () => (await import('./commands/report.ts')).reportCommand);
const runCommand = lazy<CommonOptions>(async () => (await import('./commands/run.ts')).runCommand);
const verifyCommand = lazy<CommonOptions>(async () => (await import('./commands/verify.ts')).verifyCommand);
const sweepCommand = lazy<SweepCliOptions>(async () => (await import('./commands/sweep.ts')).sweepCommand);
const sweepMergeCommand = async (dirs: string[], opts: CommonOptions) => (await import('./commands/sweep.ts')).sweepMergeCommand(dirs, opts);

/** the sweep command and its merge subcommand */
function sweepProgram(program: Command, exit: (code: number) => void): void {
  const collect = (v: string, list: string[] = []) => [...list, v];
  const sweep = program
    .command('sweep')
    .description('design and verify at every point of a grid over one or two numeric config keys (points on all cores, resumable, shardable)')
    .argument('<config>', 'YAML scenario with protocol (and verify) sections')
    .option('--vary <key=spec>', 'a numeric config key and its values: a:b:lin:n, a:b:log:n or v1,v2,… (once or twice), e.g. protocol.duration=0.2:10:log:25', collect)
    .option('--target <infidelity>', 'the infidelity 1 − F each drive must reach (default 1e-3)')
    .option('--threads <n>', 'worker threads (default: every core)')
    .option('--shard <i/n>', "compute only share i of n (points with index ≡ i − 1 mod n), e.g. a batch job array's task; join with sweep merge")
    .option('--out <dir>', 'output folder (default: outputs/<name>-sweep, or outputs/<name>-sweep-<i>of<n> for a shard)')
    .option('--force', 'overwrite a finished sweep, or start an unfinished one afresh')
    .option('--json', 'print the answers as JSON on stdout')
    .option('--quiet', 'no progress on stderr')
    .option('--figures <size>', FIGURES_HELP)
    .action(async (config: string, opts: SweepCliOptions) => exit(await sweepCommand(config, opts)))
    .enablePositionalOptions();
  sweep
    .command('merge')
    .argument('<dirs...>', 'the shard folders of one sweep')
    .description('join the shards of one sweep into one folder (table, answers, figures, report)')
    .option('--out <dir>', 'output folder of the joined sweep')
    .option('--force', 'overwrite a sweep already there')
    .option('--json', 'print the answers as JSON on stdout')
    .option('--quiet', 'no progress on stderr')
    .option('--figures <size>', FIGURES_HELP)
    .action(async (dirs: string[], opts: CommonOptions) => exit(await sweepMergeCommand(dirs, opts)));
}

/** the check command's options */
function checkProgram(program: Command, exit: (code: number) => void): void {
  program
    .command('check')
    .argument('<sequence>', '.npy (with a JSON/YAML sidecar, e.g. a design folder) or .csv (x column + one column per frame headed by λ)')
    .description('test a potential sequence from elsewhere for admissibility to exact cubic counterdiabatic driving')
    .option('--out <dir>', 'output folder (default: <sequence>-check beside the input)')
    .option('--force', 'overwrite results already in the output folder')
    .option('--json', 'print the report as JSON on stdout')
    .option('--quiet', 'no progress on stderr')
    .option('--tolerance <t>', 'tolerance on the residual of the flow fit per interval and on the relative spectral drift (default 1e-3)')
    .option('--sidecar <file>', 'JSON/YAML file with x, lambda and/or time (ms), and units')
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
    .action(async (input: string, opts: CheckCliOptions) => exit(await checkCommand(input, opts)));
}

export function buildProgram(handlers: { exit: (code: number) => void }): Command {
  const program = new Command();
  program
    .name('isotrap')
    .description('Design KdV-admissible trap sequences and verify exact cubic counterdiabatic driving')
    .version(version())
    .exitOverride()
    .enablePositionalOptions() // a subcommand's options are its own (sweep and sweep merge both have --out)
    .configureOutput({ writeErr: (s) => process.stderr.write(s) });
  const common = (c: Command) =>
    c
      .option('--out <dir>', 'output folder (default: outputs/<name>)')
      .option('--force', 'overwrite results already in the output folder')
      .option('--json', 'print the summary as JSON on stdout')
      .option('--quiet', 'no progress on stderr');
  const scenarioCommand = (name: string, description: string, argument: string, run: (config: string, opts: CommonOptions) => Promise<number>) =>
    common(program.command(name).argument('<config>', argument).description(description)).action(async (config: string, opts: CommonOptions) => handlers.exit(await run(config, opts)));
  scenarioCommand('design', 'integrate the KdV (or Hopf) flow from the configured trap', 'YAML scenario', designCommand);
  scenarioCommand('verify', 'Schrödinger proof: eigenstates, thermal ensembles and Fermi seas with and without the cubic correction', 'YAML scenario with protocol (and verify) sections', verifyCommand);
  scenarioCommand('run', 'design → verify → report into one output folder', 'YAML scenario', runCommand).option('--figures <size>', FIGURES_HELP);
  scenarioCommand('lattice', 'tight-binding realisation of the design: on-site energies, tunnellings and Peierls couplings, verified on the lattice', 'YAML scenario with a lattice section', latticeCommand).option('--figures <size>', FIGURES_HELP);
  scenarioCommand('compare', 'quantum (KdV) against classical (Hopf) design: distance, ħ-scaling, phase-space check', 'YAML scenario', compareCommand).option('--figures <size>', FIGURES_HELP);
  checkProgram(program, handlers.exit);
  sweepProgram(program, handlers.exit);
  program
    .command('export')
    .argument('<dir>', 'a finished run/verify output folder (sequence.json, potential.npy, verify.json)')
    .description('the protocol in lab time at the hardware update rate: V(x, t), λ, λ̇, λ̈ and the correction in lab units (.npy + export.json)')
    .option('--rate <r>', 'hardware update rate, samples per time unit (kHz in lab units)')
    .option('--samples <n>', 'number of samples on [0, T], both ends included (instead of --rate)')
    .option('--csv', 'also write the potential and the ramp as CSV tables')
    .option('--psf-um <w>', "blur the painted potentials by the optics' Gaussian point-spread function of 1/e² radius w (µm) and simulate the blurred protocol")
    .option('--out <dir>', 'output folder (default: the run folder itself)')
    .option('--force', 'overwrite an export already in the output folder')
    .option('--json', 'print the sidecar as JSON on stdout')
    .option('--quiet', 'no progress on stderr')
    .action(async (dir: string, opts: ExportCliOptions) => handlers.exit(await exportCommand(dir, opts)));
  program
    .command('report')
    .argument('<dir>', 'a finished output folder')
    .description('re-render the figures and report.html of an output folder without recomputing')
    .option('--force', 'overwrite figures already there')
    .option('--json', 'print the written files as JSON')
    .option('--figures <size>', FIGURES_HELP)
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
    if (err instanceof UserError || err instanceof NumericalError || err instanceof AcceptanceFailure) {
      process.stderr.write(`isotrap: ${err.message}\n`);
      return err.exitCode;
    }
    process.stderr.write(`isotrap: internal error (please report): ${(err as Error).stack ?? String(err)}\n`);
    return 3;
  }
}
