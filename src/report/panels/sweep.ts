/**
 * Figures of a parameter sweep (sweep.json): infidelity after the ramp against the swept key on log axes, with the
 * target and the adiabatic time marked (one key); the same for the ensembles; heat maps of the ground-state
 * infidelity over two keys, one per drive.
 */
import type { SweepAxis, SweepDrive, SweepFile, SweepPoint } from '../../io/formats/sweep.ts';
import type { SummaryRow } from '../../io/formats/read.ts';
import { heatmap } from '../heatmap.ts';
import type { ReportFigure } from '../html.ts';
import { lineChart, type LineSeries } from '../line-chart.ts';
import type { FigureSize } from '../style.ts';

/** infidelities are floored here on the log axes: round-off of a unit vector after many FFTs */
export const SWEEP_INFIDELITY_FLOOR = 1e-16;
/** a linearly spaced key is drawn on a log axis when its values span at least this ratio (common practice) */
const LOG_AXIS_RATIO = 10;

const floor = (f: number) => (Number.isFinite(f) ? Math.max(1 - f, SWEEP_INFIDELITY_FLOOR) : NaN);

function logAxis(a: SweepAxis): boolean {
  const lo = Math.min(...a.values);
  return a.spacing === 'log' || (lo > 0 && Math.max(...a.values) / lo >= LOG_AXIS_RATIO);
}

function axisLabel(a: SweepAxis): string {
  return `${a.key} (${a.unit})`;
}

function drivesOf(file: SweepFile): string[] {
  return [...new Set(file.points.flatMap((p) => p.drives.map((d) => d.drive)))];
}

function driveAt(p: SweepPoint, drive: string): SweepDrive | undefined {
  return p.drives.find((d) => d.drive === drive);
}

/** one series per drive and subject over the points (sorted by the key), NaN where a point did not run */
function seriesOf(file: SweepFile, pick: (d: SweepDrive) => number | null, label: string): LineSeries[] {
  const pts = [...file.points].sort((a, b) => a.values[0] - b.values[0]);
  const out: LineSeries[] = [];
  drivesOf(file).forEach((drive, i) => {
    const y = pts.map((p) => {
      const d = driveAt(p, drive);
      const f = d ? pick(d) : null;
      return f === null ? NaN : floor(f);
    });
    if (y.some(Number.isFinite)) out.push({ name: `${drive}, ${label}`, x: pts.map((p) => p.values[0]), y, dashed: i > 0, markers: true });
  });
  return out;
}

/** the target as a horizontal line and the adiabatic time as a vertical one, over the data's y range */
function marks(file: SweepFile, series: LineSeries[]): LineSeries[] {
  const a = file.plan.axes[0];
  const ys = series.flatMap((s) => Array.from(s.y)).filter(Number.isFinite);
  const lo = Math.min(file.plan.target_infidelity, ...ys);
  const hi = Math.max(file.plan.target_infidelity, ...ys);
  const out: LineSeries[] = [{ name: `target 1 − F = ${file.plan.target_infidelity}`, x: [Math.min(...a.values), Math.max(...a.values)], y: [file.plan.target_infidelity, file.plan.target_infidelity], dashed: true }];
  if (file.adiabatic_time !== null && a.key === 'protocol.duration') out.push({ name: `adiabatic time ${Number(file.adiabatic_time.toPrecision(4))} ${a.unit}`, x: [file.adiabatic_time, file.adiabatic_time], y: [lo, hi], dashed: true });
  // the tolerance on a swept error key: the corrected drive's ground-state crossings, one per side of zero
  for (const t of toleranceMarks(file)) {
    const x = t.side === 'positive' ? t.value : -t.value;
    out.push({ name: `tolerance ${t.drive} ${t.side === 'positive' ? '' : '−'}${Number(t.value.toPrecision(4))} ${a.unit}`, x: [x, x], y: [lo, hi], dashed: true });
  }
  return out;
}

/** the interpolated tolerances of the cd drive's ground state in a one-key error sweep, of the condensate's in an
 *  atom-number sweep (sweep.json tolerances) */
function toleranceMarks(file: SweepFile): { drive: string; side: 'positive' | 'negative'; value: number }[] {
  if (file.plan.axes.length !== 1) return [];
  const drive = file.plan.axes[0].key === 'verify.interaction.atoms' ? 'condensate_cd' : 'cd';
  return (file.tolerances ?? []).filter((t) => t.drive === drive && t.subject === 'ground' && t.interpolated !== null).map((t) => ({ drive: t.drive, side: t.side, value: t.interpolated as number }));
}

function fidelityFigure(file: SweepFile, size: FigureSize): ReportFigure {
  const a = file.plan.axes[0];
  // a condensate drive has one state, its nonlinear ground state: no separate worst-state series
  const series = [...seriesOf(file, (d) => d.states[0]?.fidelity ?? null, 'ground state'), ...seriesOf(file, (d) => (d.drive.startsWith('condensate_') ? null : d.min_fidelity), 'worst state')];
  const adiabatic = a.key === 'protocol.duration'
    ? file.adiabatic_time === null ? ' The bare drive does not reach the target in the swept range (no adiabatic time marked).' : ` The vertical line marks the adiabatic time ${file.adiabatic_time.toPrecision(4)} ${a.unit}: where the bare drive's ground state reaches the target (log–log interpolated between swept points).`
    : toleranceMarks(file).length > 0 ? ' The vertical lines mark the tolerance: where the corrected drive\'s ground state crosses the target (log–log interpolated between swept points).' : '';
  return {
    id: 'sweep-fidelity',
    caption: `Infidelity 1 − F after the ramp against ${a.key}, for each drive: the ground state and the worst tracked state (markers: swept points); the horizontal line is the target ${file.plan.target_infidelity}.${adiabatic} Values floored at ${SWEEP_INFIDELITY_FLOOR}.`,
    svg: lineChart({ xLabel: axisLabel(a), yLabel: 'infidelity 1 − F', series: [...series, ...marks(file, series)], logY: true, logX: logAxis(a), width: 'double', size }),
  };
}

function ensembleFigure(file: SweepFile, size: FigureSize): ReportFigure | null {
  const a = file.plan.axes[0];
  const series = [
    ...seriesOf(file, (d) => d.thermal?.fidelity ?? null, 'thermal mean'),
    ...seriesOf(file, (d) => d.thermal?.uhlmann ?? null, 'thermal Uhlmann'),
    ...seriesOf(file, (d) => d.fermions?.fidelity ?? null, 'Fermi sea'),
  ];
  if (series.length === 0) return null;
  return {
    id: 'sweep-ensembles',
    caption: `Infidelity 1 − F after the ramp of the thermal ensemble (Boltzmann mean of the state fidelities; Uhlmann fidelity of the evolved and the final Gibbs state) and of the Fermi sea, against ${a.key}, for each drive.`,
    svg: lineChart({ xLabel: axisLabel(a), yLabel: 'infidelity 1 − F', series: [...series, ...marks(file, series)], logY: true, logX: logAxis(a), width: 'double', size }),
  };
}

/** relative tolerance of "evenly spaced" for a listed axis (round-off of values typed in decimal) */
const EVEN_SPACING_TOL = 1e-9;

function evenlySpaced(v: readonly number[]): boolean {
  const step = (v[v.length - 1] - v[0]) / Math.max(1, v.length - 1);
  return step > 0 && v.every((x, i) => Math.abs(x - (v[0] + i * step)) <= EVEN_SPACING_TOL * Math.abs(step) * v.length);
}

/** cell coordinates of an axis (the heat map needs even spacing): the values, log₁₀ of them, or their positions */
function cells(a: SweepAxis): { at: Float64Array; label: string } {
  const logs = a.values.every((v) => v > 0) ? a.values.map(Math.log10) : null;
  if (a.spacing !== 'log' && evenlySpaced(a.values)) return { at: Float64Array.from(a.values), label: axisLabel(a) };
  if (logs && evenlySpaced(logs)) return { at: Float64Array.from(logs), label: `log₁₀ ${axisLabel(a)}` };
  return { at: Float64Array.from(a.values, (_, i) => i), label: `${a.key}: position in the list ${a.values.join(', ')}` };
}

function mapFigure(file: SweepFile, drive: string, size: FigureSize): ReportFigure {
  const [a, b] = file.plan.axes;
  const [x, y] = [cells(a), cells(b)];
  const byIndex = new Map(file.points.map((p) => [p.index, p]));
  const z = b.values.map((_, j) =>
    Float64Array.from(a.values, (_, i) => {
      const d = byIndex.get(i * b.values.length + j);
      const f = d ? driveAt(d, drive)?.states[0]?.fidelity : undefined;
      return f === undefined ? NaN : Math.log10(floor(f));
    }),
  );
  return {
    id: `sweep-map-${drive.replace(/[^A-Za-z0-9_-]/g, '_')}`,
    caption: `log₁₀ of the ground-state infidelity 1 − F after the ramp, drive ${drive}, over ${a.key} and ${b.key}; blank cells: points that did not run.`,
    svg: heatmap({ xLabel: x.label, yLabel: y.label, zLabel: 'log₁₀(1 − F)', x: x.at, y: y.at, z, width: 'double', size }),
  };
}

export function sweepFigures(file: SweepFile, size: FigureSize = 'paper'): ReportFigure[] {
  if (file.points.every((p) => p.error !== null)) return [];
  if (file.plan.axes.length === 2) return file.plan.axes.every((a) => a.values.length >= 2) ? drivesOf(file).map((d) => mapFigure(file, d, size)) : [];
  const out = [fidelityFigure(file, size)];
  const ens = ensembleFigure(file, size);
  if (ens) out.push(ens);
  return out;
}

export function sweepSummaryRows(file: SweepFile): SummaryRow[] {
  const { plan } = file;
  const failed = file.points.filter((p) => p.error !== null).length;
  const rows: SummaryRow[] = [
    ...plan.axes.map((a) => ({ key: `swept ${a.key}`, value: `${a.values.length} values (${a.spacing}) from ${Math.min(...a.values)} to ${Math.max(...a.values)}`, unit: a.unit })),
    { key: 'points', value: `${file.points.length - failed} ran${failed ? `, ${failed} could not run (see the warnings)` : ''}` },
    { key: 'target infidelity 1 − F', value: plan.target_infidelity },
  ];
  const t = plan.units.time;
  if (plan.axes.some((a) => a.key === 'protocol.duration')) {
    if (plan.axes.length === 1) rows.push({ key: 'adiabatic time (bare drive, ground state)', value: file.adiabatic_time === null ? 'not reached in the swept range' : Number(file.adiabatic_time.toPrecision(4)), unit: file.adiabatic_time === null ? undefined : t });
    const otherKey = plan.axes.find((a) => a.key !== 'protocol.duration')?.key;
    for (const a of file.answers.filter((x) => x.subject === 'ground' || x.subject === 'worst')) {
      const v = a.duration === null ? 'not reached in the swept range' : `${a.duration}${a.interpolated !== null ? ` (crossing ≈ ${Number(a.interpolated.toPrecision(4))})` : ''}${a.duration_in_budget !== null ? `; within the budget from ${a.duration_in_budget}` : ''}`;
      const at = a.other === null ? '' : ` at ${otherKey} = ${a.other}`;
      rows.push({ key: `shortest duration${at}, ${a.drive}, ${a.subject === 'ground' ? 'ground state' : 'worst state'}`, value: v, unit: a.duration === null ? undefined : t });
    }
  }
  for (const tol of (file.tolerances ?? []).filter((x) => x.subject === 'ground' || x.subject === 'worst')) {
    const axis = plan.axes.find((a) => a.key === tol.key);
    const otherKey = plan.axes.find((a) => a.key !== tol.key)?.key;
    const at = tol.other === null ? '' : ` at ${otherKey} = ${tol.other}`;
    const largest = Math.max(...(axis?.values ?? []).filter((x) => (tol.side === 'positive' ? x >= 0 : x <= 0)).map(Math.abs));
    const note = tol.interpolated !== null ? ` (crossing ≈ ${Number(tol.interpolated.toPrecision(4))})` : tol.tolerance === largest ? ' (every swept value meets the target)' : '';
    const v = tol.tolerance === null ? 'not met at the smallest swept value' : `${tol.tolerance}${note}`;
    rows.push({ key: `tolerance on ${tol.key} (${tol.side} side)${at}, ${tol.drive}, ${tol.subject === 'ground' ? 'ground state' : 'worst state'}`, value: v, unit: tol.tolerance === null ? undefined : axis?.unit });
  }
  return rows;
}
