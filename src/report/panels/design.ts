/**
 * Figures and summary rows of a designed sequence (sequence.json + potential.npy): the space–time map of V(x, λ)
 * with the predicted soliton trajectories, the bound-state spectrum along λ, and, when the sequence was verified,
 * the same map against lab time.
 */
import { separatedSolitons, straightTrajectory } from '../../classical/shells.ts';
import type { SequenceFile } from '../../io/formats/sequence.ts';
import type { VerifyFile } from '../../io/formats/verify.ts';
import { isRampKind, makeRamp } from '../../protocol/ramp.ts';
import { cropCaption, cropRow, cropToPotential } from '../crop.ts';
import { heatmap } from '../heatmap.ts';
import type { ReportFigure, SummaryRow } from '../html.ts';
import { lineChart } from '../line-chart.ts';
import type { FigureSize } from '../style.ts';

/** rows of the space–time map against lab time: uniform in t, λ(t) from the ramp, frames blended linearly in λ */
export const TIME_ROWS = 121;

/** a [frames, points] array as read from potential.npy */
export interface FrameArray {
  data: Float64Array;
  shape: number[];
}

/** a [frames, points] array as rows */
export function frameRows(a: FrameArray): Float64Array[] {
  const [nF, nX] = a.shape;
  return Array.from({ length: nF }, (_, i) => a.data.subarray(i * nX, (i + 1) * nX));
}

/**
 * straight soliton lines through the wells of the last frame that match a predicted soliton (classical/shells.ts),
 * inside the shown x window
 */
function trajectories(seq: SequenceFile, xmin: number, xmax: number): { name: string; x: number[]; y: number[] }[] {
  const lambdaEnd = seq.lambda[seq.lambda.length - 1];
  const out: { name: string; x: number[]; y: number[] }[] = [];
  for (const { well, soliton } of separatedSolitons(seq.solitons.predicted, seq.solitons.found_in_last_frame)) {
    const line = straightTrajectory(well.position, soliton.speed, lambdaEnd, xmin, xmax);
    if (line.x.length > 1) out.push({ name: `soliton depth ${soliton.depth.toPrecision(3)} ${seq.energy_unit}`, x: line.x, y: line.lambda });
  }
  return out;
}

const driftText = (d: number): string => (Number.isFinite(d) ? d.toExponential(2) : 'n/a');

export function designFigures(seq: SequenceFile, potential: FrameArray, size: FigureSize = 'paper'): ReportFigure[] {
  const crop = cropToPotential(seq.x, frameRows(potential));
  const E = seq.energy_unit;
  const figures: ReportFigure[] = [];
  figures.push({
    id: 'spacetime',
    caption: `Potential V(x, λ) along the designed sequence (${seq.dispersion} flow), with the straight trajectories predicted from the bound states of the initial trap (speed 4κ² in natural units) drawn through the wells of the last frame.${cropCaption(crop, seq.length_unit)}`,
    svg: heatmap({
      xLabel: `position x (${seq.length_unit})`,
      yLabel: 'flow parameter λ (dimensionless)',
      zLabel: `potential V (${E})`,
      x: crop.x,
      y: Float64Array.from(seq.lambda),
      z: crop.rows,
      overlays: trajectories(seq, crop.lo, crop.hi),
      width: 'double',
      size,
    }),
  });
  const levels = seq.spectrum.energies[0]?.length ?? 0;
  if (levels > 0) {
    const drift = driftText(seq.spectrum.max_drift);
    figures.push({
      id: 'spectrum',
      caption: `Bound-state energies of H(λ) along the sequence: flat lines prove isospectrality. Largest drift ${drift} ${E}.`,
      svg: lineChart({
        xLabel: 'flow parameter λ (dimensionless)',
        yLabel: `energy E (${E})`,
        series: Array.from({ length: levels }, (_, n) => ({
          name: `level ${n}`,
          x: seq.spectrum.lambda,
          y: seq.spectrum.energies.map((row) => row[n] ?? NaN),
          markers: true,
        })),
        width: 'single',
        size,
        annotations: [`max drift ${drift} ${E}`],
      }),
    });
  }
  return figures;
}

/** frame rows of V at each λ of `lambdas` (clamped to the sequence), blended linearly between frames */
function rowsAtLambda(seqLambda: readonly number[], potential: FrameArray, lambdas: readonly number[]): Float64Array[] {
  const [nF, nX] = potential.shape;
  return lambdas.map((target) => {
    const l = Math.min(Math.max(target, seqLambda[0]), seqLambda[nF - 1]);
    let i = 0;
    while (i < nF - 2 && seqLambda[i + 1] < l) i++;
    const w = nF > 1 ? (l - seqLambda[i]) / (seqLambda[i + 1] - seqLambda[i]) : 0;
    const row = new Float64Array(nX);
    for (let j = 0; j < nX; j++) row[j] = (1 - w) * potential.data[i * nX + j] + w * potential.data[Math.min(i + 1, nF - 1) * nX + j];
    return row;
  });
}

/** V(x, t) against lab time for the verified ramp (null without a protocol of positive duration) */
export function labTimeMap(seq: SequenceFile, potential: FrameArray, v: VerifyFile, size: FigureSize = 'paper'): ReportFigure | null {
  const p = v.protocol;
  if (!(p.duration > 0) || !isRampKind(p.ramp)) return null;
  const ramp = makeRamp(p.ramp, p.duration, p.lambda_end);
  const t = Float64Array.from({ length: TIME_ROWS }, (_, i) => (p.duration * i) / (TIME_ROWS - 1));
  // the window of the design map: the blended rows lie between its frames
  const crop = cropToPotential(seq.x, frameRows(potential));
  const rows = rowsAtLambda(seq.lambda, potential, Array.from(t, (ti) => ramp.value(ti))).map((r) => cropRow(crop, r));
  return {
    id: 'spacetime-lab',
    caption: `Potential V(x, t) against lab time for the ${p.ramp} ramp of ${p.duration} ${v.units.time} (frames blended linearly in λ for display).${cropCaption(crop, seq.length_unit)}`,
    svg: heatmap({
      xLabel: `position x (${seq.length_unit})`,
      yLabel: `time t (${v.units.time})`,
      zLabel: `potential V (${seq.energy_unit})`,
      x: crop.x,
      y: t,
      z: rows,
      width: 'double',
      size,
    }),
  };
}

/** the design's rows of the report's summary table */
export function designSummaryRows(seq: SequenceFile): SummaryRow[] {
  const sm = seq.summary;
  return [
    { key: 'scenario', value: sm.name },
    { key: 'species', value: seq.species ?? 'natural units' },
    { key: 'units', value: `${sm.scales.ell}; ${sm.scales.E0}; ${sm.scales.t0}` },
    { key: 'dispersion number δ²', value: sm.delta2 },
    { key: 'solitons predicted', value: seq.solitons.predicted.map((p) => `${p.depth.toPrecision(4)} ${seq.energy_unit}`).join(', ') || 'none' },
    { key: 'wells found at λ_end', value: seq.solitons.found_in_last_frame.map((w) => `${w.depth.toPrecision(4)} ${seq.energy_unit}`).join(', ') || 'none' },
    sm.spectral_drift === null ? { key: 'bound-state drift', value: 'not tested (no bound state)' } : { key: 'bound-state drift', value: sm.spectral_drift, unit: seq.energy_unit },
    ...outcomeSummaryRows(seq),
  ];
}

/** budgets and, for a start built from an outcome, whether it was met */
function outcomeSummaryRows(seq: SequenceFile): SummaryRow[] {
  const { budgets: b, outcome: o } = seq.summary;
  const rows: SummaryRow[] = [
    { key: 'deepest potential / starting depth', value: b.depth_ratio },
    { key: 'deepest potential', value: b.deepest, unit: seq.energy_unit },
    ...(b.narrowest_feature === null ? [] : [{ key: 'narrowest well (full width at half depth)', value: b.narrowest_feature, unit: seq.length_unit }]),
  ];
  if (o) rows.push({ key: `${o.kind} outcome`, value: `${o.met ? 'met' : 'not met'}: ${o.verdict}` });
  if (o?.fit) rows.push({ key: 'radiation the trap would shed (share of ∫V²)', value: o.fit.radiation_fraction });
  return rows;
}
