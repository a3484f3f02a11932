/**
 * First breaking of the dispersionless (Hopf) flow u_τ = 6uu_ξ (physics.md §4; Whitham, Linear and Nonlinear
 * Waves, 1974, §2.1): characteristics ξ + 6uτ = const first cross at
 *
 *     τ_b = 1 / max(6 ∂_ξu₀)   over ∂_ξu₀ > 0                    (Infinity when u₀ never rises)
 */
import type { Grid } from '../spectral/grid.ts';
import { derivative } from '../spectral/ops.ts';

/** τ_b = 1/(6 s) for the largest slope s = max ∂_ξu₀ of the initial profile; Infinity when s ≤ 0 */
export function breakingTime(maxSlope: number): number {
  return maxSlope > 0 ? 1 / (6 * maxSlope) : Infinity;
}

/** τ_b from the spectral derivative of grid samples u₀ (the largest slope at the grid points, not refined) */
export function gridBreaking(grid: Grid, u0: Float64Array): number {
  const ux = derivative(grid, u0, 1);
  let m = 0;
  for (const v of ux) m = Math.max(m, v);
  return breakingTime(m);
}
