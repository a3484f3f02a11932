/** `isotrap check <sequence>`: admissibility of a potential sequence from elsewhere. */
import { basename, dirname, extname, join } from 'node:path';
import { UserError } from '../../core/errors.ts';
import { checkOutputDir } from '../../io/files.ts';
import { CHECK_FILES, checkExitCode, runCheckParallel, writeCheckOutputs, type CheckReport } from '../../jobs/check.ts';
import { toJson } from '../../jobs/design.ts';
import { isRampKind, RAMP_KINDS } from '../../protocol/ramp.ts';
import { numberOption, type CommonOptions } from '../options.ts';
import { num, table } from '../table.ts';
import { makeStagedProgress } from '../progress.ts';

export interface CheckCliOptions extends CommonOptions {
  tolerance?: string;
  sidecar?: string;
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

/** a whole-number option ≥ 1, or undefined */
function countOption(name: string, v: string | undefined): number | undefined {
  const x = numberOption(name, v);
  if (x !== undefined && !(Number.isInteger(x) && x >= 1)) throw new UserError(`option --${name} = ${v} is not allowed: must be a whole number ≥ 1`);
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
  return {
    duration,
    states: countOption('variational-states', opts.variationalStates),
    temperature: numberOption('variational-temperature', opts.variationalTemperature),
    ramp,
    legendre: countOption('variational-legendre', opts.variationalLegendre),
  };
}

function checkRows(r: CheckReport, files: string[]): [string, string][] {
  const passing = r.intervals.filter((it) => it.pass).length;
  const tauEnd = r.frames[r.frames.length - 1].tau;
  return [
    ['input', `${r.input}${r.sidecar ? ` (units from ${r.sidecar})` : ''}`],
    ['verdict', r.summary[0]],
    ['intervals', `${r.intervals.length}, ${passing} pass the KdV flow fit (max residual ${num(r.fit.max_residual, 3)})`],
    ['fitted τ', `0 … ${num(tauEnd, 4)} (${r.units.tau})`],
    ...(r.time_map ? [['time map', `τ(t) at ${r.time_map.time.length} lab times, peak dτ/dt ${num(Math.max(...r.time_map.rate), 3)} per ${r.units.time}`] as [string, string]] : []),
    ['bound-state drift', r.isospectral === null ? 'not tested (no bound state below the box threshold in some frame)' : `${num(r.spectral_drift, 3)} ${r.units.energy} (relative ${num(r.spectral_drift_relative, 3)})`],
    ['repaired sequence', `max distance ${num(r.repaired.max_distance, 3)} ${r.units.energy}, relative L² ${num(r.repaired.relative_l2, 3)}`],
    ...(r.grid.resampled ? [['grid', `${r.grid.input_points} input points resampled spectrally onto ${r.grid.points}`] as [string, string]] : []),
    ...(r.variational
      ? r.variational.comparison.drives.map((d): [string, string] => [`drive: ${d.label}`, `worst fidelity ${num(d.min_fidelity, 8)} over ${d.fidelity.length} states (ramp ${r.variational!.comparison.ramp}, ${r.variational!.comparison.duration})`])
      : []),
    ['outputs', files.join(', ')],
  ];
}

export async function checkCommand(input: string, opts: CheckCliOptions): Promise<number> {
  const dir = opts.out ?? join(dirname(input), `${basename(input, extname(input))}-check`);
  checkOutputDir(dir, { force: opts.force ?? false, produces: CHECK_FILES }); // refuse before computing
  const progress = makeStagedProgress(opts.quiet ?? false);
  let result: Awaited<ReturnType<typeof runCheckParallel>>;
  try {
    result = await runCheckParallel({
      input,
      tolerance: numberOption('tolerance', opts.tolerance),
      sidecar: opts.sidecar,
      units: {
        length_unit: opts.lengthUnit,
        energy_unit: opts.energyUnit,
        species: opts.species,
        mass_u: numberOption('mass-u', opts.massU),
        length_unit_um: numberOption('length-unit-um', opts.lengthUnitUm),
      },
      variational: variationalOptions(opts),
      onProgress: (done, total) => progress.update('check: flow fit', done / total),
      onVariationalProgress: (f) => progress.update('check: variational drives', f),
    });
  } finally {
    progress.stop();
  }
  const files = writeCheckOutputs(result, dir, opts.force ?? false);
  const r = result.report;
  if (opts.json) process.stdout.write(toJson(r, 2) + '\n');
  else {
    process.stdout.write(`isotrap check\n${table(checkRows(r, files))}\n`);
    for (const note of r.summary.slice(1).filter((line) => !r.failures.includes(line))) process.stdout.write(`  note: ${note}\n`);
    for (const f of r.failures) process.stdout.write(`  fails: ${f}\n`);
    if (r.failures.length > 0) process.stdout.write(`  (per-interval detail in ${files[0]})\n`);
    for (const w of r.warnings) process.stderr.write(`warning: ${w}\n`);
  }
  return checkExitCode(result);
}
