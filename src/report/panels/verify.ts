/**
 * Figures of a verification (verify.json + traces.npy): infidelity against time with and without the cubic
 * correction, excess energies per state, ensemble infidelities and the size of the correction against time.
 */
import type { VerifyFile } from '../../io/formats/verify.ts';
import { barChart, symlogConstant } from '../bar-chart.ts';
import type { ReportFigure } from '../html.ts';
import { lineChart } from '../line-chart.ts';
import type { FigureSize } from '../style.ts';
import type { FrameArray } from './design.ts';

/** states shown in the fidelity figure (legibility: 2 drives × 4 states = 8 series, one palette) */
export const FIDELITY_FIGURE_STATES = 4;
/** infidelities are floored here on the log axis: round-off of a unit vector after many FFTs */
export const INFIDELITY_FLOOR = 1e-16;

/** infidelity traces of the lowest FIDELITY_FIGURE_STATES states (both drives; traces.npy holds them all) */
function fidelityFigure(v: VerifyFile, traces: FrameArray, size: FigureSize): ReportFigure {
  const [nR, nT] = traces.shape;
  const series = v.traces.rows
    .slice(0, nR)
    .map((r, i) => ({ r, i }))
    .filter(({ r }) => r.state < FIDELITY_FIGURE_STATES && (r.drive === 'cd' || r.drive === 'bare'))
    .map(({ r, i }) => ({
      name: `${r.drive === 'cd' ? 'with correction' : 'bare'}, n=${r.state}`,
      x: v.traces.times,
      y: Array.from(traces.data.subarray(i * nT, (i + 1) * nT), (f) => Math.max(1 - f, INFIDELITY_FLOOR)),
      dashed: r.drive !== 'cd',
    }));
  return {
    id: 'fidelity',
    caption: `Infidelity 1 − F(t) of the lowest ${FIDELITY_FIGURE_STATES} tracked eigenstates: with the cubic counterdiabatic correction (solid) and with the bare drive (dashed). F is the weight in the instantaneous (degenerate) eigenspace; values are floored at ${INFIDELITY_FLOOR}.`,
    svg: lineChart({ xLabel: `time t (${v.units.time})`, yLabel: 'infidelity 1 − F', series, logY: true, width: 'double', size }),
  };
}

/** thermal-ensemble and Fermi-sea infidelities, the same quantities as the summary (null when verify computed neither) */
export function ensemblesFigure(v: VerifyFile, size: FigureSize = 'paper'): ReportFigure | null {
  const ens: { label: string; values: { name: string; value: number }[] }[] = [];
  const pair = (cd: number, bare: number) => [{ name: 'cd', value: 1 - cd }, { name: 'bare', value: 1 - bare }];
  const parts: string[] = [];
  if (v.thermal) {
    const T = `${v.thermal.temperature} ${v.thermal.unit}`;
    ens.push({ label: `thermal ${T}, mean`, values: pair(v.thermal.fidelity_cd, v.thermal.fidelity_bare) });
    ens.push({ label: `thermal ${T}, Uhlmann`, values: pair(v.thermal.uhlmann_cd, v.thermal.uhlmann_bare) });
    parts.push(`the thermal ensemble at ${T} (the Boltzmann mean of the state fidelities, and the Uhlmann fidelity of the evolved and the final Gibbs state)`);
  }
  if (v.fermions) {
    ens.push({ label: `Fermi sea N=${v.fermions.count}`, values: pair(v.fermions.fidelity_cd, v.fermions.fidelity_bare) });
    parts.push(`the filled Fermi sea of ${v.fermions.count} fermions`);
  }
  if (ens.length === 0) return null;
  return {
    id: 'ensembles',
    caption: `Infidelity 1 − F after the ramp, with and without the correction, of ${parts.join(' and of ')}; the values in the summary.`,
    svg: barChart({ xLabel: 'ensemble', yLabel: 'infidelity 1 − F', groups: ens, logY: true, width: 'single', size }),
  };
}

/** the summary's correction size against time: the same series as verify.json cd_strength (null without samples) */
function correctionFigure(v: VerifyFile, size: FigureSize): ReportFigure | null {
  const c = v.cd_strength;
  if (!(c.time.length > 1)) return null;
  return {
    id: 'correction',
    caption:
      `Size of the counterdiabatic correction against time (${c.unit}): its coupling out of the ${c.occupied} occupied states, |λ̇|·‖(1 − P)AP‖ ` +
      `(the value in the summary is the largest of this curve), the same for the p³ part and the potential-weighted part alone (they partly cancel), ` +
      'and the largest single transition element |λ̇⟨m|A|n⟩| between an occupied and a tracked state.',
    svg: lineChart({
      xLabel: `time t (${v.units.time})`,
      yLabel: `correction size (${c.unit})`,
      series: [
        { name: 'out of occupied states', x: c.time, y: c.leakage },
        { name: 'p³ part alone', x: c.time, y: c.leakage_cubic, dashed: true },
        { name: '{V, p} part alone', x: c.time, y: c.leakage_potential, dashed: true },
        { name: 'largest element', x: c.time, y: c.window },
      ],
      width: 'single',
      size,
    }),
  };
}

/**
 * excess energies as in verify.json, signed, on a symmetric-log axis: the correction's excess is often many
 * decades below the bare one, and a linear axis would draw it as nothing
 */
export function excessFigure(v: VerifyFile, size: FigureSize = 'paper'): ReportFigure {
  const E = v.units.energy;
  const k = symlogConstant(v.states.flatMap((s) => [s.excess_cd, s.excess_bare]));
  return {
    id: 'excess',
    caption:
      `Excess energy ⟨H_final⟩ − E_final of each state after the ramp, with and without the correction (${E}), with its sign: bars below the zero line are negative. ` +
      `Symmetric-log axis: linear for |excess| < ${k} ${E}, logarithmic beyond (each decade the same height).`,
    svg: barChart({
      xLabel: 'state n',
      yLabel: `excess energy (${E})`,
      groups: v.states.map((s) => ({ label: `n=${s.index}`, values: [{ name: 'cd', value: s.excess_cd }, { name: 'bare', value: s.excess_bare }] })),
      symlogY: k,
      width: 'single',
      size,
    }),
  };
}

/** the final infidelity of every tracked state under each drive, painted ones included: the numbers of verify.json
 *  states[] and painted.drives[] (null without painted drives) */
export function paintedFigure(v: VerifyFile, size: FigureSize = 'paper'): ReportFigure | null {
  const p = v.painted;
  if (!p || p.drives.length === 0) return null;
  const label: Record<string, string> = { painted: 'painted (best ½{g,p})', painted_ground: 'painted (ground state exact)' };
  const floor = (f: number) => Math.max(1 - f, INFIDELITY_FLOOR);
  const E = v.units.energy;
  const range = p.drives.map((d) => `${label[d.drive]}: ${d.deepest.toPrecision(4)} … ${d.highest.toPrecision(4)} ${E}`).join('; ');
  return {
    id: 'painted',
    caption:
      `Infidelity 1 − F of each tracked state after the ramp under the exact cubic correction, the painted corrections (pure potentials V + V_loc, no momentum term) and the bare drive; ` +
      `values floored at ${INFIDELITY_FLOOR}. Painted potential over the protocol (lowest … highest): ${range}; the starting trap spans ${p.start.deepest.toPrecision(4)} … ${p.start.highest.toPrecision(4)} ${E}.`,
    svg: barChart({
      xLabel: 'state n',
      yLabel: 'infidelity 1 − F',
      groups: v.states.map((s, i) => ({
        label: `n=${s.index}`,
        values: [{ name: 'cubic (exact)', value: floor(s.fidelity_cd) }, ...p.drives.map((d) => ({ name: label[d.drive], value: floor(d.fidelity[i]) })), { name: 'bare', value: floor(s.fidelity_bare) }],
      })),
      logY: true,
      width: 'double',
      size,
    }),
  };
}

/** the condensate beside the single particle: ground-state infidelity under each drive, the numbers of verify.json
 *  interaction.drives[] and interaction.single_particle (null without verify.interaction) */
export function condensateFigure(v: VerifyFile, size: FigureSize = 'paper'): ReportFigure | null {
  const c = v.interaction;
  if (!c) return null;
  const floor = (f: number) => Math.max(1 - f, INFIDELITY_FLOOR);
  const name: Record<string, string> = { cd: 'cubic', painted_condensate: 'painted (condensate)', bare: 'bare' };
  return {
    id: 'condensate',
    caption:
      `Ground-state infidelity 1 − F after the ramp: a single atom (left) and a condensate of ${c.atoms} atoms with g₁D = ${c.g1d.toPrecision(4)} ${c.g1d_unit} per atom (right), ` +
      `under the cubic correction, the condensate's painted protocol (pure potential from its own density) and the bare drive; values floored at ${INFIDELITY_FLOOR}. ${c.verdict}.`,
    svg: barChart({
      xLabel: 'system',
      yLabel: 'infidelity 1 − F',
      groups: [
        { label: 'single particle', values: [{ name: 'cubic', value: floor(c.single_particle.fidelity_cd) }, { name: 'bare', value: floor(c.single_particle.fidelity_bare) }] },
        { label: `condensate N=${c.atoms}`, values: c.drives.map((d) => ({ name: name[d.drive], value: floor(d.fidelity) })) },
      ],
      logY: true,
      width: 'single',
      size,
    }),
  };
}

export function verifyFigures(v: VerifyFile, traces: FrameArray | null, size: FigureSize = 'paper'): ReportFigure[] {
  const figures: ReportFigure[] = [];
  if (traces && v.traces.rows.length > 0) figures.push(fidelityFigure(v, traces, size));
  figures.push(excessFigure(v, size));
  const painted = paintedFigure(v, size);
  if (painted) figures.push(painted);
  const ens = ensemblesFigure(v, size);
  if (ens) figures.push(ens);
  const cond = condensateFigure(v, size);
  if (cond) figures.push(cond);
  const corr = correctionFigure(v, size);
  if (corr) figures.push(corr);
  return figures;
}
