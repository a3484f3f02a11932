/**
 * Figures of `compare` (compare.json): both sequences side by side, their distance against λ, the ħ-scaling fit
 * and the action drifts of classical trajectories along either sequence.
 */
import type { CompareSummary } from '../../io/formats/compare.ts';
import { barChart } from '../bar-chart.ts';
import { heatmap } from '../heatmap.ts';
import type { ReportFigure } from '../html.ts';
import { lineChart } from '../line-chart.ts';

/** the quantum and classical maps up to the λ where both exist, on one colour scale (none below 2 common rows) */
function sequenceMaps(c: CompareSummary): ReportFigure[] {
  const seq = c.sequences;
  const common = seq.classical.findIndex((r) => r === null);
  const nRows = common < 0 ? seq.lambda.length : common;
  if (nRows < 2) return [];
  const classical = seq.classical.slice(0, nRows).filter((r): r is number[] => r !== null);
  const quantum = seq.quantum.slice(0, nRows);
  const range: [number, number] = [Math.min(...quantum.flat(), ...classical.flat()), 0];
  const maps = [
    ['compare-quantum', quantum, 'quantum (KdV)'],
    ['compare-classical', classical, 'classical (Hopf)'],
  ] as const;
  return maps.map(([id, rows, label]) => ({
    id,
    caption: `The ${label} sequence from the same start, up to the λ where both exist (same colour scale in both maps).`,
    svg: heatmap({
      xLabel: `position x (${c.units.length})`,
      yLabel: 'flow parameter λ (dimensionless)',
      zLabel: `potential V (${c.units.energy})`,
      x: Float64Array.from(seq.x),
      y: Float64Array.from(seq.lambda.slice(0, nRows)),
      z: rows.map((r) => Float64Array.from(r)),
      zRange: range,
      width: 'single',
    }),
  }));
}

function distanceFigure(c: CompareSummary): ReportFigure {
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
    }),
  };
}

function scalingFigure(c: CompareSummary): ReportFigure | null {
  const pts = c.scaling.points;
  if (pts.length < 2) return null;
  const fit = pts.map((p) => c.scaling.prefactor * Math.pow(p.delta, c.scaling.exponent));
  return {
    id: 'compare-scaling',
    caption: `Distance at fixed scaled λ against the dispersion number δ: fitted exponent ${c.scaling.exponent.toFixed(3)} ± ${c.scaling.uncertainty.toFixed(3)} (2 expected: the dispersive term is ∝ ħ²).`,
    svg: lineChart({
      xLabel: 'log₁₀ δ (dimensionless)',
      yLabel: 'relative distance (max norm)',
      series: [
        { name: 'computed', x: pts.map((p) => Math.log10(p.delta)), y: pts.map((p) => p.distance_max), markers: true },
        { name: `fit ∝ δ^${c.scaling.exponent.toFixed(2)}`, x: pts.map((p) => Math.log10(p.delta)), y: fit, dashed: true },
      ],
      logY: true,
      width: 'single',
    }),
  };
}

function actionFigure(c: CompareSummary): ReportFigure | null {
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
    }),
  };
}

/** Figures of `compare`: both sequences side by side, their distance, the ħ-scaling fit, action drifts. */
export function compareFigures(c: CompareSummary): ReportFigure[] {
  const figures = [...sequenceMaps(c), distanceFigure(c)];
  for (const f of [scalingFigure(c), actionFigure(c)]) if (f) figures.push(f);
  return figures;
}
