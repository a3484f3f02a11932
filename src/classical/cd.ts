/**
 * Classical phase-space check of cubic counterdiabatic driving (physics.md §2–§3), natural units ħ = 1, m = ½:
 *
 *     H_CD(x, p, s) = p² + u(x, λ) + σ λ′(s) (−4p³ − 6u p + c p)
 *
 * The bracket is the Weyl symbol of the quantum generator −(4k³ + 3{u, k}) (the symbol of {u, k} is 2uk), i.e.
 * a p³ + g p with a = −4, g = 3amu = −6u, plus the translation c p of a co-moving drift. With σ = +1 and a
 * Hopf-admissible sequence (u_λ = 6uu_x − cu_x) one has ∂_λH₀ = {A, H₀} for H₀ = p² + u, so the instantaneous
 * energy H₀(x(s), p(s), λ(s)) of every trajectory is constant: dH₀/ds = λ′(∂_λH₀ − {A, H₀}) = 0, and so is the
 * action ∮p dx of the instantaneous orbit (the flow of A is canonical and maps energy shells onto energy
 * shells). Along the quantum (KdV) sequence dH₀/ds = −λ′u_xxx: the drift is set by the dispersive term, ∝ δ².
 * σ = −1 (the correction with the wrong sign) gives dH₀/ds = 2λ′u_λ.
 */
import type { Ramp } from '../protocol/ramp.ts';
import { orbitAction } from './action.ts';
import type { Profile1D, SequenceField } from './field.ts';
import { integrateTrajectories, phaseState, type PhaseHamiltonian, type PhaseState } from './symplectic.ts';

/** energy shells of H(0) are spread over this fraction range of the well (0: bottom, 1: lowest rim), away from
 * the bottom (tiny orbits) and from the rim (separatrix, diverging period) — common practice */
export const SHELL_LOW = 0.15;
export const SHELL_HIGH = 0.7;
/** phase advance per step at the estimated fastest frequency: 0.02 rad gives a 4th-order energy error ~1e-8 */
export const STEP_PHASE = 0.02;
/** the sequence may steepen: the curvature bound of u₀ is multiplied by this for the step estimate */
export const CURVATURE_SAFETY = 4;
/** action checkpoints along the ramp (each costs a turning-point quadrature per trajectory) */
export const ACTION_CHECKPOINTS = 10;

export type LambdaRamp = Pick<Ramp, 'value' | 'rate' | 'duration'>;

/** The classical CD Hamiltonian above for a sequence field and a ramp λ(s). sign = σ. */
export function cdHamiltonian(field: SequenceField, ramp: LambdaRamp, sign: 1 | -1 | 0 = 1, drift = 0): PhaseHamiltonian & { rate: number } {
  const u = new Float64Array(4);
  const self = {
    rate: 0,
    prepare(s: number) {
      field.select(ramp.value(s));
      self.rate = sign * ramp.rate(s);
    },
    derivatives(x: number, p: number, out: Float64Array) {
      field.evaluate(x, u);
      const r = self.rate;
      const f = 1 - 6 * r * p;
      out[0] = p * p + u[0] + r * (-4 * p * p * p - 6 * u[0] * p + drift * p);
      out[1] = u[1] * f;
      out[2] = 2 * p + r * (-12 * p * p - 6 * u[0] + drift);
      out[3] = u[2] * f;
      out[4] = -6 * r * u[1];
      out[5] = 2 - 24 * r * p;
    },
  };
  return self;
}

export interface ShellStart {
  /** shell energy of H(0) = p² + u₀ (E₀) */
  energy: number;
  /** fraction of the well height */
  fraction: number;
  /** phase angle on the shell used to place the point */
  phase: number;
  x: number;
  p: number;
}

export interface WellShape {
  /** position of the minimum, its value, the lowest rim (smaller of the highest values left and right of it) */
  position: number;
  bottom: number;
  rim: number;
  /** small-oscillation frequency √(2u″) of p² + u at the bottom */
  omega: number;
  /** largest |u″| and |u′| of the samples (step estimate) */
  maxCurvature: number;
  maxSlope: number;
}

/** deepest well of grid samples (x ascending) of a profile */
export function wellShape(profile: Profile1D, xs: Float64Array): WellShape {
  const buf = new Float64Array(4);
  const n = xs.length;
  const us = new Float64Array(n);
  let maxCurvature = 0, maxSlope = 0;
  for (let j = 0; j < n; j++) {
    profile.evaluate(xs[j], buf);
    us[j] = buf[0];
    maxCurvature = Math.max(maxCurvature, Math.abs(buf[2]));
    maxSlope = Math.max(maxSlope, Math.abs(buf[1]));
  }
  let jm = 0;
  for (let j = 1; j < n; j++) if (us[j] < us[jm]) jm = j;
  let left = -Infinity, right = -Infinity;
  for (let j = 0; j <= jm; j++) left = Math.max(left, us[j]);
  for (let j = jm; j < n; j++) right = Math.max(right, us[j]);
  // refine the minimum by Newton on u′ = 0
  let x = xs[jm];
  const dx = n > 1 ? xs[1] - xs[0] : 1;
  for (let it = 0; it < 30; it++) {
    profile.evaluate(x, buf);
    if (!(buf[2] > 0)) break;
    const st = buf[1] / buf[2];
    if (Math.abs(st) > dx) break;
    x -= st;
    if (Math.abs(st) < 1e-15 * (1 + Math.abs(x))) break;
  }
  profile.evaluate(x, buf);
  return { position: x, bottom: buf[0], rim: Math.min(left, right), omega: Math.sqrt(Math.max(2 * buf[2], 0)), maxCurvature, maxSlope };
}

/**
 * Starting points on `shells` energy shells of H(0) = p² + u₀ in the deepest well, `phases` points per shell:
 * x = c − r′cos φ, p = ±√(E − u₀(x)) (sign of sin φ), with c, r the centre and half-width of the orbit and
 * r′ = r(1 − 1e-3) so that no point sits exactly on a turning point.
 */
export function shellStarts(profile: Profile1D, xs: Float64Array, shells: number, phases: number): ShellStart[] {
  const w = wellShape(profile, xs);
  const out: ShellStart[] = [];
  const buf = new Float64Array(4);
  const step = xs[1] - xs[0];
  for (let i = 0; i < shells; i++) {
    const fraction = shells === 1 ? 0.5 * (SHELL_LOW + SHELL_HIGH) : SHELL_LOW + ((SHELL_HIGH - SHELL_LOW) * i) / (shells - 1);
    const energy = w.bottom + fraction * (w.rim - w.bottom);
    const orbit = orbitAction(profile, w.position, energy, step / 4, xs[0], xs[xs.length - 1]);
    if (!Number.isFinite(orbit.action)) continue;
    const c = 0.5 * (orbit.left + orbit.right);
    const r = 0.5 * (orbit.right - orbit.left) * (1 - 1e-3);
    for (let k = 0; k < phases; k++) {
      const phase = (2 * Math.PI * (k + 0.25)) / phases;
      const x = c - r * Math.cos(phase);
      profile.evaluate(x, buf);
      const p = Math.sign(Math.sin(phase) || 1) * Math.sqrt(Math.max(energy - buf[0], 0));
      out.push({ energy: p * p + buf[0], fraction, phase, x, p });
    }
  }
  return out;
}

export interface TrajectoryReport {
  /** shell energy and starting point */
  start: ShellStart;
  /** largest |H₀(s) − H₀(0)| along the ramp (E₀) */
  energyDriftMax: number;
  /** H₀(end) − H₀(0) (E₀) */
  energyDriftFinal: number;
  /** action of the instantaneous orbit at the start and the end (ħ), NaN if the orbit is not closed */
  actionStart: number;
  actionEnd: number;
  /** largest |J(s) − J(0)|/J(0) over the checkpoints (NaN if an orbit opened) */
  actionDriftMax: number;
}

export interface PhaseSpaceOptions {
  /** σ: +1 the CD correction, −1 reversed, 0 none */
  sign?: 1 | -1 | 0;
  drift?: number;
  /** number of 4th-order steps (default from the estimated fastest frequency, see `suggestSteps`) */
  steps?: number;
  /** box for the turning-point scan and the scan step */
  xMin: number;
  xMax: number;
  scanStep: number;
  checkpoints?: number;
}

/**
 * Steps for `phaseSpaceCheck`: the fastest linear frequency of H_CD, √(|H_xx| |H_pp|) + |H_xp|, bounded with the
 * initial well's curvature and slope (times `curvatureFactor`: how much the sequence may steepen), the largest momentum √(rim − bottom) and the
 * largest ramp rate, at STEP_PHASE radians per step.
 */
export function suggestSteps(shape: WellShape, ramp: LambdaRamp, curvatureFactor = CURVATURE_SAFETY, samples = 256): number {
  let rate = 0;
  for (let i = 0; i <= samples; i++) rate = Math.max(rate, Math.abs(ramp.rate((ramp.duration * i) / samples)));
  const pMax = Math.sqrt(Math.max(shape.rim - shape.bottom, 0));
  const hxx = curvatureFactor * shape.maxCurvature * (1 + 6 * rate * pMax);
  const hpp = 2 + 24 * rate * pMax;
  const hxp = 6 * rate * curvatureFactor * shape.maxSlope;
  const omega = Math.sqrt(hxx * hpp) + hxp;
  return Math.max(16, Math.ceil((ramp.duration * omega) / STEP_PHASE));
}

/**
 * Integrate every start under H_CD (Yoshida-4 implicit midpoint, symplectic.ts) over the ramp and report the
 * drift of the instantaneous energy H₀ = p² + u(x, λ(s)) and of the instantaneous orbit's action.
 */
export function phaseSpaceCheck(field: SequenceField, ramp: LambdaRamp, starts: readonly ShellStart[], opts: PhaseSpaceOptions): { trajectories: TrajectoryReport[]; steps: number } {
  const n = starts.length;
  const ham = cdHamiltonian(field, ramp, opts.sign ?? 1, opts.drift ?? 0);
  const state = phaseState(n);
  starts.forEach((s, i) => {
    state.x[i] = s.x;
    state.p[i] = s.p;
  });
  const steps = opts.steps ?? 1000;
  const checkpoints = opts.checkpoints ?? ACTION_CHECKPOINTS;
  const e0 = new Float64Array(n);
  const eMax = new Float64Array(n);
  const eLast = new Float64Array(n);
  const j0 = new Float64Array(n);
  const jLast = new Float64Array(n);
  const jMax = new Float64Array(n);
  const buf = new Float64Array(4);
  const every = Math.max(1, Math.round(steps / checkpoints));
  const energyAt = (st: PhaseState, i: number): number => {
    field.evaluate(st.x[i], buf);
    return st.p[i] * st.p[i] + buf[0];
  };
  const actionAt = (st: PhaseState, i: number, e: number): number => orbitAction(field, st.x[i], e, opts.scanStep, opts.xMin, opts.xMax).action;
  integrateTrajectories(ham, state, 0, ramp.duration, steps, {
    observe: (t, st, k) => {
      field.select(ramp.value(t));
      const check = k === 0 || k === steps || k % every === 0;
      for (let i = 0; i < n; i++) {
        const e = energyAt(st, i);
        if (k === 0) {
          e0[i] = e;
          j0[i] = actionAt(st, i, e);
        }
        eMax[i] = Math.max(eMax[i], Math.abs(e - e0[i]));
        eLast[i] = e - e0[i];
        if (check && k > 0) {
          const J = actionAt(st, i, e);
          jLast[i] = J;
          jMax[i] = Number.isFinite(J) && Number.isFinite(jMax[i]) ? Math.max(jMax[i], Math.abs(J - j0[i]) / Math.abs(j0[i])) : NaN;
        }
      }
    },
  });
  const trajectories = starts.map((start, i) => ({
    start,
    energyDriftMax: eMax[i],
    energyDriftFinal: eLast[i],
    actionStart: j0[i],
    actionEnd: jLast[i],
    actionDriftMax: jMax[i],
  }));
  return { trajectories, steps };
}
