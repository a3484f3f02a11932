/**
 * Convergence of the lattice verification with the resolution (physics.md §6), at a fixed effective mass: the
 * infidelity of the CD drive against sites per soliton width n = w/d (J = 1/h² scales as 1/d²), its observed
 * order p from the two finest lattices, 1 − F ∝ n^−p, and the coarsest lattice that meets a target.
 *
 * The resolution is set by the narrowest soliton: w = 1/κ_max with κ_max² = −E₀ of the deepest bound state of
 * H(0) (a soliton −2κ² sech²(κξ) has width 1/κ; physics.md §4), capped by the curvature width of the deepest
 * initial well.
 */
import type { Grid } from '../spectral/grid.ts';
import type { Ramp } from '../protocol/ramp.ts';
import { MAX_SITE_PRODUCTS, siteCountProblem } from './cost.ts';
import { chainSites, LatticeSequence, type DenseSequence } from './sequence.ts';
import { verifyOnLattice, type LatticeRun } from './verify.ts';

/** below this observed order of the infidelity in the spacing the study is not converging and nothing is
 * extrapolated from it (the expected order is 4: O(d²) amplitude errors, squared) */
export const MIN_TRUSTED_ORDER = 1;

/** the narrowest soliton width 1/κ_max (see the module doc), capped by `wellWidth`; NaN when neither is finite */
export function solitonWidth(boundEnergies: readonly number[], wellWidth: number): number {
  const kMax = boundEnergies.length > 0 ? Math.sqrt(-Math.min(...boundEnergies)) : NaN;
  const w = Number.isFinite(kMax) && kMax > 0 ? 1 / kMax : Infinity;
  const wc = Number.isFinite(wellWidth) ? wellWidth : Infinity;
  const out = Math.min(w, wc);
  return Number.isFinite(out) ? out : NaN;
}

export interface StudyOptions {
  grid: Grid;
  dense: DenseSequence;
  ramp: Ramp;
  /** soliton width w (ℓ) */
  width: number;
  /** sites per width to study, ascending */
  sitesPerWidth: readonly number[];
  states: number;
  tol: number;
  /** predicted site·products of a lattice of `sites` sites at spacing h (cost.ts) */
  work: (sites: number, h: number) => number;
  onProgress?: (fraction: number, sitesPerWidth: number) => void;
}

export interface StudyPoint {
  sitesPerWidth: number;
  h: number;
  sites: number;
  run: LatticeRun;
}

/** Verify on each studied lattice; lattices that are too small, too large or too costly are skipped with a reason. */
export function latticeStudy(opts: StudyOptions): { points: StudyPoint[]; skipped: string[] } {
  const points: StudyPoint[] = [];
  const skipped: string[] = [];
  const spw = opts.sitesPerWidth;
  spw.forEach((n, idx) => {
    const hn = opts.width / n;
    const sites = chainSites(opts.grid.length, hn);
    const problem = siteCountProblem(hn, sites.length, opts.grid.length);
    if (problem !== null) {
      skipped.push(`study: ${n} sites per width skipped: ${problem}`);
      return;
    }
    const work = opts.work(sites.length, hn);
    if (work > MAX_SITE_PRODUCTS) {
      skipped.push(`study: ${n} sites per width skipped: about ${work.toExponential(1)} site·products predicted (limit ${MAX_SITE_PRODUCTS.toExponential(1)})`);
      return;
    }
    const seq = LatticeSequence.fromDense(opts.grid, opts.dense, sites);
    const run = verifyOnLattice(seq, hn, opts.ramp, opts.states, opts.tol, opts.width, (f) => opts.onProgress?.((idx + f) / spw.length, n));
    points.push({ sitesPerWidth: n, h: hn, sites: sites.length, run });
  });
  return { points, skipped };
}

/** observed order p of 1 − F ∝ n^−p from the two finest studied lattices (null: fewer than two, or a zero) */
export function observedOrder(points: readonly { sitesPerWidth: number; maxInfidelity: number }[]): number | null {
  if (points.length < 2) return null;
  const a = points[points.length - 2], b = points[points.length - 1];
  if (!(a.maxInfidelity > 0 && b.maxInfidelity > 0)) return null;
  return Math.log(a.maxInfidelity / b.maxInfidelity) / Math.log(b.sitesPerWidth / a.sitesPerWidth);
}

export type Recommendation =
  | { kind: 'met'; index: number }
  | { kind: 'extrapolated'; sitesPerWidth: number; order: number }
  | { kind: 'not-converging'; order: number }
  | { kind: 'none' };

/**
 * The coarsest studied lattice below the target; else, with a trusted order p, the sites per width extrapolated
 * from the finest one, n = n_f (ε_f/target)^{1/p}; else why not.
 */
export function recommendLattice(points: readonly { sitesPerWidth: number; maxInfidelity: number }[], target: number): Recommendation {
  const index = points.findIndex((r) => r.maxInfidelity < target);
  if (index >= 0) return { kind: 'met', index };
  const order = observedOrder(points);
  if (points.length >= 2 && order !== null && order < MIN_TRUSTED_ORDER) return { kind: 'not-converging', order };
  if (points.length >= 2 && order !== null && order > 0) {
    const f = points[points.length - 1];
    return { kind: 'extrapolated', sitesPerWidth: f.sitesPerWidth * Math.pow(f.maxInfidelity / target, 1 / order), order };
  }
  return { kind: 'none' };
}
