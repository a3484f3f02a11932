/**
 * Figures of `compare` (compare.json): both sequences side by side, their distance against λ, the ħ-scaling fit
 * and the action drifts of classical trajectories along either sequence.
 */
import type { CompareSummary } from '../../io/formats/compare.ts';
import { barChart } from '../bar-chart.ts';
import { cropCaption, cropRow, cropToPotential } from '../crop.ts';
import { heatmap } from '../heatmap.ts';
import type { ReportFigure } from '../html.ts';
import { lineChart } from '../line-chart.ts';
import type { FigureSize } from '../style.ts';

/** decimals of a fitted exponent at least (the legend's "p = 1.97"), and at most (a vanishing uncertainty) */
const FIT_DECIMALS = 2;
const MAX_FIT_DECIMALS = 4;

/** the quantum and classical maps up to the λ where both exist, on one colour scale (none below 2 common rows) */
function sequenceMaps(c: CompareSummary, size: FigureSize): ReportFigure[] {
  const seq = c.sequences;
  const common = seq.classical.findIndex((r) => r === null);
  const nRows = common < 0 ? seq.lambda.length : common;
  if (nRows < 2) return [];
  const classical = seq.classical.slice(0, nRows).filter((r): r is number[] => r !== null);
  const quantum = seq.quantum.slice(0, nRows);
  const range: [number, number] = [Math.min(...quantum.flat(), ...classical.flat()), 0];
  // one x window for both maps
  const crop = cropToPotential(seq.x, [...quantum, ...classical]);
  const maps = [
    ['compare-quantum', quantum, 'quantum (KdV)'],
    ['compare-classical', classical, 'classical (Hopf)'],
  ] as const;
  return maps.map(([id, rows, label]) => ({
    id,
    caption: `The ${label} sequence from the same start, up to the λ where both exist (same colour scale and x window in both maps).${cropCaption(crop, c.units.length)}`,
    svg: heatmap({
      xLabel: `position x (${c.units.length})`,
      yLabel: 'flow parameter λ (dimensionless)',
      zLabel: `potential V (${c.units.energy})`,
      x: crop.x,
      y: Float64Array.from(seq.lambda.slice(0, nRows)),
      z: rows.map((r) => cropRow(crop, Float64Array.from(r))),
      zRange: range,
      width: 'single',
      size,
    }),
  }));
}

function distanceFigure(c: CompareSummary, size: FigureSize): ReportFigure {
  const d = c.distance;
  return {
    id: 'compare-distance',
    caption: `Relative distance between the quantum and the classical sequence against λ (max and L² norms); ${d.lambda_1pct !== null ? `they differ by ${d.threshold * 100} % at λ = ${d.lambda_1pct.toPrecision(3)}` : 'they stay within 1 %'}; the classical flow breaks at λ = ${c.breaking_lambda.toPrecision(4)}.`,
    svg: lineChart({
      xLabel: 'flow parameter λ (dimensionless)',
      yLabel: 'relative distance',
      series: [
        { name: 'max norm', x: d.lambda.slice(1), y: d.max.slice(1) },
        { name: 'L² norm', x: d.lambda.slice(1), y: d.l2.slice(1), dashed: true },
      ],
      logY: true,
      width: 'single',
      size,
    }),
  };
}

/**
 * "v ± u" with u to one significant digit and v to the same decimal place (at least FIT_DECIMALS decimals);
 * common practice for a fitted value and its standard error.
 */
export function withUncertainty(v: number, u: number): string {
  const decimals = Number.isFinite(u) && u > 0 ? Math.max(FIT_DECIMALS, Math.min(MAX_FIT_DECIMALS, -Math.floor(Math.log10(u)))) : FIT_DECIMALS;
  return `${v.toFixed(decimals)} ± ${Number.isFinite(u) ? u.toFixed(decimals) : 'n/a'}`;
}

/** the ħ-scaling study on log–log axes: computed distances against δ and the fitted power law (null below 2 points) */
export function scalingFigure(c: Pick<CompareSummary, 'scaling'>, size: FigureSize = 'paper'): ReportFigure | null {
  const pts = c.scaling.points;
  if (pts.length < 2) return null;
  const delta = pts.map((p) => p.delta);
  const fit = delta.map((d) => c.scaling.prefactor * Math.pow(d, c.scaling.exponent));
  const p = withUncertainty(c.scaling.exponent, c.scaling.uncertainty);
  return {
    id: 'compare-scaling',
    caption: `Distance at fixed scaled λ against the dispersion number δ, both axes logarithmic: a power law is a straight line of slope p; fitted p = ${p} (2 expected: the dispersive term is ∝ ħ²).`,
    svg: lineChart({
      xLabel: 'dispersion number δ (dimensionless)',
      yLabel: 'relative distance (max norm)',
      series: [
        { name: 'computed', x: delta, y: pts.map((q) => q.distance_max), markers: true },
        { name: `fit: distance ∝ δ^p, p = ${p}`, x: delta, y: fit, dashed: true },
      ],
      logX: true,
      logY: true,
      width: 'single',
      size,
    }),
  };
}

function actionFigure(c: CompareSummary, size: FigureSize): ReportFigure | null {
  const tr = c.classical_phase_space.trajectories;
  if (tr.length === 0) return null;
  return {
    id: 'compare-action',
    caption: 'Relative drift of the action ∮p dx of classical trajectories under the classical counterdiabatic Hamiltonian, along the classical (Hopf) sequence — conserved — and along the quantum (KdV) sequence.',
    svg: barChart({
      xLabel: 'trajectory (energy shell of H(0))',
      yLabel: 'relative action drift',
      groups: tr.map((t, i) => ({ label: `${i}: E=${t.shell_energy.toPrecision(2)}`, values: [{ name: 'Hopf sequence', value: Math.abs(t.classical.action_drift ?? 0) }, { name: 'KdV sequence', value: Math.abs(t.quantum.action_drift ?? 0) }] })),
      logY: true,
      width: 'double',
      size,
    }),
  };
}

/** Figures of `compare`: both sequences side by side, their distance, the ħ-scaling fit, action drifts. */
export function compareFigures(c: CompareSummary, size: FigureSize = 'paper'): ReportFigure[] {
  const figures = [...sequenceMaps(c, size), distanceFigure(c, size)];
  for (const f of [scalingFigure(c, size), actionFigure(c, size)]) if (f) figures.push(f);
  return figures;
}
