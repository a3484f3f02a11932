/** `isotrap export <dir>`: the protocol of a finished run/verify folder, or of a check folder with its variational
 *  correction, in lab time at the hardware's update rate. */
import { toJson } from '../../jobs/design.ts';
import { runExport, writeExportOutputs } from '../../jobs/export.ts';
import { isCheckFolder, runCheckExport } from '../../jobs/export-check.ts';
import { numberOption, type CommonOptions } from '../options.ts';
import { num, table } from '../table.ts';
import { makeStagedProgress } from '../progress.ts';

export interface ExportCliOptions extends CommonOptions {
  rate?: string;
  samples?: string;
  csv?: boolean;
  psfUm?: string;
}

export async function exportCommand(dir: string, opts: ExportCliOptions): Promise<number> {
  const progress = makeStagedProgress(opts.quiet ?? false);
  let result: ReturnType<typeof runExport>;
  try {
    result = (isCheckFolder(dir) ? runCheckExport : runExport)(dir, {
      rate: numberOption('rate', opts.rate), samples: numberOption('samples', opts.samples), psfUm: numberOption('psf-um', opts.psfUm), csv: opts.csv ?? false, out: opts.out, force: opts.force ?? false,
      onProgress: (f, stage) => progress.update(stage, f),
    });
  } finally {
    progress.stop();
  }
  const files = writeExportOutputs(result, opts.force ?? false);
  const f = result.file;
  if (opts.json) {
    process.stdout.write(toJson({ ...f, outputs: files }, 2) + '\n');
    return 0;
  }
  const u = f.units;
  const c = f.correction;
  const rate = result.arrays.lambda_rate.data.reduce((m, v) => Math.max(m, Math.abs(v)), 0);
  const rows: [string, string][] = [
    ['protocol', `${f.protocol.ramp} ramp over ${f.protocol.duration} ${u.time}, λ = ${f.protocol.lambda_start ?? 0} … ${f.protocol.lambda_end}`],
    ['samples', `${f.sampling.samples}, every ${num(f.sampling.step)} ${u.time}`],
    ['largest λ̇', `${num(rate)} per ${u.time} (T·λ̇ = ${num(rate * f.protocol.duration)})`],
    ['p³ term at k_ref', `${num(c.max_cubic_energy)} ${u.energy} at t = ${num(c.at_time_cubic)} ${u.time} (k_ref = ${num(c.k_ref)}/${u.length})`],
    ['½{w, p} term at k_ref', `${num(c.max_linear_energy)} ${u.energy} at t = ${num(c.at_time_linear)} ${u.time} (largest |w| = ${num(c.max_velocity)} ${u.velocity})`],
    f.source_kind === 'check'
      ? ['correction', `the variational â p³ + ½{g, p} of check.json; input frames reproduced to ${num(f.accuracy.frames_agreement, 2)} of max|V(0)|`]
      : ['accuracy', `flow tolerance ${f.accuracy.flow_tolerance}; stored frames reproduced to ${num(f.accuracy.frames_agreement, 2)} of max|V(0)|`],
    ...(f.painted?.drives ?? []).map((d): [string, string] => [`painted potential (${d.drive})`, `${num(d.deepest)} … ${num(d.highest)} ${u.energy} (starting trap ${num(f.painted?.start.deepest ?? 0)} … ${num(f.painted?.start.highest ?? 0)})` +
      (d.fidelity ? `; simulated: infidelity ${num(1 - d.fidelity[0], 2)} (ground state), ${num(1 - Math.min(...d.fidelity), 2)} (worst of ${d.fidelity.length})` : '')]),
    ...(f.painted?.psf?.drives ?? []).map((d): [string, string] => [`blurred by ${f.painted?.psf?.radius} µm (${d.drive})`, `fidelity lost ${num(d.lost, 3)} (ground state ${num(d.fidelity[0], 10)} blurred, ${num(d.fidelity_unblurred[0] ?? NaN, 10)} sharp)`]),
    ['outputs', result.dir],
  ];
  process.stdout.write(`isotrap export\n${table(rows)}\n`);
  for (const w of f.warnings) process.stderr.write(`warning: ${w}\n`);
  return 0;
}
