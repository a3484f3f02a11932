/**
 * Fourth-order symplectic integration of a one-degree-of-freedom, time-dependent, non-separable Hamiltonian
 * H(x, p, t), such as the classical counterdiabatic Hamiltonian p² + u + λ̇(−4p³ − 6up) whose p³ and up terms
 * rule out explicit splittings into kinetic and potential parts.
 *
 * Base step: the implicit midpoint rule in extended phase space (x, p; t, e) with K = H(x, p, t) + e, which is
 * symplectic and symmetric for any smooth H (Hairer, Lubich & Wanner, Geometric Numerical Integration, 2nd ed.
 * 2006, ch. VI; a time-dependent H becomes autonomous with t and its conjugate added): t advances exactly and
 *
 *     X = x + (h/2) H_p(X, P, t + h/2),   P = p − (h/2) H_x(X, P, t + h/2),   (x′, p′) = (2X − x, 2P − p),
 *
 * solved for the midpoint (X, P) by Newton's method with the exact 2×2 Jacobian (second derivatives of H).
 * Order 4: Yoshida's triple jump, Φ_{γ₁h} ∘ Φ_{γ₂h} ∘ Φ_{γ₁h} with γ₁ = 1/(2 − 2^{1/3}), γ₂ = 1 − 2γ₁
 * (Yoshida, Phys. Lett. A 150, 262, 1990; Hairer, Lubich & Wanner §II.4), valid for any symmetric base method.
 *
 * Many independent trajectories advance together so that a time-dependent potential is prepared once per stage
 * time (`PhaseHamiltonian.prepare`).
 */

import { TRIPLE_JUMP } from '../integrate/composition.ts';

/** Newton stops when the midpoint moves by less than this (relative): round-off */
export const NEWTON_TOLERANCE = 1e-15;
/** iteration cap; the predictor is O(h²) accurate, so convergence takes 3–5 iterations at sensible h */
export const NEWTON_MAX_ITERATIONS = 50;

/** Yoshida triple-jump weights γ₁, γ₂ (their one home: integrate/composition.ts) */
export const YOSHIDA_GAMMA1 = TRIPLE_JUMP[0];
export const YOSHIDA_GAMMA2 = TRIPLE_JUMP[1];

export interface PhaseHamiltonian {
  /** make derivatives() refer to time t (called once per stage for all trajectories) */
  prepare(t: number): void;
  /** out = [H, H_x, H_p, H_xx, H_xp, H_pp] at (x, p) and the prepared time */
  derivatives(x: number, p: number, out: Float64Array): void;
}

/** positions and momenta of a batch of trajectories */
export interface PhaseState {
  x: Float64Array;
  p: Float64Array;
}

export function phaseState(n: number): PhaseState {
  return { x: new Float64Array(n), p: new Float64Array(n) };
}

export class NewtonFailure extends Error {}

/** scratch for the steps (allocated once) */
export interface SymplecticWorkspace {
  d: Float64Array;
  mid: PhaseState;
  stage: PhaseState;
}

export function symplecticWorkspace(n: number): SymplecticWorkspace {
  return { d: new Float64Array(6), mid: phaseState(n), stage: phaseState(n) };
}

/**
 * One implicit-midpoint step of size h from time t for every trajectory: `from` → `to` (may not alias).
 * The Hamiltonian is evaluated at t + h/2.
 */
export function midpointStep(ham: PhaseHamiltonian, from: PhaseState, t: number, h: number, to: PhaseState, ws: SymplecticWorkspace): void {
  ham.prepare(t + 0.5 * h);
  const d = ws.d;
  const hh = 0.5 * h;
  for (let i = 0; i < from.x.length; i++) {
    const x0 = from.x[i], p0 = from.p[i];
    ham.derivatives(x0, p0, d);
    // explicit Euler predictor for the midpoint
    let X = x0 + hh * d[2];
    let P = p0 - hh * d[1];
    let converged = false;
    for (let it = 0; it < NEWTON_MAX_ITERATIONS; it++) {
      ham.derivatives(X, P, d);
      const r1 = X - x0 - hh * d[2];
      const r2 = P - p0 + hh * d[1];
      // Jacobian of (r1, r2) in (X, P)
      const a = 1 - hh * d[4];
      const b = -hh * d[5];
      const c = hh * d[3];
      const e = 1 + hh * d[4];
      const det = a * e - b * c;
      const dX = (r1 * e - b * r2) / det;
      const dP = (a * r2 - c * r1) / det;
      X -= dX;
      P -= dP;
      if (Math.abs(dX) <= NEWTON_TOLERANCE * (1 + Math.abs(X)) && Math.abs(dP) <= NEWTON_TOLERANCE * (1 + Math.abs(P))) {
        converged = true;
        break;
      }
      if (it >= 3 && Math.abs(dX) <= 8 * Number.EPSILON * (1 + Math.abs(X)) && Math.abs(dP) <= 8 * Number.EPSILON * (1 + Math.abs(P))) {
        converged = true;
        break;
      }
    }
    if (!converged || !Number.isFinite(X) || !Number.isFinite(P)) {
      throw new NewtonFailure(`implicit midpoint did not converge at t = ${t}, h = ${h} (x = ${x0}, p = ${p0}): reduce the step`);
    }
    to.x[i] = 2 * X - x0;
    to.p[i] = 2 * P - p0;
  }
}

/** One fourth-order step (Yoshida triple jump of implicit midpoint): `from` at t → `to` at t + h. */
export function yoshida4Step(ham: PhaseHamiltonian, from: PhaseState, t: number, h: number, to: PhaseState, ws: SymplecticWorkspace): void {
  const h1 = YOSHIDA_GAMMA1 * h;
  const h2 = YOSHIDA_GAMMA2 * h;
  midpointStep(ham, from, t, h1, ws.stage, ws);
  midpointStep(ham, ws.stage, t + h1, h2, ws.mid, ws);
  midpointStep(ham, ws.mid, t + h1 + h2, h1, to, ws);
}

export interface TrajectoryOptions {
  /** called after every step with the current time and state (also once at the start) */
  observe?: (t: number, state: PhaseState, step: number) => void;
}

/** Integrate a batch from t0 to t1 in `steps` equal fourth-order steps; returns the final state. */
export function integrateTrajectories(ham: PhaseHamiltonian, start: PhaseState, t0: number, t1: number, steps: number, opts: TrajectoryOptions = {}): PhaseState {
  const n = start.x.length;
  const ws = symplecticWorkspace(n);
  let a: PhaseState = { x: Float64Array.from(start.x), p: Float64Array.from(start.p) };
  let b = phaseState(n);
  const h = (t1 - t0) / steps;
  opts.observe?.(t0, a, 0);
  for (let k = 0; k < steps; k++) {
    const t = t0 + k * h;
    yoshida4Step(ham, a, t, h, b, ws);
    [a, b] = [b, a];
    opts.observe?.(k === steps - 1 ? t1 : t0 + (k + 1) * h, a, k + 1);
  }
  return a;
}
