/** `isotrap lattice <config>`: the tight-binding realisation of the design, verified on the lattice. */
import { toJson } from '../../jobs/design.ts';
import { checkOutputDir } from '../../io/files.ts';
import { configIdentity } from '../../io/run-folder.ts';
import { LATTICE_FILES, runLattice, writeLatticeOutputs, type LatticeSummary } from '../../jobs/lattice.ts';
import { writeLatticeFigures } from '../../jobs/report.ts';
import { figureSizeOption, loadScenario, outputDir, type CommonOptions } from '../options.ts';
import { makeStagedProgress } from '../progress.ts';
import { num, table } from '../table.ts';

function latticeRows(s: LatticeSummary, files: string[], dir: string): [string, string][] {
  const E = s.units.energy;
  const v = s.verification;
  return [
    ['lattice', `spacing ${num(s.lattice.spacing)} ${s.units.length}, J = ${num(s.lattice.tunnelling)} ${E} (${s.lattice.tunnelling_source}), ${s.lattice.sites} sites`],
    ['effective mass', `m* = ${num(s.mass.effective_u)} u (atom ${num(s.mass.atomic_u)} u); δ² with m* = ${num(s.delta2.with_effective_mass)}`],
    ['sites per soliton width', num(s.soliton_width.sites_per_width)],
    ['largest CD coupling', `${num(s.couplings.largest_cd_coupling)} ${E} = ${num(s.couplings.fraction_of_band_width)} × band width 4J`],
    ['lattice fidelities', `worst infidelity with correction ${num(v.infidelity_cd_max, 3)}; bare ${v.fidelity_bare.map((f) => num(f, 4)).join(', ')}`],
    ['target', `${s.study.target_infidelity}: ${v.meets_target ? 'met' : 'NOT met'}`],
    ['recommendation', s.study.recommended ? `${num(s.study.recommended.sites_per_width)} sites per width (spacing ${num(s.study.recommended.spacing)} ${s.units.length})` : s.study.note],
    ['outputs', files.length > 4 ? `${files.length} files in ${dir}` : files.join(', ')],
  ];
}

export async function latticeCommand(configPath: string, opts: CommonOptions): Promise<number> {
  const figures = figureSizeOption(opts.figures);
  const config = loadScenario(configPath);
  const dir = outputDir(config.name, opts);
  checkOutputDir(dir, { force: opts.force ?? false, produces: LATTICE_FILES }); // refuse before computing
  const progress = makeStagedProgress(opts.quiet ?? false);
  let result: ReturnType<typeof runLattice>;
  try {
    result = runLattice(config, { onProgress: (p) => progress.update(`lattice: ${p.stage}`, p.fraction) });
  } finally {
    progress.stop();
  }
  const files = [...writeLatticeOutputs(result, dir, opts.force ?? false, configIdentity(config)), ...writeLatticeFigures(result, dir, opts.force ?? false, figures)];
  const s = result.summary;
  if (opts.json) process.stdout.write(toJson({ ...s, outputs: files }, 2) + '\n');
  else {
    process.stdout.write(`isotrap lattice\n${table(latticeRows(s, files, dir))}\n`);
    for (const w of s.warnings) process.stderr.write(`warning: ${w}\n`);
  }
  return s.verification.meets_target ? 0 : 1;
}
