/**
 * Bound-state energies (no vectors) of H = −∂²_ξ + u(ξ) on the periodic box of the caller's grid, for the design
 * diagnostics and the isospectrality tracks, converged to a stated tolerance in the discretisation.
 *
 * Method: the three-point finite-difference Hamiltonian (a cyclic tridiagonal matrix, diagonal 2/h² + u_j,
 * couplings −1/h²) on grids h₀, h₀/2, h₀/4, …, its lowest levels by Sturm counts until a bracket holds one level,
 * then safeguarded Newton on the determinant (linalg/cyclic-sturm.ts, O(n) per count), and Richardson extrapolation of each level in h² (the error of the symmetric second difference
 * on a smooth periodic eigenfunction is an even power series in h; Richardson, Phil. Trans. R. Soc. A 226, 299,
 * 1927; Neville's tableau, Press et al., Numerical Recipes, 3rd ed. 2007, §3.2). u on the finer grids is the
 * caller's samples Fourier-interpolated (exact for band-limited u). Levels are added until the last two diagonal
 * entries of the tableau agree to max(REL_TOL · max|u|, ROUND_OFF · 2/h²); the finer one is returned. The first
 * grid resolves u and has h₀·√(max|u|) ≤ START_HK. Cost: a few O(n) sweeps per level and grid (a few tens on the
 * first, where only the counts bracket the levels); no dense matrix.
 * The limit is the spectrum of −∂² + u on the periodic box, u the trigonometric interpolant of the caller's
 * samples (an entire function, so the expansion in h² holds even for rough samples); the caller's own spectral
 * grid approximates that limit to its resolution.
 */
import { NumericalError } from '../core/errors.ts';
import type { Grid } from '../spectral/grid.ts';
import { resample, spectrum } from '../spectral/ops.ts';
import { cyclicCountBelow, cyclicEigenvalues } from '../linalg/cyclic-sturm.ts';

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

/** the finite-difference Hamiltonian of the n-point resampling (cyclic tridiagonal d, e), a bracket of its spectrum
 *  and its scale 2/h² */
function finiteDifferenceMatrix(length: number, u: Float64Array, n: number): { d: Float64Array; e: Float64Array; lo: number; hi: number; scale: number } {
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
  return { d, e, lo: lo - 1, hi, scale: 2 / (h * h) };
}

/** lowest `count` levels of the finite-difference Hamiltonian on n points (brackets narrowed by `near`) */
function finiteDifferenceLevels(length: number, u: Float64Array, n: number, count: number, near?: { centre: ArrayLike<number>; halfWidth: ArrayLike<number> }): { levels: Float64Array; scale: number } {
  const m = finiteDifferenceMatrix(length, u, n);
  return { levels: cyclicEigenvalues(m.d, m.e, count, m.lo, m.hi, near), scale: m.scale };
}

/**
 * Where the levels of the second grid lie: the second difference underestimates k² by k⁴h²/12, so a level moves by
 * at most about h²(|E| + max|u|)²/12 when h halves; the half width allows twice that.
 */
function firstStepBrackets(raw: Float64Array, h: number, depth: number): { centre: Float64Array; halfWidth: Float64Array } {
  return { centre: raw, halfWidth: raw.map((r) => (h * h * (Math.abs(r) + depth) ** 2) / 6) };
}

/**
 * Where the levels of the next grid (h/2) lie: the error of a level falls by 4 when h halves, so the raw level moves
 * from E(h) to about best + (E(h) − best)/4, best the extrapolated level; the half width allows twice that move.
 */
function nextGridBrackets(raw: Float64Array, best: Float64Array): { centre: Float64Array; halfWidth: Float64Array } {
  const centre = raw.map((r, i) => best[i] + (r - best[i]) / 4);
  const halfWidth = raw.map((r, i) => 2 * Math.abs(r - best[i]));
  return { centre, halfWidth };
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
  // how many levels to follow: those below the threshold on the first grid (one Sturm count), and one more
  const m0 = finiteDifferenceMatrix(grid.length, u, n);
  const bound = cyclicCountBelow(m0.d, m0.e, threshold, Math.max(Math.abs(m0.lo), Math.abs(m0.hi)));
  const count = Math.min(bound + 1, n, maxLevels);
  const tableau: Float64Array[] = [cyclicEigenvalues(m0.d, m0.e, count, m0.lo, m0.hi)];
  let change = Infinity;
  let tolerance = 0;
  for (let level = 1; level < MAX_LEVELS; level++) {
    n *= 2;
    const near = level > 1 ? nextGridBrackets(tableau[0], tableau[level - 1]) : firstStepBrackets(tableau[0], grid.length / (n / 2), depth);
    const fd = finiteDifferenceLevels(grid.length, u, n, count, near);
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
