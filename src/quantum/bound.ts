/**
 * Bound-state energies (no vectors) of the real symmetric grid Hamiltonian H = k² + u(ξ), for the design
 * diagnostics and the isospectrality tracks. Dense route: Householder reduction to tridiagonal form (Golub &
 * Van Loan, Matrix Computations, 4th ed. 2013, Alg. 8.3.1) and implicit QL without vectors (tridiag.ts), on
 * the coarsest power-of-two grid of the same box that still resolves u. O(N³) flops but no vectors: about
 * 0.2 s at N = 512.
 */
import { makeGrid, type Grid } from '../spectral/grid.ts';
import { resample, spectrum } from '../spectral/ops.ts';
import { denseHamiltonian } from './eigen.ts';
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

/** In place Householder tridiagonalisation of the symmetric n×n row-major matrix a: returns diagonal, off-diagonal */
export function householderTridiagonal(a: Float64Array, n: number): { d: Float64Array; e: Float64Array } {
  const d = new Float64Array(n);
  const e = new Float64Array(n);
  const v = new Float64Array(n);
  const p = new Float64Array(n);
  for (let k = 0; k < n - 2; k++) {
    // Householder vector for column k below the diagonal
    let alpha = 0;
    for (let i = k + 1; i < n; i++) alpha += a[i * n + k] * a[i * n + k];
    alpha = Math.sqrt(alpha);
    if (alpha === 0) {
      e[k] = 0;
      continue;
    }
    const x0 = a[(k + 1) * n + k];
    const sgn = x0 >= 0 ? 1 : -1;
    e[k] = -sgn * alpha;
    v.fill(0);
    v[k + 1] = x0 + sgn * alpha;
    for (let i = k + 2; i < n; i++) v[i] = a[i * n + k];
    let vv = 0;
    for (let i = k + 1; i < n; i++) vv += v[i] * v[i];
    const beta = 2 / vv;
    // p = β A v on the trailing block, then w = p − (β/2)(pᵀv) v, A ← A − v wᵀ − w vᵀ
    let pv = 0;
    for (let i = k + 1; i < n; i++) {
      let s = 0;
      const row = i * n;
      for (let j = k + 1; j < n; j++) s += a[row + j] * v[j];
      p[i] = beta * s;
      pv += p[i] * v[i];
    }
    const c = 0.5 * beta * pv;
    for (let i = k + 1; i < n; i++) p[i] -= c * v[i];
    for (let i = k + 1; i < n; i++) {
      const row = i * n;
      const vi = v[i], pi = p[i];
      for (let j = k + 1; j < n; j++) a[row + j] -= vi * p[j] + pi * v[j];
    }
  }
  for (let i = 0; i < n; i++) d[i] = a[i * n + i];
  if (n >= 2) e[n - 2] = a[(n - 1) * n + (n - 2)];
  e[n - 1] = 0;
  return { d, e };
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
