/**
 * Figures and the HTML report of a finished output folder, rendered from its files only (sequence.json,
 * potential.npy and, when present, verify.json and traces.npy), so `isotrap report DIR` never recomputes.
 */
import { createHash } from 'node:crypto';
import { existsSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { stringify } from 'yaml';
import { UserError } from '../core/errors.ts';
import { prepareOutputDir, writeFileAtomic } from '../io/files.ts';
import { decodeNpy } from '../io/npy.ts';
import { barChart, heatmap, lineChart, renderReport, type ReportFigure, type SummaryRow } from '../report/index.ts';
import { makeRamp, type RampKind } from '../protocol/ramp.ts';
import type { LatticeResult } from './lattice.ts';

/** states shown in the fidelity figure (legibility: 2 drives × 4 states = 8 series, one palette) */
export const FIDELITY_FIGURE_STATES = 4;
/** infidelities are floored here on the log axis: round-off of a unit vector after many FFTs */
export const INFIDELITY_FLOOR = 1e-16;

export interface SequenceFile {
  x: number[];
  lambda: number[];
  length_unit: string;
  energy_unit: string;
  species: string | null;
  dispersion: string;
  spectrum: { lambda: number[]; energies: number[][]; max_drift: number | null; unit: string };
  solitons: {
    predicted: { kappa: number; depth: number; speed: number; energy: number }[];
    found_in_last_frame: { position: number; depth: number }[];
  };
  summary: Record<string, unknown> & { name: string; warnings: string[]; delta2: number | null; scales: { E0: string; t0: string; ell: string } };
  config: Record<string, unknown>;
}

/** Optional verify results, as written by jobs/verify.ts (see its VerifyFile). */
export interface VerifyFileLike {
  units: { energy: string; time: string };
  protocol?: { duration: number; ramp: string; lambda_end: number };
  states: { index: number; energy: number; fidelity_cd: number; fidelity_bare: number; excess_cd: number; excess_bare: number }[];
  thermal: null | { temperature: number; unit: string; fidelity_cd: number; fidelity_bare: number; mean_excess_cd: number; mean_excess_bare: number };
  fermions: null | { count: number; fidelity_cd: number; fidelity_bare: number };
  cd_strength: { unit: string; max_total: number; max_cubic: number; max_potential: number; samples?: { time: number[]; cubic: number[]; potential: number[]; total: number[] } };
  traces: { file: string; times: number[]; rows: { drive: string; state: number }[] };
  summary_rows?: SummaryRow[];
}

function readJson<T>(path: string): T {
  if (!existsSync(path)) throw new UserError(`${path} does not exist: is this a finished isotrap output folder?`);
  try {
    return JSON.parse(readFileSync(path, 'utf8')) as T;
  } catch (err) {
    throw new UserError(`${path} is not valid JSON (${(err as Error).message})`);
  }
}

/** straight soliton lines x = x_end + v(λ − λ_end) through the wells of the last frame, v from the bound states */
function trajectories(seq: SequenceFile): { name: string; x: number[]; y: number[] }[] {
  const lambdaEnd = seq.lambda[seq.lambda.length - 1];
  const xmin = seq.x[0];
  const xmax = seq.x[seq.x.length - 1];
  const out: { name: string; x: number[]; y: number[] }[] = [];
  const used = new Set<number>();
  for (const well of seq.solitons.found_in_last_frame) {
    let best = -1;
    for (let i = 0; i < seq.solitons.predicted.length; i++) {
      if (used.has(i)) continue;
      if (best < 0 || Math.abs(seq.solitons.predicted[i].depth - well.depth) < Math.abs(seq.solitons.predicted[best].depth - well.depth)) best = i;
    }
    if (best < 0) continue;
    const p = seq.solitons.predicted[best];
    if (Math.abs(p.depth - well.depth) > 0.1 * p.depth) continue; // not yet a separated soliton
    used.add(best);
    const xs: number[] = [];
    const ys: number[] = [];
    for (let i = 0; i <= 50; i++) {
      const l = (lambdaEnd * i) / 50;
      const x = well.position + p.speed * (l - lambdaEnd);
      if (x >= xmin && x <= xmax) {
        xs.push(x);
        ys.push(l);
      }
    }
    if (xs.length > 1) out.push({ name: `soliton depth ${p.depth.toPrecision(3)} ${seq.energy_unit}`, x: xs, y: ys });
  }
  return out;
}

export function designFigures(seq: SequenceFile, potential: { data: Float64Array; shape: number[] }): ReportFigure[] {
  const [nF, nX] = potential.shape;
  const rows = Array.from({ length: nF }, (_, i) => potential.data.subarray(i * nX, (i + 1) * nX));
  const E = seq.energy_unit;
  const Lu = seq.length_unit;
  const figures: ReportFigure[] = [];
  figures.push({
    id: 'spacetime',
    caption: `Potential V(x, λ) along the designed sequence (${seq.dispersion} flow), with the straight trajectories predicted from the bound states of the initial trap (speed 4κ² in natural units) drawn through the wells of the last frame.`,
    svg: heatmap({
      xLabel: `position x (${Lu})`,
      yLabel: 'flow parameter λ (dimensionless)',
      zLabel: `potential V (${E})`,
      x: Float64Array.from(seq.x),
      y: Float64Array.from(seq.lambda),
      z: rows,
      overlays: trajectories(seq),
      width: 'double',
    }),
  });
  const levels = seq.spectrum.energies[0]?.length ?? 0;
  if (levels > 0) {
    figures.push({
      id: 'spectrum',
      caption: `Bound-state energies of H(λ) along the sequence: flat lines prove isospectrality. Largest drift ${seq.spectrum.max_drift === null ? 'n/a' : seq.spectrum.max_drift.toExponential(2)} ${E}.`,
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
        annotations: [`max drift ${seq.spectrum.max_drift === null ? 'n/a' : seq.spectrum.max_drift.toExponential(2)} ${E}`],
      }),
    });
  }
  return figures;
}

/** rows of the space–time map against lab time: uniform in t, λ(t) from the ramp, frames blended linearly in λ */
export const TIME_ROWS = 121;

function labTimeMap(seq: SequenceFile, potential: { data: Float64Array; shape: number[] }, v: VerifyFileLike): ReportFigure | null {
  const p = v.protocol;
  if (!p || !(p.duration > 0)) return null;
  const [nF, nX] = potential.shape;
  const ramp = makeRamp(p.ramp as RampKind, p.duration, p.lambda_end);
  const t = Float64Array.from({ length: TIME_ROWS }, (_, i) => (p.duration * i) / (TIME_ROWS - 1));
  const lambdas = seq.lambda;
  const rows = Array.from(t, (ti) => {
    const l = Math.min(Math.max(ramp.value(ti), lambdas[0]), lambdas[nF - 1]);
    let i = 0;
    while (i < nF - 2 && lambdas[i + 1] < l) i++;
    const w = nF > 1 ? (l - lambdas[i]) / (lambdas[i + 1] - lambdas[i]) : 0;
    const row = new Float64Array(nX);
    for (let j = 0; j < nX; j++) row[j] = (1 - w) * potential.data[i * nX + j] + w * potential.data[Math.min(i + 1, nF - 1) * nX + j];
    return row;
  });
  return {
    id: 'spacetime-lab',
    caption: `Potential V(x, t) against lab time for the ${p.ramp} ramp of ${p.duration} ${v.units.time} (frames blended linearly in λ for display).`,
    svg: heatmap({
      xLabel: `position x (${seq.length_unit})`,
      yLabel: `time t (${v.units.time})`,
      zLabel: `potential V (${seq.energy_unit})`,
      x: Float64Array.from(seq.x),
      y: t,
      z: rows,
      width: 'double',
    }),
  };
}

export function verifyFigures(v: VerifyFileLike, traces: { data: Float64Array; shape: number[] } | null): ReportFigure[] {
  const figures: ReportFigure[] = [];
  const T = v.units.time;
  const E = v.units.energy;
  if (traces && v.traces.rows.length > 0) {
    const [nR, nT] = traces.shape;
    // at most FIDELITY_FIGURE_STATES states (both drives) keep the figure legible; traces.npy holds them all
    const series = v.traces.rows
      .slice(0, nR)
      .map((r, i) => ({ r, i }))
      .filter(({ r }) => r.state < FIDELITY_FIGURE_STATES)
      .map(({ r, i }) => ({
        name: `${r.drive === 'cd' ? 'with correction' : 'bare'}, n=${r.state}`,
        x: v.traces.times,
        y: Array.from(traces.data.subarray(i * nT, (i + 1) * nT), (f) => Math.max(1 - f, INFIDELITY_FLOOR)),
        dashed: r.drive !== 'cd',
      }));
    figures.push({
      id: 'fidelity',
      caption: `Infidelity 1 − F(t) of the lowest ${FIDELITY_FIGURE_STATES} tracked eigenstates: with the cubic counterdiabatic correction (solid) and with the bare drive (dashed). F is the weight in the instantaneous (degenerate) eigenspace; values are floored at ${INFIDELITY_FLOOR}.`,
      svg: lineChart({ xLabel: `time t (${T})`, yLabel: 'infidelity 1 − F', series, logY: true, width: 'double' }),
    });
  }
  figures.push({
    id: 'excess',
    caption: `Excess energy ⟨H_final⟩ − E_final of each state after the ramp, with and without the correction (${E}).`,
    svg: barChart({
      xLabel: 'state n',
      yLabel: `excess energy (${E})`,
      groups: v.states.map((s) => ({ label: `n=${s.index}`, values: [{ name: 'cd', value: Math.abs(s.excess_cd) }, { name: 'bare', value: Math.abs(s.excess_bare) }] })),
      logY: true,
      width: 'single',
    }),
  });
  const ens: { label: string; values: { name: string; value: number }[] }[] = [];
  if (v.thermal) ens.push({ label: `thermal ${v.thermal.temperature} ${v.thermal.unit}`, values: [{ name: 'cd', value: 1 - v.thermal.fidelity_cd }, { name: 'bare', value: 1 - v.thermal.fidelity_bare }] });
  if (v.fermions) ens.push({ label: `Fermi sea N=${v.fermions.count}`, values: [{ name: 'cd', value: 1 - v.fermions.fidelity_cd }, { name: 'bare', value: 1 - v.fermions.fidelity_bare }] });
  if (ens.length > 0) {
    figures.push({
      id: 'ensembles',
      caption: 'Infidelity of the thermal ensemble and of the filled Fermi sea after the ramp, with and without the correction.',
      svg: barChart({ xLabel: 'ensemble', yLabel: 'infidelity 1 − F', groups: ens, logY: true, width: 'single' }),
    });
  }
  const s = v.cd_strength.samples;
  if (s && s.time.length > 1) {
    figures.push({
      id: 'correction',
      caption: `Size of the counterdiabatic correction |λ̇|·‖A‖ on the occupied low-energy subspace against time, split into the p³ part and the potential-weighted momentum part (${v.cd_strength.unit}).`,
      svg: lineChart({
        xLabel: `time t (${T})`,
        yLabel: `correction strength (${v.cd_strength.unit})`,
        series: [
          { name: 'p³ part', x: s.time, y: s.cubic },
          { name: '{V, p} part', x: s.time, y: s.potential, dashed: true },
          { name: 'total', x: s.time, y: s.total },
        ],
        width: 'single',
      }),
    });
  }
  return figures;
}

/** compute time recorded in the folder's own files (design integrator + verify), when no run time is given */
function recordedSeconds(seq: SequenceFile, verify: VerifyFileLike | null): number {
  const integ = (seq.summary as { integrator?: { seconds?: number } }).integrator?.seconds ?? 0;
  const ver = (verify as unknown as { seconds?: number } | null)?.seconds ?? 0;
  const total = integ + ver;
  return Number.isFinite(total) && total >= 0 ? total : 0;
}

/** Figures of a lattice realisation: the nearest-neighbour coupling amplitudes as a space–time map, and the
 * lattice infidelity with the correction against sites per soliton width. */
export function latticeFigures(result: LatticeResult): ReportFigure[] {
  const { summary: s, tables: t } = result;
  const bonds = t.sites.length - 1;
  const samples = t.times.length;
  const rows = Array.from({ length: samples }, (_, i) => t.nnAmplitude.slice(i * bonds, (i + 1) * bonds));
  const bondX = Float64Array.from({ length: bonds }, (_, j) => 0.5 * (t.sites[j] + t.sites[j + 1]));
  const figures: ReportFigure[] = [
    {
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
      }),
    },
  ];
  const study = s.study.rows;
  if (study.length >= 2) {
    const states = study[0].infidelity_cd.length;
    figures.push({
      id: 'lattice-convergence',
      caption: `Lattice infidelity 1 − F with the correction against sites per soliton width, for each tracked state; target ${s.study.target_infidelity}${s.study.observed_order !== null ? `, observed order ${s.study.observed_order.toFixed(2)} in the spacing` : ''}.`,
      svg: lineChart({
        xLabel: 'sites per soliton width (dimensionless)',
        yLabel: 'infidelity 1 − F',
        series: [
          ...Array.from({ length: states }, (_, n) => ({ name: `state ${n}`, x: study.map((r) => r.sites_per_width), y: study.map((r) => Math.max(r.infidelity_cd[n], INFIDELITY_FLOOR)), markers: true })),
          { name: 'target', x: [study[0].sites_per_width, study[study.length - 1].sites_per_width], y: [s.study.target_infidelity, s.study.target_infidelity], dashed: true },
        ],
        logY: true,
        width: 'single',
      }),
    });
  }
  return figures;
}

/** the parts of compare.json the figures read */
export interface CompareFileLike {
  units: { length: string; energy: string };
  delta2: number;
  breaking_lambda: number;
  distance: { lambda: number[]; max: number[]; l2: number[]; lambda_1pct: number | null; threshold: number };
  sequences: { x: number[]; lambda: number[]; quantum: number[][]; classical: (number[] | null)[] };
  scaling: { exponent: number; uncertainty: number; prefactor: number; points: { delta: number; distance_max: number; distance_l2: number }[] };
  classical_phase_space: { trajectories: { shell_energy: number; classical: { action_drift: number }; quantum: { action_drift: number } }[] };
}

/** Figures of `compare`: both sequences side by side, their distance, the ħ-scaling fit, action drifts. */
export function compareFigures(c: CompareFileLike): ReportFigure[] {
  const figures: ReportFigure[] = [];
  const E = c.units.energy;
  const Lu = c.units.length;
  const seq = c.sequences;
  const common = seq.classical.findIndex((r) => r === null);
  const nRows = common < 0 ? seq.lambda.length : common;
  if (nRows >= 2) {
    const z = (rows: (number[] | null)[]) => rows.slice(0, nRows).map((r) => Float64Array.from(r as number[]));
    const range: [number, number] = [Math.min(...seq.quantum.slice(0, nRows).flat(), ...seq.classical.slice(0, nRows).flat() as number[]), 0];
    for (const [id, rows, label] of [['compare-quantum', seq.quantum, 'quantum (KdV)'], ['compare-classical', seq.classical, 'classical (Hopf)']] as const) {
      figures.push({
        id,
        caption: `The ${label} sequence from the same start, up to the λ where both exist (same colour scale in both maps).`,
        svg: heatmap({ xLabel: `position x (${Lu})`, yLabel: 'flow parameter λ (dimensionless)', zLabel: `potential V (${E})`, x: Float64Array.from(seq.x), y: Float64Array.from(seq.lambda.slice(0, nRows)), z: z(rows), zRange: range, width: 'single' }),
      });
    }
  }
  const d = c.distance;
  figures.push({
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
  });
  const pts = c.scaling.points;
  if (pts.length >= 2) {
    const fit = pts.map((p) => c.scaling.prefactor * Math.pow(p.delta, c.scaling.exponent));
    figures.push({
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
    });
  }
  const tr = c.classical_phase_space.trajectories;
  if (tr.length > 0) {
    figures.push({
      id: 'compare-action',
      caption: 'Relative drift of the action ∮p dx of classical trajectories under the classical counterdiabatic Hamiltonian, along the classical (Hopf) sequence — conserved — and along the quantum (KdV) sequence.',
      svg: barChart({
        xLabel: 'trajectory (energy shell of H(0))',
        yLabel: 'relative action drift',
        groups: tr.map((t, i) => ({ label: `${i}: E=${t.shell_energy.toPrecision(2)}`, values: [{ name: 'Hopf sequence', value: Math.abs(t.classical.action_drift) }, { name: 'KdV sequence', value: Math.abs(t.quantum.action_drift) }] })),
        logY: true,
        width: 'double',
      }),
    });
  }
  return figures;
}

/** write figures into dir (atomically; refuses to overwrite without force) */
export function writeFigures(figures: ReportFigure[], dir: string, force: boolean): string[] {
  prepareOutputDir(dir, { force, produces: figures.map((f) => `${f.id}.svg`) });
  return figures.map((f) => {
    const p = join(dir, `${f.id}.svg`);
    writeFileAtomic(p, f.svg);
    return p;
  });
}

/** write the lattice figures into dir (atomically; refuses to overwrite without force) */
export function writeLatticeFigures(result: LatticeResult, dir: string, force: boolean): string[] {
  return writeFigures(latticeFigures(result), dir, force);
}

export interface ReportOptions {
  force: boolean;
  runSeconds?: number;
  toolVersion: string;
}

/** Render all figures of an output folder into DIR/*.svg and DIR/report.html; returns the files written. */
export function renderFolder(dir: string, opts: ReportOptions): string[] {
  const seq = readJson<SequenceFile>(join(dir, 'sequence.json'));
  const potPath = join(dir, 'potential.npy');
  if (!existsSync(potPath)) throw new UserError(`${potPath} does not exist: is this a finished isotrap output folder?`);
  const potential = decodeNpy(readFileSync(potPath), potPath);
  const figures = designFigures(seq, potential);
  let verify: VerifyFileLike | null = null;
  if (existsSync(join(dir, 'verify.json'))) {
    verify = readJson<VerifyFileLike>(join(dir, 'verify.json'));
    const tp = join(dir, verify.traces.file);
    const traces = existsSync(tp) ? decodeNpy(readFileSync(tp), tp) : null;
    const lab = labTimeMap(seq, potential, verify);
    if (lab) figures.push(lab);
    figures.push(...verifyFigures(verify, traces));
  }
  const names = [...figures.map((f) => `${f.id}.svg`), 'report.html'];
  prepareOutputDir(dir, { force: opts.force, produces: names });
  const written: string[] = [];
  for (const f of figures) {
    const p = join(dir, `${f.id}.svg`);
    writeFileAtomic(p, f.svg);
    written.push(p);
  }
  const sm = seq.summary;
  const summaryRows: SummaryRow[] = [
    { key: 'scenario', value: sm.name },
    { key: 'species', value: seq.species ?? 'natural units' },
    { key: 'units', value: `${sm.scales.ell}; ${sm.scales.E0}; ${sm.scales.t0}` },
    { key: 'dispersion number δ²', value: sm.delta2 ?? NaN },
    { key: 'solitons predicted', value: seq.solitons.predicted.map((p) => `${p.depth.toPrecision(4)} ${seq.energy_unit}`).join(', ') || 'none' },
    { key: 'wells found at λ_end', value: seq.solitons.found_in_last_frame.map((w) => `${w.depth.toPrecision(4)} ${seq.energy_unit}`).join(', ') || 'none' },
    { key: 'bound-state drift', value: seq.spectrum.max_drift ?? NaN, unit: seq.energy_unit },
    ...(verify?.summary_rows ?? []),
  ];
  const configText = stringify(seq.config);
  const html = renderReport({
    title: `isotrap report: ${sm.name}`,
    summaryRows,
    figures,
    configText,
    provenance: {
      toolVersion: opts.toolVersion,
      configHash: createHash('sha256').update(configText).digest('hex').slice(0, 16),
      date: new Date().toISOString(),
      runSeconds: opts.runSeconds ?? recordedSeconds(seq, verify),
    },
    warnings: [...(sm.warnings ?? []), ...((verify as unknown as { warnings?: string[] })?.warnings ?? [])],
  });
  const hp = join(dir, 'report.html');
  writeFileAtomic(hp, html);
  written.push(hp);
  return written;
}
