/**
 * Conserved quantities of u_t + αuu_x + βu_xxx + cu_x = 0 on a periodic box (Miura, Gardner & Kruskal,
 * J. Math. Phys. 9, 1204, 1968): I₁ = ∫u, I₂ = ∫u², I₃ = ∫(u³ − (3β/α) u_x²). For the natural-units KdV
 * (α = −6, β = 1) I₃ = ∫(u³ + ½u_ξ²) as in physics.md §4; for β = 0 (Hopf) it is ∫u³.
 */
import type { Grid } from '../spectral/grid.ts';
import { derivative, integrate } from '../spectral/ops.ts';
import type { FlowEquation } from './kdv.ts';

export interface Invariants {
  mass: number;
  momentum: number;
  energy: number;
}

export function invariants(grid: Grid, eq: FlowEquation, u: Float64Array): Invariants {
  const ux = derivative(grid, u, 1);
  const sq = new Float64Array(u.length);
  const cu = new Float64Array(u.length);
  const w = (3 * eq.beta) / eq.alpha;
  for (let j = 0; j < u.length; j++) {
    sq[j] = u[j] * u[j];
    cu[j] = u[j] * u[j] * u[j] - w * ux[j] * ux[j];
  }
  return { mass: integrate(grid, u), momentum: integrate(grid, sq), energy: integrate(grid, cu) };
}

/** relative drifts |I(λ) − I(0)| / max(|I(0)|, tiny) of each invariant, and their maximum */
export function invariantDrift(first: Invariants, last: Invariants): { mass: number; momentum: number; energy: number; max: number } {
  const rel = (a: number, b: number) => Math.abs(b - a) / Math.max(Math.abs(a), 1e-300);
  const mass = rel(first.mass, last.mass);
  const momentum = rel(first.momentum, last.momentum);
  const energy = rel(first.energy, last.energy);
  return { mass, momentum, energy, max: Math.max(mass, momentum, energy) };
}
