/**
 * Bound-state energies (no vectors) of H = −∂²_ξ + u(ξ) on the periodic box of the caller's grid, for the design
 * diagnostics and the isospectrality tracks, converged to a stated tolerance in the discretisation.
 *
 * Method: the three-point finite-difference Hamiltonian (a cyclic tridiagonal matrix, diagonal 2/h² + u_j,
 * couplings −1/h²) on grids h₀, h₀/2, h₀/4, …, its lowest levels by Sturm-count bisection (linalg/cyclic-sturm.ts,
 * O(n) per count), and Richardson extrapolation of each level in h² (the error of the symmetric second difference
 * on a smooth periodic eigenfunction is an even power series in h; Richardson, Phil. Trans. R. Soc. A 226, 299,
 * 1927; Neville's tableau, Press et al., Numerical Recipes, 3rd ed. 2007, §3.2). u on the finer grids is the
 * caller's samples Fourier-interpolated (exact for band-limited u). Levels are added until the last two diagonal
 * entries of the tableau agree to max(REL_TOL · max|u|, ROUND_OFF · 2/h²); the finer one is returned. The first
 * grid resolves u and has h₀·√(max|u|) ≤ START_HK. Cost O(levels · n · 60) per bound state: no dense matrix.
 * The limit is the spectrum of −∂² + u on the periodic box, u the trigonometric interpolant of the caller's
 * samples (an entire function, so the expansion in h² holds even for rough samples); the caller's own spectral
 * grid approximates that limit to its resolution.
 */
import { NumericalError } from '../core/errors.ts';
import type { Grid } from '../spectral/grid.ts';
import { resample, spectrum } from '../spectral/ops.ts';
import { cyclicEigenvalues } from '../linalg/cyclic-sturm.ts';

/**
 * Bound-state threshold of a periodic box of length L: E < −(2π/L)² (natural units E₀). A state decaying more
 * slowly than L/2π cannot be told from the box's continuum (common practice).
 */
export function boxThreshold(length: number): number {
  return -(((2 * Math.PI) / length) ** 2);
}

/** coarsest first grid */
const GRID_MIN = 256;
/** first grid: h₀ times the largest local wavenumber √(max|u|) at most this (second-difference error ~ (hk)²/12) */
const START_HK = 0.25;
/** levels asked for on the first grid before checking that one of them lies above the threshold */
const FIRST_LEVELS = 64;
/** Richardson levels at most (the finest grid is 2^(LEVELS−1) times the first) */
const MAX_LEVELS = 7;
/** u counts as resolved on a coarse grid when the spectral amplitude it drops is below this (common practice) */
const RESOLUTION = 1e-12;
/** convergence: change of the extrapolated levels between two tableau rows, relative to max|u| (well below the
 *  1e-6 the design reports need) */
export const BOUND_REL_TOL = 1e-9;
/** floor of the convergence test: bisection and pivot round-off, a few ε times the matrix scale 2/h² */
const ROUND_OFF = 1e-14;

export interface BoundSpectrum {
  energies: number[];
  /** points of the finest finite-difference grid used */
  points: number;
  /** largest change of the extrapolated levels between the last two tableau rows (the error estimate) */
  change: number;
  /** tolerance the change met */
  tolerance: number;
  /** how the answer converged, one line */
  convergence: string;
}

/** coarsest power of two ≥ GRID_MIN whose resampling of u drops at most RESOLUTION of its spectrum */
function coarsestResolving(grid: Grid, u: Float64Array): number {
  const s = spectrum(u);
  let peak = 0;
  for (let m = 1; m <= grid.n / 2; m++) peak = Math.max(peak, Math.hypot(s[2 * m], s[2 * m + 1]));
  const droppedBeyond = (mc: number) => {
    let worst = 0;
    for (let m = mc; m <= grid.n / 2; m++) worst = Math.max(worst, Math.hypot(s[2 * m], s[2 * m + 1]));
    return peak > 0 ? worst / peak : 0;
  };
  let n = Math.min(grid.n, GRID_MIN);
  while (n < grid.n && droppedBeyond(n / 2) > RESOLUTION) n *= 2;
  return Math.max(n, GRID_MIN);
}

/** lowest `count` levels of the finite-difference Hamiltonian of the n-point resampling, and its scale 2/h² */
function finiteDifferenceLevels(length: number, u: Float64Array, n: number, count: number): { levels: Float64Array; scale: number } {
  const h = length / n;
  const un = n === u.length ? u : resample(u, n);
  const d = new Float64Array(n);
  const e = new Float64Array(n).fill(-1 / (h * h));
  let lo = Infinity;
  let hi = -Infinity;
  for (let j = 0; j < n; j++) {
    d[j] = 2 / (h * h) + un[j];
    lo = Math.min(lo, un[j]);
    hi = Math.max(hi, d[j] + 2 / (h * h));
  }
  return { levels: cyclicEigenvalues(d, e, count, lo - 1, hi), scale: 2 / (h * h) };
}

/**
 * All eigenvalues below `threshold` (at most the lowest `maxLevels`), ascending, extrapolated to h → 0 (module doc).
 * Throws NumericalError when MAX_LEVELS grids do not meet the tolerance.
 */
export function boundEnergies(grid: Grid, u: Float64Array, threshold: number, maxLevels = Infinity): BoundSpectrum {
  if (u.length !== grid.n) throw new RangeError(`bound states: potential length ${u.length} must equal grid points ${grid.n}`);
  let depth = 0;
  for (let j = 0; j < u.length; j++) depth = Math.max(depth, Math.abs(u[j]));
  let n = coarsestResolving(grid, u);
  while (grid.length / n > START_HK / Math.sqrt(Math.max(depth, 1e-300))) n *= 2;
  // how many levels to follow: those below the threshold on the first grid, and one more
  let asked = Math.min(n, FIRST_LEVELS, maxLevels + 1);
  let first = finiteDifferenceLevels(grid.length, u, n, asked);
  while (asked < Math.min(n, maxLevels + 1) && first.levels[asked - 1] < threshold) {
    // every level asked for is bound: ask for more until one lies above the threshold
    asked = Math.min(n, maxLevels + 1, 2 * asked);
    first = finiteDifferenceLevels(grid.length, u, n, asked);
  }
  let count = 0;
  while (count < first.levels.length && first.levels[count] < threshold) count++;
  count = Math.min(count + 1, first.levels.length, maxLevels);
  const tableau: Float64Array[] = [first.levels.slice(0, count)];
  let change = Infinity;
  let tolerance = 0;
  for (let level = 1; level < MAX_LEVELS; level++) {
    n *= 2;
    const fd = finiteDifferenceLevels(grid.length, u, n, count);
    const row = [fd.levels];
    for (let k = 1; k <= level; k++) {
      const f = 4 ** k;
      row.push(row[k - 1].map((v, i) => v + (v - tableau[k - 1][i]) / (f - 1)));
    }
    const previous = tableau[level - 1];
    const best = row[level];
    tolerance = Math.max(BOUND_REL_TOL * depth, ROUND_OFF * fd.scale);
    change = 0;
    for (let i = 0; i < count; i++) change = Math.max(change, Math.abs(best[i] - previous[i]));
    if (!Number.isFinite(change)) break;
    tableau.splice(0, tableau.length, ...row);
    if (level >= 2 && change <= tolerance) {
      const energies = Array.from(best).filter((x) => x < threshold);
      const convergence = `finite differences on ${n / 2 ** level}…${n} points, Richardson to order h^${2 * level + 2}; levels changed by ${change.toExponential(2)} in the last step (tolerance ${tolerance.toExponential(2)})`;
      return { energies, points: n, change, tolerance, convergence };
    }
  }
  throw new NumericalError(`bound states: levels still change by ${change.toExponential(2)} (tolerance ${tolerance.toExponential(2)}) after ${MAX_LEVELS} grids up to ${n} points`);
}
