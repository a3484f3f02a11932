/**
 * Bound-state energies (no vectors) of the real symmetric grid Hamiltonian H = k² + u(ξ), for the design
 * diagnostics and the isospectrality tracks. Dense route: Householder reduction to tridiagonal form (Golub &
 * Van Loan, Matrix Computations, 4th ed. 2013, Alg. 8.3.1; linalg/householder.ts) and implicit QL without vectors
 * (linalg/tridiag.ts), on the coarsest power-of-two grid of the same box that still resolves u. O(N³) flops but no
 * vectors: about 0.2 s at N = 512.
 */
import { makeGrid, type Grid } from '../spectral/grid.ts';
import { resample, spectrum } from '../spectral/ops.ts';
import { denseHamiltonian } from './eigen.ts';
import { householderTridiagonal } from '../linalg/householder.ts';
import { tridiagEigen } from '../linalg/tridiag.ts';

/**
 * Bound-state threshold of a periodic box of length L: E < −(2π/L)² (natural units E₀). A state decaying more
 * slowly than L/2π cannot be told from the box's continuum (common practice).
 */
export function boxThreshold(length: number): number {
  return -(((2 * Math.PI) / length) ** 2);
}

/** coarsest and finest grids tried */
const GRID_MIN = 128;
const GRID_MAX = 512;
/** u counts as resolved on a coarse grid when the spectral amplitude it drops is below this (common practice) */
const RESOLUTION = 1e-12;

export interface BoundSpectrum {
  energies: number[];
  points: number;
}

/** all eigenvalues below `threshold`, ascending */
export function boundEnergies(grid: Grid, u: Float64Array, threshold: number): BoundSpectrum {
  const s = spectrum(u);
  let peak = 0;
  for (let m = 1; m <= grid.n / 2; m++) peak = Math.max(peak, Math.hypot(s[2 * m], s[2 * m + 1]));
  const droppedBeyond = (mc: number) => {
    let worst = 0;
    for (let m = mc; m <= grid.n / 2; m++) worst = Math.max(worst, Math.hypot(s[2 * m], s[2 * m + 1]));
    return peak > 0 ? worst / peak : 0;
  };
  let n = Math.min(grid.n, GRID_MIN);
  while (n < Math.min(grid.n, GRID_MAX) && droppedBeyond(n / 2) > RESOLUTION) n *= 2;
  const g = n === grid.n ? grid : makeGrid(grid.length, n);
  const uc = n === grid.n ? u : resample(u, n);
  const h = denseHamiltonian(g, uc);
  const a = new Float64Array(n * n);
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) a[i * n + j] = h.get(i, j);
  const { d, e } = householderTridiagonal(a, n);
  tridiagEigen(d, e, n, null);
  const energies = Array.from(d).filter((x) => x < threshold).sort((x, y) => x - y);
  return { energies, points: n };
}
