/** `isotrap design <config>`: integrate the flow and write the sequence. */
import { checkOutputDir } from '../../io/files.ts';
import { DESIGN_FILES, runDesign, toJson, writeDesignOutputs, type DesignResult } from '../../jobs/design.ts';
import { loadScenario, outputDir, type CommonOptions } from '../options.ts';
import { makeProgress } from '../progress.ts';
import { num, table } from '../table.ts';

function designRows(result: DesignResult, dir: string): [string, string][] {
  const s = result.summary;
  const E = s.units.energy;
  return [
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
}

export async function designCommand(configPath: string, opts: CommonOptions): Promise<number> {
  const config = loadScenario(configPath);
  const dir = outputDir(config.name, opts);
  checkOutputDir(dir, { force: opts.force ?? false, produces: DESIGN_FILES }); // refuse before computing
  const progress = makeProgress('design', opts.quiet ?? false);
  const result = runDesign(config, { onProgress: (l, end) => progress.update(l / end), keepDense: false });
  progress.stop();
  const files = writeDesignOutputs(result, dir, opts.force ?? false);
  const s = result.summary;
  if (opts.json) {
    process.stdout.write(toJson({ ...s, outputs: files }, 2) + '\n');
  } else {
    process.stdout.write(`isotrap design\n${table(designRows(result, dir))}\n`);
    for (const w of s.warnings) process.stderr.write(`warning: ${w}\n`);
  }
  return s.complete ? 0 : 1;
}
