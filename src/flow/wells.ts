/**
 * Wells (local minima) of a potential on a periodic grid, refined to sub-grid accuracy by Newton's method on
 * the Fourier interpolant (u_x = 0), with depth and the soliton parameter κ = sqrt(depth/2) that a KdV soliton
 * of that depth would have (physics.md §4: depth 2κ²).
 *
 * A minimum counts as a well, not a radiation ripple, when it is deeper than WELL_FLOOR of the deepest one and its
 * strength s = d·w², with the curvature width w² = 2d/u″ (flow/traps.ts), i.e. s = 2d²/u″ = 1/δ² of the minimum
 * (physics.md §3), is at least WELL_STRENGTH_MIN. A soliton −2κ² sech²(κξ) has s = 2 wherever it sits; linear
 * radiation −a cos(kξ) has s = 2a/k², small because radiation is linear only for a ≪ k² (Whitham, Linear and
 * Nonlinear Waves, 1974, §13.11: the Ursell number a/k² of a wave decides between the two).
 */
import type { Grid } from '../spectral/grid.ts';
import { spectrum } from '../spectral/ops.ts';
import { WELL_FLOOR } from './budgets.ts';

/** smallest strength s = 2d²/u″ of a well: a quarter of a soliton's s = 2 (partly formed solitons have s ≈ 1 … 2,
 *  ripples of the radiation s ≲ 0.2 in a Gaussian's split; common practice) */
export const WELL_STRENGTH_MIN = 0.5;
/** Newton iterations on the interpolant (quadratic convergence from a grid point: a handful suffice) */
export const NEWTON_ITERATIONS = 8;

export interface Well {
  position: number;
  depth: number;
  kappa: number;
}

/** evaluate the Fourier interpolant and its first two derivatives at x */
function interpolant(grid: Grid, s: Float64Array, x: number): [number, number, number] {
  const n = grid.n;
  let f = 0, f1 = 0, f2 = 0;
  const x0 = grid.x[0];
  for (let m = 0; m <= n / 2; m++) {
    const k = grid.kHalf[m];
    const w = m === 0 || m === n / 2 ? 1 : 2;
    const ph = k * (x - x0);
    const c = Math.cos(ph), si = Math.sin(ph);
    const re = s[2 * m], im = s[2 * m + 1];
    const val = re * c - im * si; // Re(X e^{ikx})
    const dval = -(re * si + im * c); // d/d(ph)
    f += w * val;
    if (m !== n / 2) {
      f1 += w * k * dval;
      f2 -= w * k * k * val;
    }
  }
  return [f / n, f1 / n, f2 / n];
}

export function findWells(grid: Grid, u: Float64Array): Well[] {
  const n = grid.n;
  let deepest = 0;
  for (let j = 0; j < n; j++) deepest = Math.min(deepest, u[j]);
  if (deepest >= 0) return [];
  const s = spectrum(u);
  const wells: Well[] = [];
  for (let j = 0; j < n; j++) {
    const a = u[(j - 1 + n) % n], b = u[j], c = u[(j + 1) % n];
    if (!(b < a && b <= c)) continue;
    if (b > WELL_FLOOR * deepest) continue;
    let x = grid.x[j];
    for (let it = 0; it < NEWTON_ITERATIONS; it++) {
      const [, d1, d2] = interpolant(grid, s, x);
      if (d2 <= 0) break;
      const step = d1 / d2;
      if (Math.abs(step) > grid.dx) break;
      x -= step;
    }
    const [val, , curvature] = interpolant(grid, s, x);
    const depth = -val;
    if (!(2 * depth * depth >= WELL_STRENGTH_MIN * curvature)) continue;
    wells.push({ position: x, depth, kappa: Math.sqrt(Math.max(depth, 0) / 2) });
  }
  return wells.sort((p, q) => q.depth - p.depth);
}
