/** `isotrap verify <config>`: design, then the Schrödinger proof, into one output folder. */
import { toJson } from '../../jobs/design.ts';
import { runPipeline, type PipelineResult } from '../../jobs/run.ts';
import type { VerifyFile } from '../../jobs/verify.ts';
import { figureSizeOption, outputDir, version, type CommonOptions } from '../options.ts';
import { loadScenario } from '../scenario.ts';
import { makeStagedProgress } from '../progress.ts';
import { num, table } from '../table.ts';

function verifyRows(v: VerifyFile): [string, string][] {
  const E = v.units.energy;
  const rows: [string, string][] = [
    ['protocol', `${v.protocol.ramp} ramp, ${v.protocol.duration} ${v.units.time}, λ = 0 … ${v.protocol.lambda_end}`],
    ['eigenstates', `${v.states.length} tracked (${v.bound_states} bound); ${v.eigen.method}`],
  ];
  for (const st of v.states) {
    rows.push([`state ${st.index} (E = ${num(st.energy)} ${E})`, `fidelity ${num(st.fidelity_cd, 10)} with correction, ${num(st.fidelity_bare, 4)} bare; excess ${num(st.excess_cd, 3)} / ${num(st.excess_bare, 3)} ${E}`]);
  }
  if (v.thermal) {
    rows.push([`thermal (T = ${v.thermal.temperature} ${v.thermal.unit})`, `mean state fidelity ${num(v.thermal.fidelity_cd, 10)} / ${num(v.thermal.fidelity_bare, 4)}, excess energy ${num(v.thermal.mean_excess_cd, 3)} / ${num(v.thermal.mean_excess_bare, 3)} ${E}`]);
    rows.push(['thermal, Uhlmann fidelity', `${num(v.thermal.uhlmann_cd, 10)} / ${num(v.thermal.uhlmann_bare, 4)} (evolved against the final Gibbs state)`]);
  }
  if (v.fermions) rows.push([`Fermi sea (${v.fermions.count} fermions)`, `fidelity ${num(v.fermions.fidelity_cd, 10)} / ${num(v.fermions.fidelity_bare, 4)}`]);
  const p = v.painted;
  for (const d of p?.drives ?? []) {
    const name = d.kind === 'ground' ? 'painted, ground state exact' : 'painted, best ½{g, p}';
    rows.push([name, `ground-state fidelity ${num(d.fidelity[0], 10)}, worst ${num(d.min_fidelity, 4)}; potential ${num(d.deepest)} … ${num(d.highest)} ${E} (start ${num(p?.start.deepest ?? 0)} … ${num(p?.start.highest ?? 0)})`]);
  }
  for (const g of p?.gauge_check ?? []) rows.push([`gauge check (${g.drive})`, `painted vs ½{g, p}: ${num(g.max_difference, 2)} over ${g.states} bound state(s), budget ${num(g.budget, 2)}: ${g.passed ? 'passed' : 'FAILED'}`]);
  const c = v.cd_strength;
  rows.push(['correction out of occupied states', `max |λ̇|‖(1 − P)AP‖ = ${num(c.max_leakage)} ${E} at t = ${num(c.at_time)} ${v.units.time} (p³ part alone ${num(c.max_leakage_cubic)}, potential part alone ${num(c.max_leakage_potential)}: they partly cancel)`]);
  rows.push(['largest transition element', `max |λ̇⟨m|A|n⟩| = ${num(c.max_window)} ${E} (occupied n, tracked m ≠ n)`]);
  if (v.classical) rows.push(['classical sequence + correction', `to λ = ${num(v.classical.lambda_reached)} (t = ${num(v.classical.time_reached)} ${v.units.time}): worst fidelity ${num(Math.min(...v.classical.fidelity), 6)}`]);
  const ia = v.interaction;
  if (ia) {
    const loss = (d: string) => { const x = ia.drives.find((e) => e.drive === d); return x ? `${Math.max(0, 1 - x.fidelity).toExponential(3)} (excess ${x.excess.toExponential(3)} ${E}/atom)` : '—'; };
    rows.push([`condensate (${ia.atoms} atoms)`, `g₁D = ${num(ia.g1d, 4)} ${ia.g1d_unit}/atom; μ = ${num(ia.start.chemical_potential, 5)} → ${num(ia.end.chemical_potential, 5)} ${E}`]);
    rows.push(['condensate 1 − F: cubic', loss('cd')]);
    rows.push(['condensate 1 − F: painted (condensate)', loss('painted_condensate')]);
    rows.push(['condensate 1 − F: bare', loss('bare')]);
    rows.push(['single particle 1 − F: cubic / bare', `${Math.max(0, 1 - ia.single_particle.fidelity_cd).toExponential(3)} / ${Math.max(0, 1 - ia.single_particle.fidelity_bare).toExponential(3)}`]);
    rows.push(['condensate verdict', ia.verdict]);
  }
  rows.push(['isospectrality drift', `${num(v.isospectral_drift, 3)} ${E}`]);
  rows.push(['verdict', v.acceptance]);
  return rows;
}

/** print the summary of a design → verify (→ report) pipeline; returns the exit code (1 when not accepted) */
export function printPipeline(r: PipelineResult, dir: string, opts: CommonOptions, command: string): number {
  const v = r.verify.file;
  const s = r.design.summary;
  if (opts.json) {
    process.stdout.write(toJson({ design: s, ...v, outputs: r.files }, 2) + '\n');
  } else {
    const E = s.units.energy;
    const rows: [string, string][] = [
      ['scenario', `${s.name}${r.design.ctx.speciesLabel ? ` (${r.design.ctx.speciesLabel})` : ' (natural units)'}`],
      ['units', `${s.scales.ell}, ${s.scales.E0}, ${s.scales.t0}`],
      ['δ² = ħ²/(2mV₀w²)', num(s.delta2)],
      ['solitons predicted / found', `${s.predicted_solitons.map((p) => num(p.depth)).join(', ') || 'none'} / ${s.wells_found.map((w) => num(w.depth)).join(', ') || 'none'} ${E}`],
      ...verifyRows(v),
      ['outputs', dir],
    ];
    process.stdout.write(`isotrap ${command}\n${table(rows)}\n`);
    for (const w of [...s.warnings, ...v.warnings]) process.stderr.write(`warning: ${w}\n`);
  }
  return v.accepted ? 0 : 1;
}

/** a verify estimated to take at least this long says so before it starts (seconds; common practice) */
const ESTIMATE_SHOWN_FROM = 10;

/** `verify` (report: false) and `run` (report: true) */
export async function pipelineCommand(configPath: string, opts: CommonOptions, report: boolean): Promise<number> {
  const figures = report ? figureSizeOption(opts.figures) : undefined;
  const config = loadScenario(configPath);
  const dir = outputDir(config.name, opts);
  const progress = makeStagedProgress(opts.quiet ?? false);
  let result: PipelineResult;
  try {
    result = await runPipeline(config, {
      dir, force: opts.force ?? false, report, figures, toolVersion: version(), onProgress: (stage, f) => progress.update(stage, f),
      onEstimate: (e) => { if (!opts.quiet && e.seconds >= ESTIMATE_SHOWN_FROM) process.stderr.write(`verify: ${e.text}\n`); },
    });
  } finally {
    progress.stop();
  }
  return printPipeline(result, dir, opts, report ? 'run' : 'verify');
}

export async function verifyCommand(configPath: string, opts: CommonOptions): Promise<number> {
  return pipelineCommand(configPath, opts, false);
}
