/**
 * Verification on one lattice (physics.md §6): the lowest eigenstates of the tight-binding H(0) are propagated
 * with the CD drive (σ = 1) and the bare drive (σ = 0) (propagate.ts) and compared with the eigenstates of
 * H(λ_end). The static lattice H = Σ ε_j n_j − J Σ (c_j†c_{j+1} + h.c.), ε_j = u_j + 2J, J = 1/h² (natural units)
 * is real symmetric tridiagonal; its lowest eigenpairs come from linalg/tridiagonal-lowest.ts.
 */
import { makeRng } from '../core/rng.ts';
import { tridiagonalLowest } from '../linalg/tridiagonal-lowest.ts';
import type { Ramp } from '../protocol/ramp.ts';
import { applyTerms, type LatticeTerms } from './operators.ts';
import { complexFromReal as complexOf, overlap2 } from '../linalg/complex.ts';
import { LatticePropagator } from './propagate.ts';
import type { LatticeSequence } from './sequence.ts';

/** start of the random vectors of the Hermiticity check (any fixed value: the check is reproducible) */
const HERMITICITY_SEED = 12345;

export interface LatticeRun {
  h: number;
  sites: number;
  sitesPerWidth: number;
  energiesStart: number[];
  energiesEnd: number[];
  fidelityCd: number[];
  fidelityBare: number[];
  maxInfidelityCd: number;
  stepsCd: number;
  stepsBare: number;
  matvecs: number;
  seconds: number;
}

/** lowest eigenpairs of the lattice H at λ (τ′ = 0: real symmetric tridiagonal) */
export function lowestLatticeStates(seq: LatticeSequence, lambda: number, h: number, count: number): { values: Float64Array; vectors: Float64Array[] } {
  const M = seq.sites.length;
  const u = seq.at(lambda, new Float64Array(M));
  const d = u.map((v) => v + 2 / (h * h));
  const e = new Float64Array(M).fill(-1 / (h * h));
  return tridiagonalLowest(d, e, count);
}

/** propagate the lowest `count` states of the lattice for the CD (σ = 1) and bare (σ = 0) drives */
export function verifyOnLattice(seq: LatticeSequence, h: number, ramp: Ramp, count: number, tol: number, width: number, onStep?: (f: number) => void): LatticeRun {
  const start = performance.now();
  const g0 = lowestLatticeStates(seq, ramp.value(0), h, count);
  const g1 = lowestLatticeStates(seq, ramp.value(ramp.duration), h, count);
  const fid: Record<number, number[]> = {};
  const steps: Record<number, number> = {};
  let matvecs = 0;
  for (const sigma of [1, 0]) {
    const prop = new LatticePropagator({ sequence: seq, ramp, sigma, h });
    const states = g0.vectors.map(complexOf);
    const stats = prop.run(states, 0, ramp.duration, tol, onStep ? (s) => onStep((sigma === 1 ? 0 : 0.5) + (0.5 * s) / ramp.duration) : undefined);
    fid[sigma] = states.map((v, i) => overlap2(complexOf(g1.vectors[i]), v));
    steps[sigma] = stats.accepted;
    matvecs += stats.matvecs;
  }
  return {
    h,
    sites: seq.sites.length,
    sitesPerWidth: width / h,
    energiesStart: Array.from(g0.values),
    energiesEnd: Array.from(g1.values),
    fidelityCd: fid[1],
    fidelityBare: fid[0],
    maxInfidelityCd: Math.max(...fid[1].map((f) => 1 - f)),
    stepsCd: steps[1],
    stepsBare: steps[0],
    matvecs,
    seconds: (performance.now() - start) / 1000,
  };
}

/** max over a few random vectors of |⟨x,Hy⟩ − conj⟨y,Hx⟩| / (‖H‖-scale): a cheap Hermiticity check of the product */
export function hermiticityCheck(t: LatticeTerms, vectors = 3): number {
  const M = t.sites;
  const x = new Float64Array(2 * M), y = new Float64Array(2 * M), hx = new Float64Array(2 * M), hy = new Float64Array(2 * M);
  const rng = makeRng(HERMITICITY_SEED);
  let worst = 0;
  for (let v = 0; v < vectors; v++) {
    for (let i = 0; i < 2 * M; i++) {
      x[i] = rng() - 0.5;
      y[i] = rng() - 0.5;
    }
    applyTerms(t, x, hx);
    applyTerms(t, y, hy);
    let ar = 0, ai = 0, br = 0, bi = 0, scale = 0;
    for (let i = 0; i < 2 * M; i += 2) {
      ar += x[i] * hy[i] + x[i + 1] * hy[i + 1];
      ai += x[i] * hy[i + 1] - x[i + 1] * hy[i];
      br += y[i] * hx[i] + y[i + 1] * hx[i + 1];
      bi += y[i] * hx[i + 1] - y[i + 1] * hx[i];
      scale += Math.hypot(x[i], x[i + 1]) * Math.hypot(hy[i], hy[i + 1]) + Math.hypot(y[i], y[i + 1]) * Math.hypot(hx[i], hx[i + 1]);
    }
    worst = Math.max(worst, Math.hypot(ar - br, ai + bi) / scale);
  }
  return worst;
}
