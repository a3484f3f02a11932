/**
 * Initial trap shapes u(ξ, 0) in natural units (ℓ, E₀; physics.md §3) and the depth and curvature width of the
 * deepest well, the scales of the dispersion number δ² (physics.md §3).
 *
 *   sech² well      u = −d sech²((ξ − c)/w)                  (half-width w; the soliton shape, physics.md §4)
 *   Gaussian well   u = −d exp(−(ξ − c)²/(2w²))              (standard deviation w)
 *   curvature width w = sqrt(2d/u″(ξ_min))                   (exact for −d sech²(ξ/w): u″(0) = 2d/w²)
 */
import type { Grid } from '../spectral/grid.ts';
import { derivative } from '../spectral/ops.ts';

export type TrapWellShape = 'sech2' | 'gaussian';

/** one well of a sum of wells: depth d (E₀; negative for a barrier), width w and centre c (ℓ) */
export interface TrapWell {
  shape: TrapWellShape;
  depth: number;
  width: number;
  center: number;
}

const sech2 = (z: number) => {
  const c = Math.cosh(z);
  return 1 / (c * c);
};

/** u = −d sech²((ξ − c)/w) on the points x */
export function sech2Trap(depth: number, width: number, center: number, x: Float64Array): Float64Array {
  return x.map((xi) => -depth * sech2((xi - center) / width));
}

/** u = −Σ d_i f((ξ − c_i)/w_i) with f = sech² or the Gaussian exp(−z²/2), on the points x */
export function wellsTrap(wells: readonly TrapWell[], x: Float64Array): Float64Array {
  const u = new Float64Array(x.length);
  for (const well of wells) {
    const { depth: d, width: w, center: c } = well;
    for (let j = 0; j < x.length; j++) {
      const z = (x[j] - c) / w;
      u[j] -= d * (well.shape === 'sech2' ? sech2(z) : Math.exp(-0.5 * z * z));
    }
  }
  return u;
}

/** deepest well of u on the grid: depth −min u and the curvature width sqrt(2d/u″) there (NaN without curvature) */
export function wellScale(grid: Grid, u: Float64Array): { depth: number; width: number } {
  let j0 = 0;
  for (let j = 1; j < u.length; j++) if (u[j] < u[j0]) j0 = j;
  const depth = -u[j0];
  const d2 = derivative(grid, u, 2)[j0];
  const width = depth > 0 && d2 > 0 ? Math.sqrt((2 * depth) / d2) : NaN;
  return { depth, width };
}
