/**
 * The best realisable cubic-plus-first-order counterdiabatic correction for a sequence that need not be
 * admissible: the variational principle for the adiabatic gauge potential (the "least-action" formulation of
 * counterdiabatic driving: minimise the Hilbert–Schmidt norm of G_λ = ∂_λH + i[A, H] over an ansatz for A; for
 * the exact A, G_λ = M_λ is diagonal; physics.md §1). Natural units of physics.md §3 (ħ = 1, 2m = 1):
 *
 *     H = k² + u(ξ, λ),     A = a k³ + ½{g, k},     g(ξ) = Σ_c θ_c φ_c(ξ)
 *     φ = [u(·, λ), 1, P₁(2ξ/L), …, P_K(2ξ/L)]     (Legendre polynomials on the box, Abramowitz & Stegun 22.7.10)
 *
 * For a KdV-admissible sequence the exact answer a = −4, g = −6u (physics.md §3) lies in the span; for the
 * harmonic trap with changing ω the exact −(ω̇/4ω){ξ, k} (Muga, Chen, Ibáñez, Lizuain & Ruschhaupt, J. Phys. B 43,
 * 085509, 2010) is g = −(ω̇/2ω)ξ ∝ P₁; a translation (A = ĉk) is g = const.
 *
 * Real form. With k = −iD (D the real antisymmetric Fourier derivative, Nyquist mode zeroed, physics.md §5),
 * k³ = iD³ and ½{φ, k} = −(i/2)(φD + Dφ), so A = iB with B = a D³ − ½ Σ_c θ_c (φ_c D + D φ_c) real antisymmetric.
 * For a real eigenvector ψ_m of H (energy E_m),
 *     G ψ_m = u_λ ψ_m − i(H − E_m) A ψ_m = u_λ ψ_m + (H − E_m) B ψ_m            (all real)
 * and its matrix elements G_nm = (u_λ)_nm + (E_n − E_m) B_nm, B_nm = −i A_nm: the eigenbasis form,
 * with ½{φ,k}_nm = −(i/2) Σ_j φ_j (ψ_n,j (Dψ_m)_j − (Dψ_n)_j ψ_m,j) (the tests check both forms agree).
 *
 * Cost. The subspace the user cares about is a set of levels m ∈ S with weights w_m (equal, or Boltzmann at a
 * temperature T); the minimised quantity is
 *     C(θ) = Σ_{m∈S} w_m Σ_{n ∉ deg(m)} |G_nm|² = Σ_{m∈S} w_m ‖Q_m G ψ_m‖²,     Q_m = 1 − Σ_{j∈deg(m)} |ψ_j⟩⟨ψ_j|,
 * i.e. ‖(G − diag) ρ^{1/2}‖²_HS with ρ = Σ w_m |m⟩⟨m|: every pair (m, n) with m or n in S counts, with weight
 * w_m + w_n, partners n running over the whole grid (so no eigenvector beyond S is needed). The diagonal and the
 * degenerate blocks are left out: (E_n − E_m) = 0 there, no A changes them (they are ∂_λE_n, Hellmann–Feynman).
 * (A product weight w_m w_n would leave only pairs inside S and, for a few states, an underdetermined problem
 * that ignores the leakage out of S: so the sum weight.)
 *
 * Solution. C is a linear least-squares problem in (a, θ): rows Σ_{m∈S} N, columns 2 + K. Columns are scaled to
 * unit norm and taken in the fixed order [k³, u, 1, P₁ … P_K]; a column whose part orthogonal to the earlier kept
 * ones is below DROP_TOL is dropped (a rank-revealing ordered modified Gram–Schmidt; Golub & Van Loan, Matrix
 * Computations, 4th ed. 2013, §5.4.1), so when the exact answer is in the span of the earlier, physical columns it
 * is returned, and functions the subspace cannot see (e.g. P₂ for a harmonic trap, a combination of u and 1) get no
 * weight; the kept columns are solved by Householder QR (ml-matrix QrDecomposition).
 */
import { Matrix, QrDecomposition } from 'ml-matrix';
import type { Grid } from '../spectral/grid.ts';
import { RealGridOperators } from '../spectral/real-operators.ts';
import { groupDegenerate, lowestEigenpairs, type EigenMethod } from '../quantum/eigen.ts';
import { lambdaDerivatives, STENCIL_WIDTH } from './fornberg.ts';
import { boxThreshold } from '../quantum/bound.ts';

/** Legendre terms P₁ … P_K in the basis of g (plus u and 1: "a few dozen terms") */
export const LEGENDRE_TERMS = 24;
/** a unit-norm column whose part orthogonal to the earlier kept columns is below this is dropped. Such columns are
 * functions the subspace barely sees (high Legendre terms far from localised states); kept, they pick up large
 * coefficients from noise and make g arbitrary where the states are not. Measured (harmonic trap, L = 30,
 * N = 128, 4 states): g off the closed form by up to 4e-3 at the box edges with 1e-6, 5e-7 with 1e-3; the
 * admissible −6κ²sech² fit is unchanged */
export const DROP_TOL = 1e-3;
/** the subspace "support": density above this fraction of its maximum (for the gMax diagnostic, common practice) */
export const SUPPORT_FRACTION = 1e-6;
/** levels closer than this (E₀) form one degenerate block (the box's ±k pairs agree to ~1e-12; verify's value) */
export const DEGENERACY_TOL = 1e-7;
/** default subspace: bound states (E < −(2π/L)²) plus this many (verify's default) */
export const EXTRA_STATES = 4;
/** levels computed beyond the subspace to complete a degenerate block cut at the top */
export const BLOCK_MARGIN = 2;

export interface VariationalOptions {
  /** size M of the subspace S (lowest M levels); default bound states + EXTRA_STATES */
  states?: number;
  /** temperature (E₀, k_B = 1): Boltzmann weights over S instead of equal weights */
  temperature?: number;
  /** number K of Legendre terms (default LEGENDRE_TERMS) */
  legendre?: number;
  eigenMethod?: EigenMethod;
  /** false: fit ½{g, k} alone (a = 0, the k³ column left out), the best correction a potential can paint
   *  (quantum/painted.ts, physics.md §7); default true */
  cubic?: boolean;
}

export interface GaugeFit {
  /** coefficient of k³ (natural units: â of physics.md §2 in the A = â k³ + … normalisation) */
  a: number;
  /** θ over the basis [u, 1, P₁ … P_K] */
  coefficients: number[];
  /** basis columns kept by the ordered rank test, in order [k³, u, 1, P₁ …] */
  kept: boolean[];
  /** sqrt(C(θ)/C(0)): residual relative to ‖∂_λV‖ on the subspace (off-diagonal part) */
  residual: number;
  /** sqrt(C(0)) = ‖Q ∂_λV ρ^{1/2}‖, E₀ per unit λ */
  rateNorm: number;
  /** max |g| where the subspace density Σ w_m ψ_m² ≥ SUPPORT_FRACTION of its maximum, and over the whole box: a
   * much larger box value means g is fixed only where the states are (add states to pin it down elsewhere) */
  gMax: { support: number; box: number };
  /** ∂_λE_m = ⟨m|u_λ|m⟩ (Hellmann–Feynman): the part no A can remove */
  levelRates: number[];
  energies: number[];
  weights: number[];
}

export interface VariationalFrame extends GaugeFit {
  index: number;
  lambda: number;
}

export interface VariationalFit {
  lambda: number[];
  frames: VariationalFrame[];
  /** labels of the g basis */
  basis: string[];
  legendre: number;
  states: number;
  temperature: number | null;
}

/** P_c(2ξ/L) for c = 1 … K at the grid points (three-term recurrence, Abramowitz & Stegun 22.7.10) */
export function legendreTable(grid: Grid, terms: number): Float64Array[] {
  const n = grid.n;
  const t = Float64Array.from(grid.x, (x) => (2 * x) / grid.length);
  const out: Float64Array[] = [];
  let pm = new Float64Array(n).fill(1);
  let p = Float64Array.from(t);
  for (let c = 1; c <= terms; c++) {
    out.push(p);
    const next = new Float64Array(n);
    for (let j = 0; j < n; j++) next[j] = ((2 * c + 1) * t[j] * p[j] - c * pm[j]) / (c + 1);
    pm = p;
    p = next;
  }
  return out;
}

/** labels of the g basis for K Legendre terms */
export function basisLabels(terms: number): string[] {
  return ['u', '1', ...Array.from({ length: terms }, (_, c) => `P${c + 1}(2ξ/L)`)];
}

/** g(ξ) = θ_u u + θ_1 + Σ θ_{P_c} P_c into out (allocation-free) */
export function evaluateG(coefficients: ArrayLike<number>, u: Float64Array, legendre: readonly Float64Array[], out: Float64Array): Float64Array {
  const n = out.length;
  const cu = coefficients[0], c1 = coefficients[1];
  for (let j = 0; j < n; j++) out[j] = cu * u[j] + c1;
  for (let c = 0; c < legendre.length; c++) {
    const th = coefficients[2 + c];
    if (th === 0) continue;
    const p = legendre[c];
    for (let j = 0; j < n; j++) out[j] += th * p[j];
  }
  return out;
}

function dot(a: Float64Array, b: Float64Array): number {
  let s = 0;
  for (let j = 0; j < a.length; j++) s += a[j] * b[j];
  return s;
}

/** remove the components along the (orthonormal) vectors of one degenerate block */
function projectOut(f: Float64Array, block: readonly Float64Array[]): void {
  for (let pass = 0; pass < 2; pass++) {
    for (const v of block) {
      const c = dot(v, f);
      for (let j = 0; j < f.length; j++) f[j] -= c * v[j];
    }
  }
}

/** subspace weights: equal (1/M), or Boltzmann e^{−(E_m − E_0)/T} normalised on the M levels */
export function subspaceWeights(energies: readonly number[], temperature?: number): number[] {
  if (temperature === undefined) return energies.map(() => 1 / energies.length);
  if (!(Number.isFinite(temperature) && temperature > 0)) throw new RangeError(`variational: temperature = ${temperature} is not allowed: must be a finite number > 0 (E₀)`);
  const raw = energies.map((e) => Math.exp(-(e - energies[0]) / temperature));
  const z = raw.reduce((p, q) => p + q, 0);
  return raw.map((w) => w / z);
}

export interface SubspaceBasis {
  energies: number[];
  /** unit real eigenvectors of the M subspace levels */
  vectors: Float64Array[];
  /** for each subspace level, the vectors of its degenerate block (computed levels only) */
  blocks: Float64Array[][];
}

/** lowest M levels of k² + u with their degenerate blocks (M + BLOCK_MARGIN levels are computed) */
export function subspaceOf(grid: Grid, u: Float64Array, states: number, method?: EigenMethod): SubspaceBasis {
  if (!Number.isInteger(states) || states < 1 || states + BLOCK_MARGIN > grid.n) {
    throw new RangeError(`variational: states = ${states} is not allowed: must be an integer in 1 … ${grid.n - BLOCK_MARGIN}`);
  }
  const eig = lowestEigenpairs(grid, u, states + BLOCK_MARGIN, { method });
  const groups = groupDegenerate(eig.energies, DEGENERACY_TOL);
  const blocks: Float64Array[][] = [];
  for (let m = 0; m < states; m++) {
    const g = groups.find((gr) => gr.includes(m)) as number[];
    blocks.push(g.map((i) => eig.vectors[i]));
  }
  return { energies: eig.energies.slice(0, states), vectors: eig.vectors.slice(0, states), blocks };
}

interface GaugeSystem {
  /** columns (H − E_m) B_p ψ_m, projected and weighted by √w_m, stacked over m; p = 0 is k³ */
  cols: Float64Array[];
  /** Q_m u_λ ψ_m weighted by √w_m, stacked over m */
  rhs: Float64Array;
  rows: number;
  levelRates: number[];
  /** the g basis functions [u, 1, P₁ …] */
  phis: Float64Array[];
}

/** the linear least-squares system of C(θ) = ‖rhs + Σ_p θ_p cols_p‖² (module doc) */
function gaugeSystem(grid: Grid, u: Float64Array, uLambda: Float64Array, sub: SubspaceBasis, weights: readonly number[], legendre: readonly Float64Array[]): GaugeSystem {
  const n = grid.n;
  const M = sub.vectors.length;
  if (weights.length !== M) throw new RangeError(`variational: ${weights.length} weights for ${M} states`);
  const ops = new RealGridOperators(grid);
  const ones = new Float64Array(n).fill(1);
  const phis: Float64Array[] = [u, ones, ...legendre];
  const P = 1 + phis.length;
  const rows = M * n;
  const cols: Float64Array[] = Array.from({ length: P }, () => new Float64Array(rows));
  const rhs = new Float64Array(rows);
  const bpsi = new Float64Array(n), col = new Float64Array(n), f = new Float64Array(n);
  const levelRates: number[] = [];
  for (let m = 0; m < M; m++) {
    const psi = sub.vectors[m];
    const sw = Math.sqrt(weights[m]);
    const e = sub.energies[m];
    for (let j = 0; j < n; j++) f[j] = uLambda[j] * psi[j];
    levelRates.push(dot(psi, f));
    projectOut(f, sub.blocks[m]);
    for (let j = 0; j < n; j++) rhs[m * n + j] = sw * f[j];
    for (let p = 0; p < P; p++) {
      if (p === 0) ops.d3(psi, bpsi);
      else ops.anticommutator(phis[p - 1], psi, bpsi);
      ops.shiftedH(u, e, bpsi, col);
      projectOut(col, sub.blocks[m]);
      const c = cols[p];
      for (let j = 0; j < n; j++) c[m * n + j] = sw * col[j];
    }
  }
  return { cols, rhs, rows, levelRates, phis };
}

/**
 * C(a, θ) = Σ_{m∈S} w_m ‖Q_m G ψ_m‖² for a given correction A = a k³ + ½{g, k}, g = Σ θ_c φ_c (module doc).
 */
export function gaugeCost(grid: Grid, u: Float64Array, uLambda: Float64Array, sub: SubspaceBasis, weights: readonly number[], legendre: readonly Float64Array[], a: number, coefficients: readonly number[]): number {
  const { cols, rhs, rows } = gaugeSystem(grid, u, uLambda, sub, weights, legendre);
  const theta = [a, ...coefficients];
  let s = 0;
  for (let j = 0; j < rows; j++) {
    let r = rhs[j];
    for (let p = 0; p < cols.length; p++) r += theta[p] * cols[p][j];
    s += r * r;
  }
  return s;
}

/**
 * The variational gauge potential at one λ (see module doc): minimise Σ_m w_m ‖Q_m G ψ_m‖² over a and θ, given
 * u(ξ, λ), u_λ(ξ, λ) and the subspace; `cubic` false leaves the k³ column out (a = 0).
 */
export function fitGaugePotential(grid: Grid, u: Float64Array, uLambda: Float64Array, sub: SubspaceBasis, weights: readonly number[], legendre: readonly Float64Array[], cubic = true): GaugeFit {
  const { cols, rhs, rows, levelRates } = gaugeSystem(grid, u, uLambda, sub, weights, legendre);
  const P = cols.length;
  const rateNorm = Math.sqrt(dot(rhs, rhs));
  // ordered rank test on unit-norm columns (modified Gram–Schmidt, two passes)
  const scale = cols.map((c) => Math.sqrt(dot(c, c)));
  const kept: boolean[] = [];
  const qs: Float64Array[] = [];
  for (let p = 0; p < P; p++) {
    if (!(scale[p] > 0) || (p === 0 && !cubic)) {
      kept.push(false);
      continue;
    }
    const q = Float64Array.from(cols[p], (v) => v / scale[p]);
    for (let pass = 0; pass < 2; pass++) {
      for (const o of qs) {
        const c = dot(o, q);
        for (let j = 0; j < rows; j++) q[j] -= c * o[j];
      }
    }
    const r = Math.sqrt(dot(q, q));
    if (r < DROP_TOL) {
      kept.push(false);
      continue;
    }
    for (let j = 0; j < rows; j++) q[j] /= r;
    qs.push(q);
    kept.push(true);
  }
  const theta = new Array<number>(P).fill(0);
  const keptIdx = kept.map((k, p) => (k ? p : -1)).filter((p) => p >= 0);
  if (keptIdx.length > 0 && rateNorm > 0) {
    const A = new Matrix(rows, keptIdx.length);
    keptIdx.forEach((p, c) => {
      const src = cols[p], s = scale[p];
      for (let j = 0; j < rows; j++) A.set(j, c, src[j] / s);
    });
    const b = new Matrix(rows, 1);
    for (let j = 0; j < rows; j++) b.set(j, 0, -rhs[j]);
    const x = new QrDecomposition(A).solve(b);
    keptIdx.forEach((p, c) => {
      theta[p] = x.get(c, 0) / scale[p];
    });
  }
  let rr = 0;
  for (let j = 0; j < rows; j++) {
    let r = rhs[j];
    for (const p of keptIdx) r += theta[p] * cols[p][j];
    rr += r * r;
  }
  const n = grid.n;
  const g = evaluateG(theta.slice(1), u, legendre, new Float64Array(n));
  const rho = new Float64Array(n);
  sub.vectors.forEach((v, m) => {
    for (let j = 0; j < n; j++) rho[j] += weights[m] * v[j] * v[j];
  });
  let rmax = 0;
  for (let j = 0; j < n; j++) rmax = Math.max(rmax, rho[j]);
  const gMax = { support: 0, box: 0 };
  for (let j = 0; j < n; j++) {
    const ag = Math.abs(g[j]);
    gMax.box = Math.max(gMax.box, ag);
    if (rho[j] >= SUPPORT_FRACTION * rmax) gMax.support = Math.max(gMax.support, ag);
  }
  return {
    a: theta[0],
    coefficients: theta.slice(1),
    gMax,
    kept,
    residual: rateNorm > 0 ? Math.sqrt(rr) / rateNorm : 0,
    rateNorm,
    levelRates,
    energies: sub.energies,
    weights: [...weights],
  };
}

/** number of bound levels (E < −(2π/L)², the box threshold of quantum/bound.ts) among the lowest few */
function boundCount(grid: Grid, u: Float64Array, method?: EigenMethod): number {
  const eb = boxThreshold(grid.length);
  let count = Math.min(grid.n, 16);
  for (;;) {
    const e = lowestEigenpairs(grid, u, count, { method }).energies;
    const b = e.filter((x) => x < eb).length;
    if (b < count || count === grid.n) return b;
    count = Math.min(grid.n, 2 * count);
  }
}

/** default subspace size for a sequence: the bound states of its first frame plus EXTRA_STATES */
export function defaultStates(grid: Grid, u0: Float64Array, method?: EigenMethod): number {
  return Math.min(grid.n - BLOCK_MARGIN, boundCount(grid, u0, method) + EXTRA_STATES);
}

/**
 * The variational correction at every frame of a sequence u(ξ, λ_k): u_λ by the Fornberg stencil of
 * check/admissibility.ts (or given as `rates`), the subspace of the lowest `states` levels of each frame.
 */
export function variationalFit(grid: Grid, lambda: readonly number[], frames: readonly Float64Array[], opts: VariationalOptions = {}, rates?: readonly Float64Array[]): VariationalFit {
  const K = opts.legendre ?? LEGENDRE_TERMS;
  if (!Number.isInteger(K) || K < 1) throw new RangeError(`variational: legendre = ${K} is not allowed: must be an integer ≥ 1`);
  if (frames.length < 2) throw new RangeError(`variational: ${frames.length} frame(s) given, at least 2 are needed for ∂_λV`);
  const states = opts.states ?? defaultStates(grid, frames[0], opts.eigenMethod);
  const r = rates ?? lambdaDerivatives(lambda, frames, Math.min(STENCIL_WIDTH, frames.length)).rates;
  const legendre = legendreTable(grid, K);
  const out: VariationalFrame[] = frames.map((u, k) => {
    const sub = subspaceOf(grid, u, states, opts.eigenMethod);
    const w = subspaceWeights(sub.energies, opts.temperature);
    return { index: k, lambda: lambda[k], ...fitGaugePotential(grid, u, r[k], sub, w, legendre, opts.cubic ?? true) };
  });
  return { lambda: [...lambda], frames: out, basis: basisLabels(K), legendre: K, states, temperature: opts.temperature ?? null };
}
