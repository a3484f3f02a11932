/**
 * Figures of `check` (check.json, input.npy, repaired.npy): the flow-fit residual per interval against the
 * tolerance, the bound-state energies along the sequence (isospectrality, physics.md §5), and the input beside
 * the repaired sequence (the fitted maps applied from the first frame, physics.md §9) with their distance.
 */
import type { CheckReport } from '../../io/formats/check.ts';
import type { SummaryRow } from '../../io/formats/read.ts';
import { cropCaption, cropRow, cropToPotential } from '../crop.ts';
import { heatmap } from '../heatmap.ts';
import type { ReportFigure } from '../html.ts';
import { lineChart } from '../line-chart.ts';
import type { FigureSize } from '../style.ts';
import { frameRows, type FrameArray } from './design.ts';

/** residuals are drawn no lower than this (an exact static interval has residual 0, which a log axis cannot show) */
const RESIDUAL_FLOOR = 1e-16;

function residualFigure(r: CheckReport, size: FigureSize): ReportFigure {
  const idx = r.intervals.map((it) => it.index);
  const failed = r.fit.failed.length;
  return {
    id: 'check-residual',
    caption: `Flow-fit residual per interval (the part of the change between frames k and k + 1 that no KdV time step and drift explain) against the tolerance ${r.tolerance}; ${failed === 0 ? 'every interval passes' : `${failed} interval${failed > 1 ? 's fail' : ' fails'}: ${r.fit.failed.join(', ')}`}.`,
    svg: lineChart({
      xLabel: 'interval k (frames k → k + 1)',
      yLabel: 'relative residual',
      series: [
        { name: 'residual', x: idx, y: r.intervals.map((it) => Math.max(it.residual, RESIDUAL_FLOOR)), markers: true, dashed: false },
        { name: 'tolerance', x: [idx[0], idx[idx.length - 1]], y: [r.tolerance, r.tolerance], dashed: true },
      ],
      logY: true,
      width: 'single',
      size,
    }),
  };
}

function spectrumFigure(r: CheckReport, size: FigureSize): ReportFigure | null {
  const s = r.spectrum;
  if (s.levels === 0) return null;
  const series = Array.from({ length: s.levels }, (_, lvl) => ({ name: `level ${lvl}`, x: s.frames, y: s.energies.map((e) => e[lvl]), dashed: false }));
  return {
    id: 'check-spectrum',
    caption: `Bound-state energies along the sequence (fit-free evidence: an admissible sequence is isospectral); largest spread ${r.spectral_drift.toExponential(2)} ${r.units.energy} (${r.spectral_drift_relative.toExponential(2)} of the ground-state depth).`,
    svg: lineChart({ xLabel: 'frame k', yLabel: `energy (${r.units.energy})`, series, width: 'single', size }),
  };
}

function mapsAndDistance(r: CheckReport, input: FrameArray, repaired: FrameArray, size: FigureSize): ReportFigure[] {
  const nX = r.grid.points;
  const x = Float64Array.from({ length: nX }, (_, j) => r.grid.x0 + j * r.grid.dx);
  const frames = Float64Array.from({ length: input.shape[0] }, (_, k) => k);
  const inRows = frameRows(input);
  const repRows = frameRows(repaired);
  let lo = 0, hi = 0;
  for (const row of [...inRows, ...repRows]) for (const v of row) if (Number.isFinite(v)) { lo = Math.min(lo, v); hi = Math.max(hi, v); }
  // one x window for both maps
  const crop = cropToPotential(x, [...inRows, ...repRows]);
  const map = (id: string, rows: Float64Array[], what: string): ReportFigure => ({
    id,
    caption: `${what} (same colour scale and x window in both maps).${cropCaption(crop, r.units.length)}`,
    svg: heatmap({ xLabel: `position x (${r.units.length})`, yLabel: 'frame k', zLabel: `potential V (${r.units.energy})`, x: crop.x, y: frames, z: rows.map((row) => cropRow(crop, row)), zRange: [lo, hi], width: 'single', size }),
  });
  return [
    map('check-input', inRows, 'The input sequence as judged (on the integration grid)'),
    map('check-repaired', repRows, 'The repaired sequence: the fitted KdV maps applied from the first frame'),
    {
      id: 'check-distance',
      caption: `Relative L² distance between input and repaired frames (largest ${r.repaired.max_distance.toExponential(2)} ${r.units.energy} pointwise).`,
      svg: lineChart({
        xLabel: 'frame k',
        yLabel: 'relative distance',
        series: [{ name: 'input − repaired', x: Array.from(frames).slice(1), y: r.repaired.frame_relative.slice(1).map((d) => Math.max(d, RESIDUAL_FLOOR)), markers: true }],
        logY: true,
        width: 'single',
        size,
      }),
    },
  ];
}

/** every figure of a check folder */
export function checkFigures(r: CheckReport, input: FrameArray, repaired: FrameArray, size: FigureSize = 'paper'): ReportFigure[] {
  const spec = spectrumFigure(r, size);
  return [residualFigure(r, size), ...(spec ? [spec] : []), ...mapsAndDistance(r, input, repaired, size)];
}

/** the summary table of a check folder: the verdict lines, then the key numbers */
export function checkSummaryRows(r: CheckReport): SummaryRow[] {
  return [
    { key: 'input', value: r.input },
    ...r.summary.map((line, i) => ({ key: i === 0 ? 'verdict' : 'detail', value: line })),
    { key: 'intervals', value: r.intervals.length },
    { key: 'largest residual', value: r.fit.max_residual },
    { key: 'fitted τ at the last frame', value: r.frames[r.frames.length - 1].tau },
    r.isospectral === null ? { key: 'bound-state drift', value: 'not tested (no bound state)' } : { key: 'bound-state drift', value: r.spectral_drift, unit: r.units.energy },
    { key: 'repaired: relative L² distance', value: r.repaired.relative_l2 },
  ];
}
