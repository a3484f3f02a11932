/**
 * The reflectionless potential nearest to a given trap (natural units, physics.md §3–§4).
 *
 * A potential u₀ with bound states −κ_n² splits under the KdV flow into N solitons of depths 2κ_n² plus radiation
 * (Gardner, Greene, Kruskal & Miura, Phys. Rev. Lett. 19, 1095, 1967). The reflectionless potentials with the same
 * κ_n are the Kay–Moses family u_R(ξ; x₁ … x_N) (Kay & Moses, J. Appl. Phys. 27, 1503, 1956; flow/solitons.ts),
 * whose norming constants are written through the centres x_n (c_n² = 2κ_n e^{2κ_n x_n}). They split into exactly
 * N wells and shed nothing. The nearest one is found by least squares on the grid,
 *     min over x ‖u_R(·; x) − u₀‖₂,
 * by Levenberg–Marquardt (Levenberg, Q. Appl. Math. 2, 164, 1944; Marquardt, J. SIAM 11, 431, 1963; Nocedal &
 * Wright, Numerical Optimization, 2nd ed. 2006, §10.3) with forward-difference Jacobians, from several starts.
 *
 * Radiation: ∫u² is conserved by the flow (Miura, Gardner & Kruskal, J. Math. Phys. 9, 1204, 1968) and, once the
 * solitons and the radiation have separated, is the sum of the parts. Each soliton carries ∫4κ⁴sech⁴(κξ) dξ =
 * (16/3)κ³, so the radiation the original sheds carries  R = ∫u₀² − (16/3)Σκ_n³  of that invariant (the trace
 * formula of Zakharov & Faddeev, Funct. Anal. Appl. 5, 280, 1971, with the reflection part isolated). It does not
 * depend on the fitted centres, and ∫u_R² = (16/3)Σκ_n³ exactly, so R = ∫u₀² − ∫u_R².
 */
import { Matrix, solve } from 'ml-matrix';
import { NumericalError } from '../core/errors.ts';
import type { Grid } from '../spectral/grid.ts';
import { integrate } from '../spectral/ops.ts';
import { nSolitonPotential, type SolitonSpec } from './solitons.ts';

/** Levenberg–Marquardt iterations per start (quadratic convergence near a zero-residual fit needs few) */
const MAX_ITERATIONS = 200;
/** stop when the relative decrease of the squared residual falls below this (round-off level of ‖u₀‖²) */
const RELATIVE_DECREASE = 1e-15;
/** stop when an accepted step moves every centre by less than this fraction of its width 1/κ */
const STEP_TOL = 1e-10;
/** forward-difference step in a centre, in units of the soliton width 1/κ (the Jacobian only steers the
 *  iteration; the residual it converges on is exact) */
const JACOBIAN_STEP = 1e-7;
/** the later starts are tried only when the first (the even well) leaves a relative distance above this: each
 *  costs many iterations and matters only for traps far from every even reflectionless well (common practice) */
const GOOD_FIT = 0.05;
/** initial damping relative to the Gauss–Newton diagonal (Marquardt's scaling) */
const DAMPING_START = 1e-3;

export interface ReflectionlessFit {
  /** the fitted solitons (κ as given, centres fitted) */
  solitons: SolitonSpec[];
  /** the fitted potential on the grid at τ = 0 */
  potential: Float64Array;
  /** ‖u_R − u₀‖₂ / ‖u₀‖₂ on the grid */
  distance: number;
  /** ∫u₀² − (16/3)Σκ³: the part of the invariant ∫u² the original sheds as radiation (module doc) */
  radiation: number;
  /** radiation / ∫u₀² */
  radiationFraction: number;
  iterations: number;
}

/**
 * Centres of the reflectionless potential with inverse widths κ_n that is even about ξ_c:
 *     x_n = ξ_c + (1/2κ_n) Σ_{m≠n} ln((κ_n + κ_m)/|κ_n − κ_m|),  i.e. c_n² = 2κ_n Π_{m≠n} (κ_n + κ_m)/|κ_n − κ_m|,
 * the residues of the reflectionless transmission coefficient T(k) = Π_n (k + iκ_n)/(k − iκ_n) with the parity
 * signs of an even potential (Drazin & Johnson, Solitons: an Introduction, 1989, §4.4). Each soliton's incoming and
 * outgoing asymptotes (pairwise phase shifts, flow/solitons.ts) lie symmetrically about ξ_c, so the map
 * (ξ, τ) → (2ξ_c − ξ, −τ), a symmetry of KdV, takes the solution to itself. For κ = 1 … N it is
 * −N(N+1) sech²(ξ − ξ_c) (Pöschl–Teller, Landau & Lifshitz, Quantum Mechanics, §23; checked in the tests).
 */
export function mergedCentres(kappas: readonly number[], centre = 0): SolitonSpec[] {
  return kappas.map((k, n) => {
    let s = 0;
    kappas.forEach((m, j) => {
      if (j !== n) s += Math.log((k + m) / Math.abs(k - m));
    });
    return { kappa: k, center: centre + s / (2 * k) };
  });
}

function residual(grid: Grid, u0: Float64Array, kappas: readonly number[], centres: readonly number[]): Float64Array {
  const u = nSolitonPotential(kappas.map((kappa, i) => ({ kappa, center: centres[i] })), grid.x, 0);
  for (let j = 0; j < u.length; j++) u[j] -= u0[j];
  return u;
}

function sumSquares(r: Float64Array): number {
  let s = 0;
  for (let j = 0; j < r.length; j++) s += r[j] * r[j];
  return s;
}

/** Levenberg–Marquardt on the centres from one start; returns the centres, the squared residual and the iterations */
function levenbergMarquardt(grid: Grid, u0: Float64Array, kappas: readonly number[], start: number[]): { centres: number[]; cost: number; iterations: number } {
  const n = kappas.length;
  let x = [...start];
  let r = residual(grid, u0, kappas, x);
  let cost = sumSquares(r);
  let mu = -1;
  let it = 0;
  for (; it < MAX_ITERATIONS; it++) {
    const jac: Float64Array[] = kappas.map((kappa, i) => {
      const h = JACOBIAN_STEP / kappa;
      const up = residual(grid, u0, kappas, x.map((v, k) => (k === i ? v + h : v)));
      return up.map((v, j) => (v - r[j]) / h);
    });
    const jtj = new Matrix(n, n);
    const jtr = new Matrix(n, 1);
    for (let a = 0; a < n; a++) {
      let g = 0;
      for (let j = 0; j < r.length; j++) g += jac[a][j] * r[j];
      jtr.set(a, 0, -g);
      for (let b = a; b < n; b++) {
        let s = 0;
        for (let j = 0; j < r.length; j++) s += jac[a][j] * jac[b][j];
        jtj.set(a, b, s);
        jtj.set(b, a, s);
      }
    }
    if (mu < 0) mu = DAMPING_START * Math.max(...Array.from({ length: n }, (_, a) => jtj.get(a, a)));
    let improved = false;
    for (let tries = 0; tries < 40 && !improved; tries++) {
      const a = jtj.clone();
      for (let k = 0; k < n; k++) a.set(k, k, a.get(k, k) + mu * Math.max(jtj.get(k, k), 1e-300));
      const step = solve(a, jtr).getColumn(0);
      const trial = x.map((v, k) => v + step[k]);
      const rt = residual(grid, u0, kappas, trial);
      const ct = sumSquares(rt);
      if (Number.isFinite(ct) && ct < cost) {
        const decrease = (cost - ct) / Math.max(cost, 1e-300);
        x = trial;
        r = rt;
        cost = ct;
        mu = Math.max(mu / 3, 1e-15);
        improved = true;
        const moved = Math.max(...step.map((v, k) => Math.abs(v) * kappas[k]));
        if (decrease < RELATIVE_DECREASE || moved < STEP_TOL) return { centres: x, cost, iterations: it + 1 };
      } else mu *= 4;
    }
    if (!improved) break;
  }
  return { centres: x, cost, iterations: it };
}

/**
 * Fit the Kay–Moses potential with inverse widths `kappas` (the bound states −κ² of u₀, e.g. from
 * quantum/bound.ts) to u₀ on the grid. Starts: the even reflectionless well at the centroid of u₀ (the exact
 * answer for an even reflectionless u₀, and close to it for a nearly reflectionless one), every centre at the
 * centroid, and the centres spread by ±1/(2κ) about it alternately; the best fit is returned (the later starts
 * only when the first leaves more than GOOD_FIT). RangeError for an empty or non-positive κ list.
 */
export function fitReflectionless(grid: Grid, u0: Float64Array, kappas: readonly number[]): ReflectionlessFit {
  if (kappas.length === 0 || kappas.some((k) => !(k > 0) || !Number.isFinite(k))) throw new RangeError(`reflectionless fit: κ must be a non-empty list of positive numbers, got [${kappas.join(', ')}]`);
  if (u0.length !== grid.n) throw new RangeError(`reflectionless fit: potential length ${u0.length} must equal grid points ${grid.n}`);
  const sorted = [...kappas].sort((a, b) => b - a);
  let weight = 0;
  let moment = 0;
  for (let j = 0; j < grid.n; j++) {
    weight += Math.abs(u0[j]);
    moment += grid.x[j] * Math.abs(u0[j]);
  }
  const centroid = weight > 0 ? moment / weight : 0;
  const starts = [
    mergedCentres(sorted, centroid).map((s) => s.center),
    sorted.map(() => centroid),
    sorted.map((k, i) => centroid + (i % 2 === 0 ? 1 : -1) / (2 * k)),
    sorted.map((k, i) => centroid - (i % 2 === 0 ? 1 : -1) / (2 * k)),
  ];
  let best: { centres: number[]; cost: number; iterations: number } | null = null;
  const norm0 = sumSquares(u0);
  for (const s of starts) {
    const f = levenbergMarquardt(grid, u0, sorted, s);
    if (!best || f.cost < best.cost) best = f;
    if (best.cost <= GOOD_FIT * GOOD_FIT * norm0) break;
  }
  if (!best || !Number.isFinite(best.cost)) throw new NumericalError('reflectionless fit: no finite least-squares fit was found');
  const solitons = sorted.map((kappa, i) => ({ kappa, center: best.centres[i] }));
  const potential = nSolitonPotential(solitons, grid.x, 0);
  const energy0 = integrate(grid, Float64Array.from(u0, (v) => v * v));
  const radiation = energy0 - (16 / 3) * sorted.reduce((s, k) => s + k ** 3, 0);
  return {
    solitons, potential, distance: Math.sqrt(best.cost / Math.max(norm0, 1e-300)),
    radiation, radiationFraction: radiation / Math.max(energy0, 1e-300), iterations: best.iterations,
  };
}
