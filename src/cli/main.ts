/**
 * The isotrap command line. Thin: parse options, call the typed job functions in src/jobs, print a summary.
 * Exit codes: 0 success, 1 ran but failed its own acceptance (e.g. a flow that broke before λ_end),
 * 2 bad input (a UserError: message only, no stack trace), 3 internal error.
 */
import { Command, CommanderError } from 'commander';
import { join } from 'node:path';
import { readFileSync } from 'node:fs';
import { loadConfig } from '../io/config.ts';
import { UserError } from '../io/errors.ts';
import { runDesign, toJson, writeDesignOutputs } from '../jobs/design.ts';
import { renderFolder } from '../jobs/report.ts';
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
  const config = loadConfig(configPath);
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
    if (err instanceof UserError) {
      process.stderr.write(`isotrap: ${err.message}\n`);
      return err.exitCode;
    }
    process.stderr.write(`isotrap: internal error (please report): ${(err as Error).stack ?? String(err)}\n`);
    return 3;
  }
}
