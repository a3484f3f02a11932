/** `isotrap compare <config>`: quantum against classical design of the same trap. */
import { checkOutputDir } from '../../io/files.ts';
import { configIdentity } from '../../io/run-folder.ts';
import { COMPARE_FILES, runCompareWithDrives, writeCompareFigures, writeCompareOutputs, type CompareSummary } from '../../jobs/compare.ts';
import { toJson } from '../../jobs/design.ts';
import { figureSizeOption, outputDir, type CommonOptions } from '../options.ts';
import { loadScenario } from '../scenario.ts';
import { makeStagedProgress } from '../progress.ts';
import { num, table } from '../table.ts';

function compareRows(s: CompareSummary, files: string[]): [string, string][] {
  const E = s.units.energy;
  return [
    ['scenario', `${s.name}${s.species ? ` (${s.species})` : ''}, δ² = ${num(s.delta2)}`],
    ['classical breaking λ', `${num(s.breaking_lambda)} (characteristics, 1/max(6∂ξu₀))`],
    ['1 % difference at λ', num(s.distance.lambda_1pct)],
    ['ħ-scaling exponent', `${num(s.scaling.exponent)} ± ${num(s.scaling.uncertainty, 2)} (expected 2: dispersion ∝ ħ²)`],
    ['phase-space energy drift', `classical sequence ${num(s.classical_phase_space.max.classical_energy_drift, 3)} ${E}, quantum sequence ${num(s.classical_phase_space.max.quantum_energy_drift, 3)} ${E}`],
    ...s.quantum.drives.map((d): [string, string] => [`Schrödinger: ${d.drive}`, `worst fidelity ${num(Math.min(...d.states.map((x) => x.fidelity)), 8)} over ${d.states.length} states; largest excess ${num(Math.max(...d.states.map((x) => Math.abs(x.excess_energy))), 3)} ${E}`]),
    ['outputs', files.join(', ')],
  ];
}

export async function compareCommand(configPath: string, opts: CommonOptions): Promise<number> {
  const figures = figureSizeOption(opts.figures);
  const config = loadScenario(configPath);
  const dir = outputDir(config.name, opts);
  checkOutputDir(dir, { force: opts.force ?? false, produces: COMPARE_FILES }); // refuse before computing
  const progress = makeStagedProgress(opts.quiet ?? false);
  let s: CompareSummary;
  try {
    s = runCompareWithDrives(config, { onProgress: (stage, fraction) => progress.update(`compare: ${stage}`, fraction) });
  } finally {
    progress.stop();
  }
  const files = [...writeCompareOutputs(s, dir, opts.force ?? false, configIdentity(config)), ...writeCompareFigures(s, dir, opts.force ?? false, figures)];
  if (opts.json) {
    const { sequences: _omit, ...rest } = s;
    process.stdout.write(toJson({ ...rest, outputs: files }, 2) + '\n');
  } else {
    process.stdout.write(`isotrap compare\n${table(compareRows(s, files))}\n`);
    for (const w of s.warnings) process.stderr.write(`warning: ${w}\n`);
  }
  return 0;
}
