/**
 * Observables of evolved states (natural units, physics.md §3). Vectors: evolved states are interleaved complex
 * Float64Array(2N); eigenvectors are real unit vectors Float64Array(N) (eigen.ts). Inner products are plain sums.
 *
 * - Fidelity: weight of ψ in the whole degenerate eigenspace of the final H, F = Σ_{j∈G} |⟨v_j|ψ⟩|²/‖ψ‖²
 *   (physics.md §5: the periodic box has exactly degenerate ±k continuum pairs; never use one basis vector).
 * - Excess energy: ⟨ψ|H_f|ψ⟩/‖ψ‖² − E_f.
 * - Thermal ensemble at temperature T (energy units E₀, k_B = 1): Boltzmann weights p_n ∝ e^{−(E_n−E_0)/T} over the
 *   computed initial levels; the ensemble fidelity is defined as F_th = Σ_n p_n F_n (the overlap of the evolved
 *   ensemble with the adiabatically transported one when the initial density matrix is diagonal), the mean excess
 *   energy as Σ_n p_n ΔE_n. The weight of the levels not computed is estimated by continuing the spectrum with the
 *   free-particle box levels (2πj/L)², doubly degenerate (plane waves in the periodic box).
 * - Fermions: N non-interacting fermions in the lowest N levels; the many-body fidelity of the Slater determinant
 *   is |det⟨n_j(final)|φ_i(T)⟩|² (Löwdin, Phys. Rev. 97, 1474, 1955: overlap of two determinants), with a complex
 *   LU determinant (partial pivoting; Golub & Van Loan, Matrix Computations, 4th ed. 2013, §3.4).
 * - Projected operator norms: ‖P O P‖₂ with P the projector on orthonormal states, computed as the largest |eigenvalue|
 *   of the Hermitian matrix M_ij = ⟨φ_i|O|φ_j⟩ through its real symmetric 2n×2n embedding [[Re M, −Im M],[Im M, Re M]].
 */
import { EigenvalueDecomposition, Matrix, SingularValueDecomposition } from 'ml-matrix';
import { bareTerms, SpectralOperator, type OperatorTerms } from './hamiltonian.ts';
import { dotIm, dotRe, norm2 } from '../linalg/complex.ts';
import { groupDegenerate } from './eigen.ts';

/** tail weights above this get a warning (matches the 1 − 1e-6 fidelity criterion of verify) */
export const THERMAL_TAIL_WARN = 1e-6;
/** free-level continuation stops when a term drops below this fraction of the partition sum (common practice) */
const TAIL_TERM_STOP = 1e-18;

/** ⟨v|ψ⟩ for real v and complex ψ, returned as [re, im] */
export function overlapReal(v: Float64Array, psi: Float64Array): [number, number] {
  let re = 0;
  let im = 0;
  for (let j = 0; j < v.length; j++) {
    re += v[j] * psi[2 * j];
    im += v[j] * psi[2 * j + 1];
  }
  return [re, im];
}

/** F = Σ_{j∈group} |⟨v_j|ψ⟩|² / ‖ψ‖² */
export function eigenspaceFidelity(psi: Float64Array, vectors: readonly Float64Array[], group: readonly number[]): number {
  let f = 0;
  for (const j of group) {
    const [re, im] = overlapReal(vectors[j], psi);
    f += re * re + im * im;
  }
  const n = norm2(psi);
  return f / (n * n);
}

/** the group (index list) that contains level `index` */
export function groupOf(groups: readonly number[][], index: number): number[] {
  const g = groups.find((gr) => gr.includes(index));
  if (!g) throw new RangeError(`observables: level ${index} is in no degenerate group`);
  return g;
}

/** ⟨ψ|H_f|ψ⟩/‖ψ‖² − E_f with H_f = k² + u_f */
export function excessEnergy(op: SpectralOperator, uFinal: Float64Array, psi: Float64Array, eFinal: number, scratch?: Float64Array): number {
  const t: OperatorTerms = bareTerms(uFinal);
  const buf = scratch ?? new Float64Array(psi.length);
  op.apply(t, psi, buf);
  const n = norm2(psi);
  return dotRe(psi, buf) / (n * n) - eFinal;
}

export interface ThermalSummary {
  temperature: number;
  weights: number[];
  /** estimated Boltzmann weight of the levels that were not computed */
  tailWeight: number;
  tailWarning: string | null;
  meanExcessEnergy: number;
  /** Boltzmann mean of the state fidelities, Σ_n p_n F_n */
  ensembleFidelity: number;
  definition: string;
  /** Uhlmann fidelity of the evolved ensemble and the final Gibbs state (set by the verifier; see uhlmannFidelity) */
  uhlmannFidelity?: number;
}

/** Boltzmann factors exp(−(E_n − E_0)/T) relative to the lowest given level */
function boltzmannFactors(energies: readonly number[], temperature: number): number[] {
  const e0 = energies[0];
  return energies.map((e) => Math.exp(-(e - e0) / temperature));
}

/** Boltzmann weights p_n ∝ exp(−(E_n − E_0)/T), renormalised on the given levels */
export function boltzmannWeights(energies: readonly number[], temperature: number): number[] {
  const raw = boltzmannFactors(energies, temperature);
  const z = raw.reduce((a, b) => a + b, 0);
  return raw.map((w) => w / z);
}

/**
 * Uhlmann fidelity F(ρ, σ) = (tr √(√σ ρ √σ))² (Uhlmann, Rep. Math. Phys. 9, 273, 1976; Jozsa, J. Mod. Opt. 41, 2315,
 * 1994; Nielsen & Chuang, Quantum Computation and Quantum Information, 2000, §9.2.2, who call its square root F) of
 * the evolved ensemble ρ = Σ_n p_n |ψ_n⟩⟨ψ_n| and the target σ = Σ_m q_m |v_m⟩⟨v_m| (orthonormal real v_m). With
 * C_mn = ⟨v_m|ψ_n⟩ and B = diag(√q) C diag(√p), √σρ√σ = BB†, so tr √(√σρ√σ) is the sum of the singular values of
 * B. They come from an SVD of the real embedding [[Re B, −Im B], [Im B, Re B]] (each singular value twice), which
 * keeps the small ones to round-off of ‖B‖ (square roots of the eigenvalues of B†B would not: √ε ≈ 1e-8).
 * For pure states it is |⟨ψ|v⟩|², the state fidelity used elsewhere.
 */
export function uhlmannFidelity(evolved: readonly Float64Array[], p: readonly number[], targets: readonly Float64Array[], q: readonly number[]): number {
  const n = p.length;
  const m = q.length;
  const bre = new Float64Array(m * n);
  const bim = new Float64Array(m * n);
  for (let a = 0; a < m; a++) for (let b = 0; b < n; b++) {
    const [cr, ci] = overlapReal(targets[a], evolved[b]);
    const f = Math.sqrt(q[a] * p[b]);
    bre[a * n + b] = f * cr;
    bim[a * n + b] = f * ci;
  }
  const trace = new SingularValueDecomposition(realEmbedding(bre, bim, m, n), { computeLeftSingularVectors: false, computeRightSingularVectors: false }).diagonal.reduce((acc, x) => acc + x, 0) / 2;
  return trace * trace;
}

export function thermalSummary(energies: readonly number[], fidelities: readonly number[], excess: readonly number[], temperature: number, boxLength: number): ThermalSummary {
  if (!(temperature > 0) || !Number.isFinite(temperature)) throw new RangeError(`thermal: temperature ${temperature} must be a positive finite number (energy units E₀)`);
  const e0 = energies[0];
  const raw = boltzmannFactors(energies, temperature);
  const zComputed = raw.reduce((a, b) => a + b, 0);
  const eTop = energies[energies.length - 1];
  let tail = 0;
  const dk = (2 * Math.PI) / boxLength;
  for (let j = 1; j < 1e7; j++) {
    const e = (dk * j) ** 2;
    if (e <= eTop) continue;
    const term = 2 * Math.exp(-(e - e0) / temperature);
    tail += term;
    if (term < TAIL_TERM_STOP * zComputed) break;
  }
  const z = zComputed + tail;
  const weights = raw.map((w) => w / zComputed);
  const tailWeight = tail / z;
  let meanExcess = 0;
  let fid = 0;
  for (let i = 0; i < energies.length; i++) {
    meanExcess += weights[i] * excess[i];
    fid += weights[i] * fidelities[i];
  }
  return {
    temperature, weights, tailWeight,
    tailWarning: tailWeight > THERMAL_TAIL_WARN ? `thermal: estimated weight ${tailWeight.toExponential(2)} of levels above the ${energies.length} computed ones exceeds ${THERMAL_TAIL_WARN}; compute more states` : null,
    meanExcessEnergy: meanExcess, ensembleFidelity: fid,
    definition: 'Boltzmann mean of the state fidelities Σ_n p_n F_n over the computed levels, p_n ∝ exp(−(E_n − E_0)/T) renormalised on them',
  };
}

/** determinant of a complex n×n matrix (row-major re/im) by LU with partial pivoting; inputs are copied */
export function complexDeterminant(reIn: Float64Array, imIn: Float64Array, n: number): [number, number] {
  const re = Float64Array.from(reIn);
  const im = Float64Array.from(imIn);
  let dr = 1;
  let di = 0;
  for (let c = 0; c < n; c++) {
    let piv = c;
    let best = -1;
    for (let r = c; r < n; r++) {
      const m = Math.hypot(re[r * n + c], im[r * n + c]);
      if (m > best) { best = m; piv = r; }
    }
    if (best === 0) return [0, 0];
    if (piv !== c) {
      for (let k = 0; k < n; k++) {
        [re[c * n + k], re[piv * n + k]] = [re[piv * n + k], re[c * n + k]];
        [im[c * n + k], im[piv * n + k]] = [im[piv * n + k], im[c * n + k]];
      }
      dr = -dr; di = -di;
    }
    const pr = re[c * n + c];
    const pi = im[c * n + c];
    [dr, di] = [dr * pr - di * pi, dr * pi + di * pr];
    const pm = pr * pr + pi * pi;
    for (let r = c + 1; r < n; r++) {
      // l = a_rc / a_cc
      const ar = re[r * n + c];
      const ai = im[r * n + c];
      const lr = (ar * pr + ai * pi) / pm;
      const li = (ai * pr - ar * pi) / pm;
      for (let k = c; k < n; k++) {
        const br = re[c * n + k];
        const bi = im[c * n + k];
        re[r * n + k] -= lr * br - li * bi;
        im[r * n + k] -= lr * bi + li * br;
      }
    }
  }
  return [dr, di];
}

export interface FermionSummary {
  particles: number;
  /** |det⟨n_j|φ_i⟩|² against the lowest `particles` final levels */
  manyBodyFidelity: number;
  /** true when the Fermi level cuts a degenerate group (final filled sea not unique) */
  fermiLevelCutsGroup: boolean;
  note: string | null;
}

export function fermionFidelity(evolved: readonly Float64Array[], finalVectors: readonly Float64Array[], finalEnergies: readonly number[], particles: number, degeneracyTol: number): FermionSummary {
  if (!Number.isInteger(particles) || particles < 1 || particles > evolved.length || particles > finalVectors.length) {
    throw new RangeError(`fermions: number ${particles} must be an integer in 1 … ${Math.min(evolved.length, finalVectors.length)} (the propagated states)`);
  }
  const n = particles;
  const re = new Float64Array(n * n);
  const im = new Float64Array(n * n);
  for (let j = 0; j < n; j++) for (let i = 0; i < n; i++) {
    const [a, b] = overlapReal(finalVectors[j], evolved[i]);
    re[j * n + i] = a;
    im[j * n + i] = b;
  }
  const [dr, di] = complexDeterminant(re, im, n);
  const groups = groupDegenerate(finalEnergies, degeneracyTol);
  const g = groupOf(groups, n - 1);
  const cuts = g[g.length - 1] > n - 1;
  return {
    particles, manyBodyFidelity: dr * dr + di * di, fermiLevelCutsGroup: cuts,
    note: cuts ? `the Fermi level (level ${n - 1}, E = ${finalEnergies[n - 1]}) cuts a degenerate group of ${g.length} levels: the filled sea is not unique; the value uses the computed basis vectors` : null,
  };
}

export interface OccupiedCoupling {
  /** ‖(1 − P) O P‖₂: how strongly O drives the occupied states out of their subspace (P: the occupied projector) */
  leakage: number;
  /** max |⟨φ_m|O|φ_n⟩| over occupied n and tracked m ≠ n: the largest single transition element in the window */
  window: number;
}

/**
 * Coupling of an operator O out of the occupied subspace. With orthonormal tracked states φ_0 … φ_{M−1}, the first
 * `occupied` of them spanning P: r_n = (1 − P) O φ_n, ‖(1 − P) O P‖₂² = λ_max(G), G_nk = ⟨r_n|r_k⟩ (the squared
 * singular values of (1 − P)OP are the eigenvalues of its Gram matrix; Golub & Van Loan, Matrix Computations,
 * 4th ed. 2013, §2.4). For the counterdiabatic generator this is the rate at which the bare drive would leak
 * population out of the occupied states (adiabatic perturbation theory: ⟨m|A|n⟩ = i⟨m|∂_λ n⟩). Scratch: 2N.
 */
export function occupiedCoupling(op: SpectralOperator, terms: OperatorTerms, tracked: readonly Float64Array[], occupied: number, scratch: Float64Array): OccupiedCoupling {
  const residuals: Float64Array[] = [];
  let window = 0;
  for (let n = 0; n < occupied; n++) {
    op.apply(terms, tracked[n], scratch);
    const r = Float64Array.from(scratch);
    for (let m = 0; m < tracked.length; m++) {
      const cr = dotRe(tracked[m], scratch);
      const ci = dotIm(tracked[m], scratch);
      if (m !== n) window = Math.max(window, Math.hypot(cr, ci));
      if (m < occupied) {
        const phi = tracked[m];
        for (let j = 0; j < r.length; j += 2) {
          r[j] -= phi[j] * cr - phi[j + 1] * ci;
          r[j + 1] -= phi[j] * ci + phi[j + 1] * cr;
        }
      }
    }
    residuals.push(r);
  }
  const gre = new Float64Array(occupied * occupied);
  const gim = new Float64Array(occupied * occupied);
  for (let i = 0; i < occupied; i++) for (let j = 0; j < occupied; j++) {
    gre[i * occupied + j] = dotRe(residuals[i], residuals[j]);
    gim[i * occupied + j] = dotIm(residuals[i], residuals[j]);
  }
  return { leakage: Math.sqrt(largestGramEigenvalue(gre, gim, occupied)), window };
}

/**
 * Largest eigenvalue of the Hermitian positive semi-definite n×n Gram matrix (re + i·im), through the real symmetric
 * 2n×2n embedding [[Re, −Im], [Im, Re]], which has each eigenvalue twice (Golub & Van Loan, Matrix Computations,
 * 4th ed. 2013, §8.1).
 */
function largestGramEigenvalue(re: Float64Array, im: Float64Array, n: number): number {
  return Math.max(0, ...new EigenvalueDecomposition(realEmbedding(re, im, n, n), { assumeSymmetric: true }).realEigenvalues);
}

/**
 * The real 2m×2n matrix [[Re M, −Im M], [Im M, Re M]] of a complex m×n matrix M (row-major re/im): its singular
 * values are those of M, each twice, and for Hermitian M so are its eigenvalues (Golub & Van Loan 2013, §8.1).
 */
function realEmbedding(re: Float64Array, im: Float64Array, m: number, n: number): Matrix {
  const big = new Matrix(2 * m, 2 * n);
  for (let a = 0; a < m; a++) for (let b = 0; b < n; b++) {
    big.set(a, b, re[a * n + b]);
    big.set(a + m, b + n, re[a * n + b]);
    big.set(a, b + n, -im[a * n + b]);
    big.set(a + m, b, im[a * n + b]);
  }
  return big;
}
