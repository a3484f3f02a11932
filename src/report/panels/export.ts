/**
 * Figures of an export (export.json and its arrays): the ramp in lab time, λ(t) and T·λ̇(t), and the sizes of the
 * two terms of the correction against t at the sidecar's reference wavenumber, whose peaks are the sidecar's
 * max_cubic_energy and max_linear_energy.
 */
import { PAINTED_WHAT, type ExportFile } from '../../io/formats/export.ts';
import type { ReportFigure, SummaryRow } from '../html.ts';
import { lineChart } from '../line-chart.ts';
import { heatmap } from '../heatmap.ts';
import { cropCaption, cropRow, cropToPotential } from '../crop.ts';
import type { FigureSize } from '../style.ts';
import type { FrameArray } from './design.ts';

/** the ids (and .svg names) of the export's figures */
export const EXPORT_FIGURE_IDS = ['export-ramp', 'export-correction'] as const;
/** the ids of the painted potentials' space–time maps, by drive */
export const PAINTED_FIGURE_IDS = { painted: 'export-painted', painted_ground: 'export-painted-ground', painted_condensate: 'export-painted-condensate' } as const;

/** the arrays the export figures read (keys of export.json arrays) */
export interface ExportSeries {
  x?: FrameArray;
  t: FrameArray;
  lambda: FrameArray;
  lambda_rate: FrameArray;
  cubic: FrameArray;
  velocity: FrameArray;
}

/** the size of each correction term at k_ref per sample: |C₃|k_ref³ and ħk_ref·max_x|w| in the energy unit */
export function correctionSizes(f: ExportFile, a: ExportSeries): { cubic: number[]; linear: number[] } {
  const c = f.correction;
  const m = a.t.data.length;
  const n = a.velocity.shape[1];
  const maxW = Array.from({ length: m }, (_, i) => a.velocity.data.subarray(i * n, (i + 1) * n).reduce((s, v) => Math.max(s, Math.abs(v)), 0));
  // ħ k w scales linearly in w: the sidecar's max_linear_energy belongs to max_velocity
  const perVelocity = c.max_velocity > 0 ? c.max_linear_energy / c.max_velocity : 0;
  return { cubic: Array.from(a.cubic.data, (v) => Math.abs(v) * c.k_ref ** 3), linear: maxW.map((w) => w * perVelocity) };
}

/** the export's rows of the report's summary: the peaks of the correction figure, with the sampling */
export function exportSummaryRows(f: ExportFile): SummaryRow[] {
  const c = f.correction;
  const u = f.units;
  return [
    { key: 'lab-time export', value: `${f.sampling.samples} samples every ${Number(f.sampling.step.toPrecision(4))} ${u.time}` },
    { key: `p³ term |C₃|k_ref³ at k_ref = ${c.k_ref.toPrecision(4)}/${u.length} (largest)`, value: c.max_cubic_energy, unit: u.energy },
    { key: `½{w, p} term ħk_ref·max|w| (largest)`, value: c.max_linear_energy, unit: u.energy },
  ];
}

/** the painted potential V + V_loc against x and lab time, one map per painted drive: the exported arrays */
function paintedMaps(f: ExportFile, a: ExportSeries, painted: Partial<Record<keyof typeof PAINTED_FIGURE_IDS, FrameArray>>, size: FigureSize): ReportFigure[] {
  const x = a.x?.data ?? new Float64Array(0);
  return (Object.keys(PAINTED_FIGURE_IDS) as (keyof typeof PAINTED_FIGURE_IDS)[]).flatMap((d) => {
    const arr = painted[d];
    if (!arr) return [];
    const [m, n] = arr.shape;
    const rows = Array.from({ length: m }, (_, i) => arr.data.subarray(i * n, (i + 1) * n));
    const crop = cropToPotential(x, rows);
    const entry = f.painted?.drives.find((e) => e.drive === d);
    const range = entry ? ` It spans ${entry.deepest.toPrecision(4)} … ${entry.highest.toPrecision(4)} ${f.units.energy}; the starting trap ${f.painted?.start.deepest.toPrecision(4)} … ${f.painted?.start.highest.toPrecision(4)} ${f.units.energy}.` : '';
    const blurred = f.painted?.psf ? ` Blurred by the optics' point-spread function of ${f.painted.psf.radius} ${f.painted.psf.unit} (1/e² radius), as exported.` : '';
    return [{
      id: PAINTED_FIGURE_IDS[d],
      caption: `Painted potential V + V_loc of ${PAINTED_WHAT[d]} against x and lab time (${m} exported samples): the trap to program instead of V and the correction.${range}${blurred}${cropCaption(crop, f.units.length)}`,
      svg: heatmap({ xLabel: `position x (${f.units.length})`, yLabel: `time t (${f.units.time})`, zLabel: `painted potential (${f.units.energy})`, x: crop.x, y: a.t.data, z: rows.map((r) => cropRow(crop, Float64Array.from(r))), width: 'double', size }),
    }];
  });
}

export function exportFigures(f: ExportFile, a: ExportSeries, painted: Partial<Record<keyof typeof PAINTED_FIGURE_IDS, FrameArray>> = {}, size: FigureSize = 'paper'): ReportFigure[] {
  const T = f.protocol.duration;
  const tu = f.units.time;
  const t = a.t.data;
  const sizes = correctionSizes(f, a);
  return [
    ...paintedMaps(f, a, painted, size),
    {
      id: EXPORT_FIGURE_IDS[0],
      caption: `The ${f.protocol.ramp} ramp on the exported lab-time grid (${f.sampling.samples} samples): λ(t) and T·λ̇(t) with T = ${T} ${tu}, both dimensionless.`,
      svg: lineChart({
        xLabel: `time t (${tu})`,
        yLabel: 'λ and T·λ̇ (dimensionless)',
        series: [
          { name: 'λ', x: t, y: a.lambda.data },
          { name: 'T·λ̇', x: t, y: Array.from(a.lambda_rate.data, (r) => r * T), dashed: true },
        ],
        width: 'single',
        size,
      }),
    },
    {
      id: EXPORT_FIGURE_IDS[1],
      caption:
        `Size of the two terms of the correction against t (${f.units.energy}) at k_ref = ${f.correction.k_ref.toPrecision(4)}/${f.units.length}: ` +
        `|C₃|·k_ref³ of the p³ term and ħ·k_ref·max_x|w| of the momentum-linear term; their peaks are the summary's values.`,
      svg: lineChart({
        xLabel: `time t (${tu})`,
        yLabel: `term size (${f.units.energy})`,
        series: [
          { name: 'p³ term', x: t, y: sizes.cubic },
          { name: '½{w, p} term', x: t, y: sizes.linear, dashed: true },
        ],
        width: 'single',
        size,
      }),
    },
  ];
}
