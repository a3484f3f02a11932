/**
 * Figures and summary rows of a lattice realisation (lattice.json and its arrays): the nearest-neighbour tunnelling
 * amplitudes as a space–time map, the lattice infidelity with the correction against sites per soliton width with
 * the configured lattice marked, and the rows that both the printed summary and the HTML page show.
 */
import type { LatticeChoice } from '../../lattice/advice.ts';
import type { SummaryRow } from '../../io/formats/read.ts';
import type { LatticeSummary, LatticeTables } from '../../io/formats/lattice.ts';
import { heatmap } from '../heatmap.ts';
import type { ReportFigure } from '../html.ts';
import { lineChart } from '../line-chart.ts';
import type { FigureSize } from '../style.ts';
import { INFIDELITY_FLOOR } from './verify.ts';

/** a number to `digits` significant digits, "—" when it is not finite (summary rows and captions share it) */
export function sig(v: number | null, digits = 4): string {
  return v === null || !Number.isFinite(v) ? '—' : Number(v.toPrecision(digits)).toString();
}

/** the tables the figures read */
export type LatticeFigureTables = Pick<LatticeTables, 'sites' | 'times' | 'nnAmplitude'>;

/** the whole lattice is shown: the tunnelling J couples every bond, so there is no empty part to crop */
function couplingsFigure(s: LatticeSummary, t: LatticeFigureTables, size: FigureSize): ReportFigure {
  const bonds = t.sites.length - 1;
  const rows = Array.from({ length: t.times.length }, (_, i) => t.nnAmplitude.slice(i * bonds, (i + 1) * bonds));
  const bondX = Float64Array.from({ length: bonds }, (_, j) => 0.5 * (t.sites[j] + t.sites[j + 1]));
  const E = s.units.energy;
  return {
    id: 'lattice-couplings',
    caption:
      `Nearest-neighbour tunnelling amplitude |J_j,j+1| = |−J + i b_j| (the lattice tunnelling J = ${sig(s.lattice.tunnelling)} ${E} with the Peierls part b_j of the correction) ` +
      `at each bond against time; largest ${sig(s.couplings.largest_nn_amplitude)} ${E}; the largest correction coupling is ${sig(s.couplings.largest_cd_coupling)} ${E} = ` +
      `${sig(s.couplings.fraction_of_band_width)} × the band width 4J.`,
    svg: heatmap({
      xLabel: `bond position x (${s.units.length})`,
      yLabel: `time t (${s.units.time})`,
      zLabel: `tunnelling amplitude |J_j,j+1| (${E})`,
      x: bondX,
      y: t.times,
      z: rows,
      width: 'double',
      size,
    }),
  };
}

function convergenceFigure(s: LatticeSummary, size: FigureSize): ReportFigure | null {
  const study = s.study.rows;
  if (study.length === 0) return null;
  const states = study[0].infidelity_cd.length;
  const perState = Array.from({ length: states }, (_, n) => ({
    name: `state ${n}`,
    x: study.map((r) => r.sites_per_width),
    y: study.map((r) => Math.max(r.infidelity_cd[n], INFIDELITY_FLOOR)),
    markers: true,
  }));
  const own = s.soliton_width.sites_per_width;
  const worst = s.verification.infidelity_cd_max;
  const configured = { name: `configured lattice (worst state)`, x: [own], y: [Math.max(worst, INFIDELITY_FLOOR)], markers: true, dashed: false };
  const xs = [...study.map((r) => r.sites_per_width), own];
  const target = { name: 'target', x: [Math.min(...xs), Math.max(...xs)], y: [s.study.target_infidelity, s.study.target_infidelity], dashed: true };
  return {
    id: 'lattice-convergence',
    caption:
      `Lattice infidelity 1 − F with the correction against sites per soliton width, for each tracked state; the configured lattice (${sig(own)} sites per width, ` +
      `worst infidelity ${sig(worst, 3)}) is marked; target ${s.study.target_infidelity}${s.study.observed_order !== null ? `, observed order ${s.study.observed_order.toFixed(2)} in the spacing` : ''}.`,
    svg: lineChart({ xLabel: 'sites per soliton width (dimensionless)', yLabel: 'infidelity 1 − F', series: [...perState, configured, target], logY: true, width: 'single', size }),
  };
}

/** Figures of a lattice realisation: the coupling map, and the convergence study when it has rows. */
export function latticeFigures(summary: LatticeSummary, tables: LatticeFigureTables, size: FigureSize = 'paper'): ReportFigure[] {
  const figures = [couplingsFigure(summary, tables, size)];
  const conv = convergenceFigure(summary, size);
  if (conv) figures.push(conv);
  return figures;
}

const SOURCE_TEXT: Record<string, string> = {
  band: 'band structure: a quarter of the lowest Mathieu band width',
  estimate: 'deep-lattice estimate (Zwerger 2003)',
  given: 'as configured',
  implied: 'E₀ℓ²/d² of the effective mass',
};

/** one line per choice of lattice/advice.ts, with its units */
export function choiceText(c: LatticeChoice, s: LatticeSummary): string {
  const n = `${sig(c.sites_per_width, 3)} sites per width`;
  switch (c.kind) {
    case 'wavelength':
      return `${c.wavelength_nm} nm light (d = ${sig(c.spacing_um)} µm) at ${c.depth_recoil === null ? 'the same J/E_R' : `the same depth s = ${sig(c.depth_recoil)} E_R`}, J = ${sig(c.tunnelling_hz)} h·Hz (m*, trap and ramp unchanged): ${n}`;
    case 'lattice_depth':
      return `the same light, a shallower lattice s = ${sig(c.depth_recoil)} E_R (J = ${sig(c.tunnelling_hz)} h·Hz) and every length of the trap × ${sig(c.widen_trap_by)} (trap depths and ramp duration unchanged): ${n}`;
    case 'spacing':
      return `a lattice spacing d ≤ ${sig(c.spacing_l)} ℓ (J = E₀ℓ²/d²): ${n}`;
    case 'trap_and_ramp':
      return `the same lattice, every length of the trap × ${sig(c.widen_trap_by)}, its depths × ${sig(c.depth_factor)}, protocol.duration × ${sig(c.duration_factor)} (${sig(s.protocol.duration * c.duration_factor)} ${s.units.time}) and flow.lambda_end × ${sig(c.lambda_end_factor)}: ${n}`;
  }
}

/** the rows of the lattice summary: printed by `isotrap lattice` and shown on its report page */
export function latticeSummaryRows(s: LatticeSummary): SummaryRow[] {
  const E = s.units.energy;
  const L = s.units.length;
  const v = s.verification;
  const d = s.lattice.depth;
  const rows: SummaryRow[] = [
    { key: 'scenario', value: s.name },
    { key: 'lattice spacing d', value: sig(s.lattice.spacing), unit: L },
    { key: 'tunnelling J', value: `${sig(s.lattice.tunnelling)} ${E} (${SOURCE_TEXT[s.lattice.tunnelling_source] ?? s.lattice.tunnelling_source})` },
  ];
  if (d) {
    rows.push(
      { key: 'deep-lattice estimate of J', value: `${sig(d.estimate_hz)} h·Hz (${d.relative_difference >= 0 ? '+' : ''}${sig(100 * d.relative_difference, 3)} % against the band value ${sig(d.band_hz)} h·Hz) at s = ${sig(d.s)} E_R, E_R = ${sig(d.recoil_hz)} h·Hz` },
      { key: 'band-curvature mass', value: `m*/m = ${sig(d.band_mass_ratio)} at the band bottom (k·p perturbation theory); the design uses m* = ħ²/(2Jd²): m*/m = ${sig(s.mass.ratio_effective_to_atomic)}` },
    );
  }
  rows.push(
    s.mass.effective_u !== null ? { key: 'effective mass m*', value: `${sig(s.mass.effective_u)} u (atom ${sig(s.mass.atomic_u)} u)` } : { key: 'effective mass m*', value: 'the mass of the natural units' },
    { key: 'dispersion number δ² with m*', value: sig(s.delta2.with_effective_mass) },
    { key: 'sites', value: `${s.lattice.sites}, ${sig(s.soliton_width.sites_per_width)} per soliton width (width ${sig(s.soliton_width.value)} ${L})` },
    { key: 'largest tunnelling amplitude |J_j,j+1|', value: sig(s.couplings.largest_nn_amplitude), unit: E },
    { key: 'largest correction coupling', value: `${sig(s.couplings.largest_cd_coupling)} ${E} = ${sig(s.couplings.fraction_of_band_width)} × band width 4J` },
    { key: 'lattice infidelity with correction', value: `${sig(v.infidelity_cd_max, 3)} (worst of ${v.states} state${v.states === 1 ? '' : 's'}; target ${s.study.target_infidelity}: ${v.meets_target ? 'met' : 'NOT met'})` },
    { key: 'bare fidelities', value: v.fidelity_bare.map((f) => sig(f)).join(', ') },
    { key: 'recommended', value: s.study.recommended ? `${sig(s.study.recommended.sites_per_width, 3)} sites per width (${s.study.recommended.basis})` : s.study.note },
  );
  if (s.study.widen_trap_by !== null) rows.push({ key: 'widen the trap by', value: `× ${sig(s.study.widen_trap_by)} (factor on every length of the trap, dimensionless; see the choices)` });
  s.study.choices.forEach((c, i) => rows.push({ key: `choice ${i + 1}`, value: choiceText(c, s) }));
  for (const note of s.study.choice_notes) rows.push({ key: 'not offered', value: note });
  return rows;
}
