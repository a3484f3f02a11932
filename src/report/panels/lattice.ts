/**
 * Figures of a lattice realisation (lattice.json and its arrays): the nearest-neighbour coupling amplitudes as a
 * space–time map, and the lattice infidelity with the correction against sites per soliton width.
 */
import type { LatticeSummary, LatticeTables } from '../../io/formats/lattice.ts';
import { heatmap } from '../heatmap.ts';
import type { ReportFigure } from '../html.ts';
import { lineChart } from '../line-chart.ts';
import type { FigureSize } from '../style.ts';
import { INFIDELITY_FLOOR } from './verify.ts';

/** the tables the figures read */
export type LatticeFigureTables = Pick<LatticeTables, 'sites' | 'times' | 'nnAmplitude'>;

/** the whole lattice is shown: the tunnelling J couples every bond, so there is no empty part to crop */
function couplingsFigure(s: LatticeSummary, t: LatticeFigureTables, size: FigureSize): ReportFigure {
  const bonds = t.sites.length - 1;
  const rows = Array.from({ length: t.times.length }, (_, i) => t.nnAmplitude.slice(i * bonds, (i + 1) * bonds));
  const bondX = Float64Array.from({ length: bonds }, (_, j) => 0.5 * (t.sites[j] + t.sites[j + 1]));
  return {
    id: 'lattice-couplings',
    caption: `Nearest-neighbour coupling amplitude |H_j,j+1| (tunnelling plus the Peierls part of the correction) at each bond against time; the largest correction coupling is ${s.couplings.fraction_of_band_width.toPrecision(3)} × the band width 4J.`,
    svg: heatmap({
      xLabel: `bond position x (${s.units.length})`,
      yLabel: `time t (${s.units.time})`,
      zLabel: `|H_j,j+1| (${s.units.energy})`,
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
  if (study.length < 2) return null;
  const states = study[0].infidelity_cd.length;
  const perState = Array.from({ length: states }, (_, n) => ({
    name: `state ${n}`,
    x: study.map((r) => r.sites_per_width),
    y: study.map((r) => Math.max(r.infidelity_cd[n], INFIDELITY_FLOOR)),
    markers: true,
  }));
  const target = { name: 'target', x: [study[0].sites_per_width, study[study.length - 1].sites_per_width], y: [s.study.target_infidelity, s.study.target_infidelity], dashed: true };
  return {
    id: 'lattice-convergence',
    caption: `Lattice infidelity 1 − F with the correction against sites per soliton width, for each tracked state; target ${s.study.target_infidelity}${s.study.observed_order !== null ? `, observed order ${s.study.observed_order.toFixed(2)} in the spacing` : ''}.`,
    svg: lineChart({ xLabel: 'sites per soliton width (dimensionless)', yLabel: 'infidelity 1 − F', series: [...perState, target], logY: true, width: 'single', size }),
  };
}

/** Figures of a lattice realisation: the coupling map, and the convergence study when it has two or more rows. */
export function latticeFigures(summary: LatticeSummary, tables: LatticeFigureTables, size: FigureSize = 'paper'): ReportFigure[] {
  const figures = [couplingsFigure(summary, tables, size)];
  const conv = convergenceFigure(summary, size);
  if (conv) figures.push(conv);
  return figures;
}
