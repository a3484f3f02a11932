/**
 * Isospectrality, the fit-free evidence of admissibility (physics.md §5: the eigenvalues of H(λ) along an
 * admissible sequence do not move): bound-state energies of k² + u per frame (quantum/bound.ts, natural units of
 * physics.md §3) against the median along the sequence. The continuum of the periodic box starts at the potential's
 * value at the box edge (0 for a well, the rim of a trap), so levels count as bound below that value plus the box
 * threshold −(2π/L)² (quantum/bound.ts).
 */
import type { Grid } from '../spectral/grid.ts';
import { boundEnergies, boxThreshold } from '../quantum/bound.ts';

/** bound levels compared along a sequence: the lowest ones carry the verdict; a deep trap (a harmonic well in its
 *  box) binds hundreds, whose count would only make the comparison slow (common practice) */
export const COMPARED_LEVELS = 16;

export interface SpectrumCheck {
  /** frames whose spectrum was computed */
  indices: number[];
  /** energies[i] for frame indices[i], ascending, E₀ */
  energies: number[][];
  /** bound-state threshold of the first checked frame, min(u at the box edges) − (2π/L)² (E₀): a state decaying
   * more slowly cannot be told from the box continuum */
  threshold: number;
  /** levels compared: the most that every checked frame has */
  levels: number;
  /** median over checked frames of each compared level, E₀ */
  reference: number[];
  /** per checked frame: max over compared levels of |E_n − reference_n|, E₀ */
  deviation: number[];
  /** per checked frame: number of bound states differs from the most common count */
  countChanged: boolean[];
  /** max over compared levels of (max − min along the sequence), E₀ */
  spread: number;
}

function median(v: number[]): number {
  const s = [...v].sort((a, b) => a - b);
  const h = s.length >> 1;
  return s.length % 2 ? s[h] : 0.5 * (s[h - 1] + s[h]);
}

/** bound-state threshold of a frame: min(u at the box edges) − (2π/L)² (module doc) */
export function frameThreshold(grid: Grid, u: Float64Array): number {
  return Math.min(u[0], u[u.length - 1]) + boxThreshold(grid.length);
}

/** bound-state energies of k² + u below the frame's threshold, ascending (E₀) */
export function frameEnergies(grid: Grid, u: Float64Array): number[] {
  return boundEnergies(grid, u, frameThreshold(grid, u), COMPARED_LEVELS).energies;
}

/** the isospectrality summary of energies computed elsewhere (frameEnergies at frames `indices`; threshold of the first) */
export function spectrumOf(indices: readonly number[], energies: number[][], threshold: number): SpectrumCheck {
  const counts = energies.map((e) => e.length);
  const tally = new Map<number, number>();
  for (const c of counts) tally.set(c, (tally.get(c) ?? 0) + 1);
  let common = counts[0];
  for (const [c, t] of tally) if (t > (tally.get(common) ?? 0)) common = c;
  const levels = Math.min(...counts);
  const reference = Array.from({ length: levels }, (_, lvl) => median(energies.map((e) => e[lvl])));
  const deviation = energies.map((e) => {
    let d = 0;
    for (let lvl = 0; lvl < levels; lvl++) d = Math.max(d, Math.abs(e[lvl] - reference[lvl]));
    return d;
  });
  let spread = 0;
  for (let lvl = 0; lvl < levels; lvl++) {
    const col = energies.map((e) => e[lvl]);
    spread = Math.max(spread, Math.max(...col) - Math.min(...col));
  }
  return { indices: [...indices], energies, threshold, levels, reference, deviation, countChanged: counts.map((c) => c !== common), spread };
}
