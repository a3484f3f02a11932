/**
 * Tight-binding form of the cubic counterdiabatic Hamiltonian (physics.md §3, §6), natural units of the lattice
 * effective mass (ℓ, E₀ = ħ²/(2m*ℓ²); the lattice spacing is h = d/ℓ and the tunnelling J = E₀/h²).
 *
 * Continuum:   H_CD/E₀ = k² + u − σ τ′ (4k³ + 3{u, k}),    k = −i∂_ξ,  σ = 1 (CD), 0 (bare), −1 (flipped sign).
 *
 * Lattice (open chain of M sites, ψ_j = ψ(ξ_j)), with e^{ikh}ψ_j = ψ_{j+1}:
 *   k²      → (2 − 2cos kh)/h²:              (2ψ_j − ψ_{j+1} − ψ_{j−1})/h²
 *   k³      → (2 sin kh − sin 2kh)/h³         = k³ − k⁵h²/4 + …  (physics.md §6):
 *             (−i/h³)[(ψ_{j+1} − ψ_{j−1}) − ½(ψ_{j+2} − ψ_{j−2})]
 *   {u, k}  → (−i/h)[ū_{j+½} ψ_{j+1} − ū_{j−½} ψ_{j−1}],  ū_{j+½} = (u_j + u_{j+1})/2
 *             (Taylor: = −i(2uψ′ + u′ψ) + O(h²), the continuum {u,k}ψ).
 * Hence the matrix elements ⟨j|H|j′⟩ (the coefficient of c_j† c_{j′}):
 *   H_jj       = 2/h² + u_j                                   (on-site: potential + band offset 2J)
 *   H_j,j+1    = −1/h² + i b_j,   b_j = σ τ′ (4/h³ + 3ū_{j+½}/h)   (real tunnelling −J and a Peierls part)
 *   H_j,j+2    = i q,             q   = −2 σ τ′/h³                 (next-nearest neighbour, purely imaginary)
 * and H_j′j = conj(H_jj′): Hermitian by construction. A bond j → j′ > j is programmed as the complex
 * tunnelling amplitude A e^{iφ} = H_jj′ (so the real tunnelling −J has φ = π).
 *
 * `LatticeTerms` holds any real combination Σ c_i H_i of such Hamiltonians (the exponents of the commutator-free
 * Magnus step are of this form): kin·(lattice Laplacian) + diag(onsite) + bond and next-nearest Peierls parts.
 */

export interface LatticeTerms {
  /** number of sites M */
  readonly sites: number;
  /** spacing h (ℓ) */
  readonly h: number;
  /** weight of the kinetic term (1 for one Hamiltonian) */
  kin: number;
  /** on-site values H_jj minus 2·kin/h² (i.e. the potential part), length M */
  readonly onsite: Float64Array;
  /** imaginary part b_j of H_{j,j+1}, length M − 1 */
  readonly bond: Float64Array;
  /** imaginary part q of H_{j,j+2} (uniform) */
  nnn: number;
}

export function emptyTerms(sites: number, h: number): LatticeTerms {
  return { sites, h, kin: 0, onsite: new Float64Array(sites), bond: new Float64Array(Math.max(sites - 1, 0)), nnn: 0 };
}

/**
 * out = H_CD terms of the potential u (site values), drive rate τ′ and sign σ (see module doc); pure, no allocation.
 */
export function cdTerms(u: Float64Array, tauPrime: number, sigma: number, out: LatticeTerms): LatticeTerms {
  const h = out.h;
  const st = sigma * tauPrime;
  out.kin = 1;
  out.onsite.set(u);
  const cubic = 4 / (h * h * h);
  for (let j = 0; j < out.sites - 1; j++) out.bond[j] = st * (cubic + (3 * 0.5 * (u[j] + u[j + 1])) / h);
  out.nnn = (-2 * st) / (h * h * h);
  return out;
}

/** out = a·A + b·B (term-wise; the operator is linear in the terms) */
export function combineTerms(a: number, A: LatticeTerms, b: number, B: LatticeTerms, out: LatticeTerms): LatticeTerms {
  out.kin = a * A.kin + b * B.kin;
  for (let j = 0; j < out.sites; j++) out.onsite[j] = a * A.onsite[j] + b * B.onsite[j];
  for (let j = 0; j < out.sites - 1; j++) out.bond[j] = a * A.bond[j] + b * B.bond[j];
  out.nnn = a * A.nnn + b * B.nnn;
  return out;
}

/** y = H x for interleaved complex x, y of length 2M (distinct buffers); the banded product, no allocation */
export function applyTerms(t: LatticeTerms, x: Float64Array, y: Float64Array): void {
  const M = t.sites;
  const h2 = 1 / (t.h * t.h);
  const r = -t.kin * h2;
  const d0 = 2 * t.kin * h2;
  const q = t.nnn;
  const b = t.bond;
  for (let j = 0; j < M; j++) {
    const xr = x[2 * j];
    const xi = x[2 * j + 1];
    const dj = d0 + t.onsite[j];
    let yr = dj * xr;
    let yi = dj * xi;
    if (j + 1 < M) {
      const ar = x[2 * j + 2], ai = x[2 * j + 3], bj = b[j];
      yr += r * ar - bj * ai;
      yi += r * ai + bj * ar;
    }
    if (j >= 1) {
      const ar = x[2 * j - 2], ai = x[2 * j - 1], bj = b[j - 1];
      yr += r * ar + bj * ai;
      yi += r * ai - bj * ar;
    }
    if (j + 2 < M) {
      const ar = x[2 * j + 4], ai = x[2 * j + 5];
      yr -= q * ai;
      yi += q * ar;
    }
    if (j >= 2) {
      const ar = x[2 * j - 4], ai = x[2 * j - 3];
      yr += q * ai;
      yi -= q * ar;
    }
    y[2 * j] = yr;
    y[2 * j + 1] = yi;
  }
}

/** Gershgorin bound on the spectral radius of the terms (for the first step size) */
export function normBound(t: LatticeTerms): number {
  const h2 = 1 / (t.h * t.h);
  let m = 0;
  for (let j = 0; j < t.sites; j++) {
    const bl = j >= 1 ? Math.abs(t.bond[j - 1]) : 0;
    const br = j + 1 < t.sites ? Math.abs(t.bond[j]) : 0;
    const row = Math.abs(2 * t.kin * h2 + t.onsite[j]) + Math.hypot(t.kin * h2, bl) + Math.hypot(t.kin * h2, br) + 2 * Math.abs(t.nnn);
    m = Math.max(m, row);
  }
  return m;
}

/**
 * Dense complex matrix of the terms, built column by column from `applyTerms` (so it checks the product itself):
 * returns {re, im} row-major M×M. For tests and small lattices only.
 */
export function denseFromTerms(t: LatticeTerms): { re: Float64Array; im: Float64Array } {
  const M = t.sites;
  const re = new Float64Array(M * M);
  const im = new Float64Array(M * M);
  const x = new Float64Array(2 * M);
  const y = new Float64Array(2 * M);
  for (let c = 0; c < M; c++) {
    x.fill(0);
    x[2 * c] = 1;
    applyTerms(t, x, y);
    for (let r = 0; r < M; r++) {
      re[r * M + c] = y[2 * r];
      im[r * M + c] = y[2 * r + 1];
    }
  }
  return { re, im };
}

/** max |H − H†| relative to max |H| of a dense complex matrix */
export function hermiticityDefect(m: { re: Float64Array; im: Float64Array }, M: number): number {
  let dev = 0;
  let size = 0;
  for (let r = 0; r < M; r++) {
    for (let c = 0; c < M; c++) {
      const a = r * M + c, b = c * M + r;
      dev = Math.max(dev, Math.hypot(m.re[a] - m.re[b], m.im[a] + m.im[b]));
      size = Math.max(size, Math.hypot(m.re[a], m.im[a]));
    }
  }
  return size > 0 ? dev / size : 0;
}

/**
 * The two lattice building blocks on a real function f (site values), as complex interleaved outputs:
 * cubic: K₃f = (−i/h³)[(f_{j+1} − f_{j−1}) − ½(f_{j+2} − f_{j−2})]; anticommutator: (−i/h)[ū₊f_{j+1} − ū₋f_{j−1}].
 * Sites within two of the ends are left at zero (the open chain truncates the stencil there).
 */
export function latticeCubic(f: Float64Array, h: number, out: Float64Array): Float64Array {
  const M = f.length;
  out.fill(0);
  for (let j = 2; j < M - 2; j++) out[2 * j + 1] = -((f[j + 1] - f[j - 1]) - 0.5 * (f[j + 2] - f[j - 2])) / (h * h * h);
  return out;
}

export function latticeAnticommutator(u: Float64Array, f: Float64Array, h: number, out: Float64Array): Float64Array {
  const M = f.length;
  out.fill(0);
  for (let j = 2; j < M - 2; j++) {
    const up = 0.5 * (u[j] + u[j + 1]);
    const dn = 0.5 * (u[j] + u[j - 1]);
    out[2 * j + 1] = -(up * f[j + 1] - dn * f[j - 1]) / h;
  }
  return out;
}

/** one programmed bond j → j′ (j′ > j) of the tunnelling matrix: H_jj′ = amplitude · e^{i phase} (natural units) */
export interface BondCoupling {
  amplitude: number;
  phase: number;
}

/** complex nearest-neighbour element H_{j,j+1} = −kin/h² + i b_j and next-nearest H_{j,j+2} = i q as (A, φ) */
export function nearestCoupling(t: LatticeTerms, j: number): BondCoupling {
  const re = -t.kin / (t.h * t.h);
  const im = t.bond[j];
  return { amplitude: Math.hypot(re, im), phase: Math.atan2(im, re) };
}

export function nextNearestCoupling(t: LatticeTerms): BondCoupling {
  return { amplitude: Math.abs(t.nnn), phase: t.nnn === 0 ? 0 : Math.atan2(t.nnn, 0) };
}
