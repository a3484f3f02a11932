/**
 * Band structure of the sinusoidal optical lattice V(x) = V₀ sin²(k_L x), k_L = π/d, in a plane-wave basis.
 *
 * With z = k_L x, energies in the recoil energy E_R = ħ²k_L²/(2m) and s = V₀/E_R, the Schrödinger equation is
 *     −ψ″ + (s/2)ψ − (s/2) cos(2z) ψ = (E/E_R) ψ,
 * i.e. Mathieu's equation y″ + (a − 2q cos 2z) y = 0 (Abramowitz & Stegun, Handbook of Mathematical Functions,
 * 1964, eq. 20.1.1) with a = E/E_R − s/2 and q = −s/4; the spectrum for −q equals that for q (z → z + π/2).
 * Bloch states ψ = Σ_n c_n e^{i(κ + 2n)z} (quasi-momentum κ ∈ [−1, 1] in units of k_L) give the real symmetric
 * tridiagonal matrix  H_nn = (κ + 2n)² + s/2,  H_n,n±1 = −s/4.  The lowest band runs from a₀(q) + s/2 at κ = 0
 * to b₁(q) + s/2 at κ = 1 (A&S §20.3: π-periodic a₀ and 2π-periodic b₁ bound the first stability interval).
 *
 * The tunnelling of the lowest band in the tight-binding sense is J = (E_top − E_bottom)/4 (the band
 * −2J cos kd has width 4J). The deep-lattice estimate J/E_R ≈ (4/√π) s^{3/4} e^{−2√s} (Zwerger, J. Opt. B:
 * Quantum Semiclass. Opt. 5, S9, 2003, eq. (8)) is the leading term of the Mathieu asymptotics
 * b₁ − a₀ ≈ 32 √(2/π) q^{3/4} e^{−4√q} (A&S eq. 20.2.31 with r = 0) at q = s/4; it is an approximation whose
 * relative error falls like 1/√s.
 *
 * The width is the difference of two band edges computed from a matrix whose largest entries are (2P)² ~ 10³, so
 * its relative round-off is ~ε·(2P)²/J: about 1e-4 at s = 150 (J ≈ 2·10⁻⁹ E_R) but 3e-3 at s = 200; deeper
 * lattices are refused (MAX_DEPTH_RECOIL).
 */

/** deepest lattice whose band width is resolved in double precision (relative error ≲ 1e-4, see above) */
export const MAX_DEPTH_RECOIL = 150;
import { tridiagEigen } from '../linalg/tridiag.ts';

/** plane waves n = −P … P: the coupling −s/4 decays the coefficients like (s/16)^n/(n!)², so P = 12 + √s is
 * converged to machine precision for s ≤ 400 (checked against P + 10 in the tests) */
export function planeWaveCutoff(s: number): number {
  return 12 + Math.ceil(Math.sqrt(Math.max(s, 0)));
}

/** sorted band energies E_n(κ)/E_R (n = 0 … 2P) of the lattice of depth s = V₀/E_R at quasi-momentum κ (k_L) */
export function bandEnergies(s: number, kappa: number, cutoff = planeWaveCutoff(s)): Float64Array {
  const n = 2 * cutoff + 1;
  const d = new Float64Array(n);
  const e = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const g = kappa + 2 * (i - cutoff);
    d[i] = g * g + s / 2;
    e[i] = -s / 4;
  }
  tridiagEigen(d, e, n, null);
  return d.sort();
}

/** Mathieu characteristic values from the band edges: a₀(q) and b₁(q), q = s/4 (A&S ch. 20 notation) */
export function mathieuA0B1(q: number): { a0: number; b1: number } {
  const s = 4 * q;
  return { a0: bandEnergies(s, 0)[0] - s / 2, b1: bandEnergies(s, 1)[0] - s / 2 };
}

/** Mathieu a₁(q) and b₂(q), q > 0: the edges of the second band (A&S §20.3 ordering a₀ < b₁ < a₁ < b₂ < a₂) */
export function mathieuA1B2(q: number): { a1: number; b2: number } {
  const s = 4 * q;
  // second band: from the κ = 1 upper solution (a₁) to the κ = 0 second solution (b₂), q > 0
  return { a1: bandEnergies(s, 1)[1] - s / 2, b2: bandEnergies(s, 0)[1] - s / 2 };
}

export interface LowestBand {
  /** depth s = V₀/E_R */
  depth: number;
  /** band bottom (κ = 0) and top (κ = 1), in E_R */
  bottom: number;
  top: number;
  /** tight-binding tunnelling J = (top − bottom)/4, in E_R */
  tunnelling: number;
  /** effective mass at the band bottom in units of the atomic mass: m* ÷ m = 2 ÷ (∂²E/∂κ²) (E in E_R, κ in k_L) */
  massRatioAtBottom: number;
}

/**
 * Inverse effective mass m/m* of the lowest band at κ = 0 by second-order (k·p) perturbation theory in the
 * plane-wave basis. H(κ) = H(0) + κP + κ² with P = ∂H/∂κ = diag 4n (κ in k_L, E in E_R), so
 *     E₀(κ) = E₀ + κ² [1 + Σ_{j≠0} |⟨0|P|j⟩|² / (E₀ − E_j)] + O(κ⁴)   (⟨0|P|0⟩ = 0 by parity)
 * and E₀(κ) − E₀ = E_R (m/m*) κ² gives m/m* = 1 + Σ_{j≠0} |P_0j|²/(E₀ − E_j) (Ashcroft & Mermin, Solid State
 * Physics, 1976, ch. 8, the k·p expansion of the band energy; Kittel, Quantum Theory of Solids, 1963, ch. 9).
 * Eigenvectors from the same tridiagonal QL; no step size, hence no ε·(2P)²/δ² round-off of a second difference.
 */
export function inverseMassRatioAtBottom(s: number, cutoff = planeWaveCutoff(s)): number {
  const n = 2 * cutoff + 1;
  const d = new Float64Array(n);
  const e = new Float64Array(n);
  const p = new Float64Array(n);
  for (let i = 0; i < n; i++) {
    const g = 2 * (i - cutoff);
    d[i] = g * g + s / 2;
    e[i] = -s / 4;
    p[i] = 2 * g;
  }
  const z = new Float64Array(n * n);
  tridiagEigen(d, e, n, z);
  let ground = 0;
  for (let j = 1; j < n; j++) if (d[j] < d[ground]) ground = j;
  let sum = 0;
  for (let j = 0; j < n; j++) {
    if (j === ground) continue;
    let m = 0;
    for (let i = 0; i < n; i++) m += z[i * n + ground] * p[i] * z[i * n + j];
    sum += (m * m) / (d[ground] - d[j]);
  }
  return 1 + sum;
}

export function lowestBand(s: number): LowestBand {
  const bottom = bandEnergies(s, 0)[0];
  const top = bandEnergies(s, 1)[0];
  // E = E_bottom + E_R (m/m*) κ² near κ = 0
  return { depth: s, bottom, top, tunnelling: (top - bottom) / 4, massRatioAtBottom: 1 / inverseMassRatioAtBottom(s) };
}

/** Zwerger's deep-lattice estimate J/E_R ≈ (4/√π) s^{3/4} e^{−2√s} (an approximation, valid for s ≫ 1) */
export function tunnellingEstimate(s: number): number {
  return (4 / Math.sqrt(Math.PI)) * Math.pow(s, 0.75) * Math.exp(-2 * Math.sqrt(s));
}

/** bisection steps of depthForTunnelling: the bracket (0, MAX_DEPTH_RECOIL] shrinks below 1e-13 E_R */
const DEPTH_BISECTION_STEPS = 64;

/**
 * The depth s = V₀/E_R whose lowest band has tunnelling J (band width / 4, lowestBand) equal to `tunnelling`
 * (in E_R), by bisection on the band width, which falls monotonically with s (A&S §20.2: b₁ − a₀ decreases with
 * q); null when J lies outside [J(MAX_DEPTH_RECOIL), J(0) = ¼] (no sinusoidal lattice has that band).
 */
export function depthForTunnelling(tunnelling: number): number | null {
  const j = (s: number) => lowestBand(s).tunnelling;
  if (!(tunnelling > j(MAX_DEPTH_RECOIL) && tunnelling < j(0))) return null;
  let lo = 0;
  let hi = MAX_DEPTH_RECOIL;
  for (let i = 0; i < DEPTH_BISECTION_STEPS && hi - lo > 1e-13; i++) {
    const mid = 0.5 * (lo + hi);
    if (j(mid) > tunnelling) lo = mid;
    else hi = mid;
  }
  return 0.5 * (lo + hi);
}
