/** `isotrap design <config>`: integrate the flow and write the sequence. */
import { checkOutputDir } from '../../io/files.ts';
import { DESIGN_FILES, runDesign, toJson, writeDesignOutputs, type DesignResult, type DesignSummary } from '../../jobs/design.ts';
import { outputDir, type CommonOptions } from '../options.ts';
import { loadScenario } from '../scenario.ts';
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
    ['bound-state drift', s.spectral_drift === null ? 'not tested (no bound state below the box threshold)' : `${num(s.spectral_drift, 3)} ${E} (isospectrality along the sequence)`],
    ['predicted solitons', s.predicted_solitons.map((p) => `depth ${num(p.depth)} ${E}, speed ${num(p.speed)} ${s.units.speed}`).join('; ') || 'none'],
    ['wells in last frame', s.wells_found.map((w) => `depth ${num(w.depth)} ${E} at ${num(w.position)} ${s.units.length}`).join('; ') || 'none'],
    ...budgetRows(s),
    ...outcomeRows(s),
    ['outputs', dir],
  ];
}

function budgetRows(s: DesignSummary): [string, string][] {
  const b = s.budgets;
  const L = s.units.length;
  const limit = (v: number | null, u: string) => (v === null ? '' : `; budget ${num(v)} ${u}`);
  return [
    ['deepest potential', `${num(b.deepest)} ${s.units.energy} at λ = ${num(b.deepest_lambda)}: ${num(b.depth_ratio)} × the starting depth (laser power)${limit(b.limit_depth, s.units.energy)}`],
    ['narrowest well', b.narrowest_feature === null ? 'none' : `${num(b.narrowest_feature)} ${L} full width at half depth at λ = ${num(b.narrowest_lambda)} (start ${num(b.start_feature)} ${L}; optical resolution)${limit(b.limit_feature, L)}`],
  ];
}

function outcomeRows(s: DesignSummary): [string, string][] {
  const o = s.outcome;
  if (!o) return [];
  const rows: [string, string][] = [[`${o.kind} outcome`, `${o.met ? 'met' : 'NOT met'}: ${o.verdict}; flow against the exact N-soliton sequence ${num(o.exact_distance_relative, 3)} of the depth`]];
  if (o.fit) rows.push(['reflectionless fit', `relative L² distance ${num(o.fit.distance_l2_relative, 3)} from the trap (largest ${num(o.fit.max_difference, 3)} ${s.units.energy}); the trap itself would shed ${num(o.fit.radiation_fraction, 3)} of ∫V² as radiation`]);
  rows.push(['wells at the end', o.wells.map((w) => `depth ${num(w.reached_depth)} ${s.units.energy} at ${num(w.reached_position)} ${s.units.length}`).join('; ')]);
  return rows;
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
