/** `isotrap lattice <config>`: the tight-binding realisation of the design, verified on the lattice. */
import { toJson } from '../../jobs/design.ts';
import { checkOutputDir } from '../../io/files.ts';
import { configIdentity } from '../../io/run-folder.ts';
import { LATTICE_FILES, LATTICE_REPORT_FILES, runLattice, writeLatticeOutputs, type LatticeSummary } from '../../jobs/lattice.ts';
import { renderFolder } from '../../jobs/report.ts';
import { latticeSummaryRows } from '../../report/panels/lattice.ts';
import { figureSizeOption, outputDir, version, type CommonOptions } from '../options.ts';
import { loadScenario } from '../scenario.ts';
import { makeStagedProgress } from '../progress.ts';
import { table } from '../table.ts';

/** the summary rows of the report page (report/panels/lattice.ts), each value with its unit, and the outputs */
function latticeRows(s: LatticeSummary, files: string[], dir: string): [string, string][] {
  const rows = latticeSummaryRows(s).map((r): [string, string] => [r.key, `${r.value}${r.unit ? ` ${r.unit}` : ''}`]);
  return [...rows, ['outputs', `${files.length} files in ${dir} (report.html: figures and this summary)`]];
}

export async function latticeCommand(configPath: string, opts: CommonOptions): Promise<number> {
  const started = performance.now();
  const figures = figureSizeOption(opts.figures);
  const config = loadScenario(configPath);
  const dir = outputDir(config.name, opts);
  const force = opts.force ?? false;
  checkOutputDir(dir, { force, produces: [...LATTICE_FILES, ...LATTICE_REPORT_FILES] }); // refuse before computing
  const progress = makeStagedProgress(opts.quiet ?? false);
  let result: ReturnType<typeof runLattice>;
  try {
    result = runLattice(config, { onProgress: (p) => progress.update(`lattice: ${p.stage}`, p.fraction) });
  } finally {
    progress.stop();
  }
  const files = writeLatticeOutputs(result, dir, force, configIdentity(config));
  files.push(...renderFolder(dir, { force, toolVersion: version(), runSeconds: (performance.now() - started) / 1000, figures, kind: 'lattice' }));
  const s = result.summary;
  if (opts.json) process.stdout.write(toJson({ ...s, outputs: files }, 2) + '\n');
  else {
    process.stdout.write(`isotrap lattice\n${table(latticeRows(s, files, dir))}\n`);
    for (const w of s.warnings) process.stderr.write(`warning: ${w}\n`);
  }
  return s.verification.meets_target ? 0 : 1;
}
