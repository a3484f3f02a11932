/**
 * Bound states of H = k² + u (natural units) as the design reports them, and their eigenvalues along a sequence
 * of potentials: a KdV sequence is isospectral (physics.md §2, §4; Lax, Comm. Pure Appl. Math. 21, 467, 1968),
 * so every tracked level E_n(λ) stays flat and the largest |E_n(λ) − E_n(0)| measures how far a computed
 * sequence is from that.
 */
import type { Grid } from '../spectral/grid.ts';
import { boundEnergies, boxThreshold } from './bound.ts';

/** at most this many frames get their spectrum computed (each is a dense diagonalisation) */
export const SPECTRUM_FRAMES_MAX = 11;

export interface BoundStates {
  energies: number[];
  threshold: number;
  method: string;
}

/**
 * Bound states E < −(2π/L)² of H = k² + u: a state whose decay length exceeds L/2π cannot be told from the
 * box's continuum, so the threshold is set by the box (common practice). Eigenvalues only
 * (quantum/bound.ts: dense, on the coarsest grid that resolves u).
 */
export function boundStates(grid: Grid, u: Float64Array): BoundStates {
  const threshold = boxThreshold(grid.length);
  const res = boundEnergies(grid, u, threshold);
  return { energies: res.energies, threshold, method: res.convergence };
}

/** eigenvalues of the bound states along the sequence: flat lines prove isospectrality */
export interface SpectrumTrack {
  lambda: number[];
  /** energies[frame][level], natural units (E₀) */
  energies: number[][];
  /** largest |E_n(λ) − E_n(0)| over the tracked levels and frames, E₀ */
  maxDrift: number;
}

/**
 * The lowest `levels` bound-state energies at up to SPECTRUM_FRAMES_MAX frames spread evenly over the sequence
 * (first and last included), and their largest drift from the first frame; a level that appears or vanishes
 * makes the drift Infinity (the sequence is then not isospectral).
 */
export function spectrumTrack(grid: Grid, lambdas: readonly number[], frames: readonly Float64Array[], levels: number): SpectrumTrack {
  const count = Math.min(frames.length, SPECTRUM_FRAMES_MAX);
  const picks = Array.from({ length: count }, (_, i) => Math.round((i * (frames.length - 1)) / Math.max(count - 1, 1)));
  const lambda: number[] = [];
  const energies: number[][] = [];
  for (const p of picks) {
    const b = boundStates(grid, frames[p]);
    lambda.push(lambdas[p]);
    energies.push(b.energies.slice(0, levels));
  }
  let maxDrift = 0;
  for (const row of energies) {
    for (let n = 0; n < Math.min(row.length, energies[0].length); n++) maxDrift = Math.max(maxDrift, Math.abs(row[n] - energies[0][n]));
    if (row.length !== energies[0].length) maxDrift = Infinity;
  }
  return { lambda, energies, maxDrift };
}
