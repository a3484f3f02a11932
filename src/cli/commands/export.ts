/** `isotrap export <dir>`: the protocol of a finished run/verify folder in lab time, at the hardware's update rate. */
import { toJson } from '../../jobs/design.ts';
import { runExport, writeExportOutputs } from '../../jobs/export.ts';
import { numberOption, type CommonOptions } from '../options.ts';
import { num, table } from '../table.ts';

export interface ExportCliOptions extends CommonOptions {
  rate?: string;
  samples?: string;
  csv?: boolean;
}

export async function exportCommand(dir: string, opts: ExportCliOptions): Promise<number> {
  const result = runExport(dir, { rate: numberOption('rate', opts.rate), samples: numberOption('samples', opts.samples), csv: opts.csv ?? false, out: opts.out, force: opts.force ?? false });
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
    ['protocol', `${f.protocol.ramp} ramp over ${f.protocol.duration} ${u.time}, λ = 0 … ${f.protocol.lambda_end}`],
    ['samples', `${f.sampling.samples}, every ${num(f.sampling.step)} ${u.time}`],
    ['largest λ̇', `${num(rate)} per ${u.time} (T·λ̇ = ${num(rate * f.protocol.duration)})`],
    ['p³ term at k_ref', `${num(c.max_cubic_energy)} ${u.energy} at t = ${num(c.at_time_cubic)} ${u.time} (k_ref = ${num(c.k_ref)}/${u.length})`],
    ['½{w, p} term at k_ref', `${num(c.max_linear_energy)} ${u.energy} at t = ${num(c.at_time_linear)} ${u.time} (largest |w| = ${num(c.max_velocity)} ${u.velocity})`],
    ['accuracy', `flow tolerance ${f.accuracy.flow_tolerance}; stored frames reproduced to ${num(f.accuracy.frames_agreement, 2)} of max|V(0)|`],
    ['outputs', result.dir],
  ];
  process.stdout.write(`isotrap export\n${table(rows)}\n`);
  return 0;
}
