/**
 * Exact solutions of the KdV equation u_τ = 6uu_ξ − u_ξξξ (natural units, physics.md §3–§4).
 *
 * - One soliton: u = −2κ² sech²(κ(ξ − 4κ²τ − ξ₀)).
 * - N solitons (reflectionless potentials): u = −2 ∂²_ξ ln det(I + A),
 *   A_ij = c_i c_j/(κ_i + κ_j) exp(−(κ_i + κ_j)ξ + 4(κ_i³ + κ_j³)τ)
 *   (Kay & Moses, J. Appl. Phys. 27, 1503, 1956; Hirota, Phys. Rev. Lett. 27, 1192, 1971).
 *   We write c_i² = 2κ_i e^{2κ_i x_i}: x_i is where soliton i would sit at τ = 0 if it were alone.
 * - The closed-form two-soliton from u(ξ, 0) = −6 sech²ξ (Drazin & Johnson, Solitons: an Introduction, 1989).
 */
import { solveDenseInPlace } from '../linalg/dense-solve.ts';
import type { FlowEquation } from './kdv.ts';

export function oneSoliton(kappa: number, center: number, xi: number, tau: number): number {
  const s = 1 / Math.cosh(kappa * (xi - 4 * kappa * kappa * tau - center));
  return -2 * kappa * kappa * s * s;
}

/** −12[3 + 4cosh(2ξ − 8τ) + cosh(4ξ − 64τ)] / [3cosh(ξ − 28τ) + cosh(3ξ − 36τ)]² (Drazin & Johnson 1989) */
export function twoSolitonFromSech2(xi: number, tau: number): number {
  // divide numerator and denominator by e^{|ξ|·4}-sized factors implicitly by using cosh ratios in log form
  const num = 3 + 4 * Math.cosh(2 * xi - 8 * tau) + Math.cosh(4 * xi - 64 * tau);
  const den = 3 * Math.cosh(xi - 28 * tau) + Math.cosh(3 * xi - 36 * tau);
  return (-12 * num) / (den * den);
}

export interface SolitonSpec {
  /** inverse width κ (natural units): depth 2κ², speed 4κ², bound state at −κ² */
  kappa: number;
  /** position the soliton would have at τ = 0 if alone */
  center: number;
}

/** a KdV soliton in natural units: inverse width κ, depth 2κ² and speed 4κ² (ℓ per unit τ) */
export interface SolitonShape {
  kappa: number;
  depth: number;
  speed: number;
}

/**
 * The soliton a bound state of H(0) = k² + u₀ becomes (physics.md §4; Gardner, Greene, Kruskal & Miura, Phys. Rev.
 * Lett. 19, 1095, 1967): the eigenvalue E = −κ² is conserved by the flow and emerges as the soliton
 * u = −2κ² sech²(κ(ξ − 4κ²τ − ξ₀)), of depth 2κ² moving at speed 4κ² (natural units).
 */
export function solitonFromBoundState(energy: number): SolitonShape {
  const kappa = Math.sqrt(-energy);
  return { kappa, depth: 2 * kappa * kappa, speed: 4 * kappa * kappa };
}

/**
 * Speed of the frame the natural-units quantum flow (u_τ = 6uu_ξ − u_ξξξ − c u_ξ) is integrated in (kdv.ts
 * FlowOptions.frameSpeed): that of its fastest soliton, 4κ₀² + c for the lowest bound state E₀ = −κ₀² of the
 * starting potential (solitonFromBoundState); 0 (the lab frame) when nothing is bound or the flow is another one.
 */
export function solitonFrameSpeed(eq: FlowEquation, energies: readonly number[]): number {
  if (eq.alpha !== -6 || eq.beta !== 1 || energies.length === 0) return 0;
  const lowest = Math.min(...energies);
  return lowest < 0 ? solitonFromBoundState(lowest).speed + eq.drift : 0;
}

/**
 * Kay–Moses N-soliton potential at one τ on the given points. ln det(I + A) is differentiated analytically:
 * ∂² ln det M = tr(M⁻¹M″) − tr(M⁻¹M′M⁻¹M′). To avoid overflow, M = I + DBD (D = diag d_i,
 * d_i = c_i e^{−κ_i ξ + 4κ_i³τ}, B_ij = 1/(κ_i + κ_j)) is rescaled as S(S⁻² + GBG)S with s_i = max(d_i, 1),
 * g_i = d_i/s_i; ln det S is piecewise linear in ξ, so its second derivative vanishes.
 */
export function nSolitonPotential(solitons: readonly SolitonSpec[], x: ArrayLike<number>, tau: number): Float64Array {
  const n = solitons.length;
  const out = new Float64Array(x.length);
  const kap = solitons.map((s) => s.kappa);
  const logc = solitons.map((s) => 0.5 * Math.log(2 * s.kappa) + s.kappa * s.center);
  const M = new Float64Array(n * n); // M, overwritten by its triangular factor
  const X1 = new Float64Array(n * n); // M′, then M⁻¹M′
  const X2 = new Float64Array(n * n); // M″, then M⁻¹M″
  const g = new Float64Array(n);
  const dg = new Float64Array(n); // g'/g
  const sd = new Float64Array(n); // s⁻² diagonal
  const dsd = new Float64Array(n); // (s⁻²)'/s⁻²
  for (let p = 0; p < x.length; p++) {
    const xi = x[p];
    for (let i = 0; i < n; i++) {
      const logd = logc[i] - kap[i] * xi + 4 * kap[i] ** 3 * tau;
      if (logd > 0) {
        g[i] = 1;
        dg[i] = 0;
        sd[i] = Math.exp(-2 * logd);
        dsd[i] = 2 * kap[i];
      } else {
        g[i] = Math.exp(logd);
        dg[i] = -kap[i];
        sd[i] = 1;
        dsd[i] = 0;
      }
    }
    for (let i = 0; i < n; i++) {
      for (let j = 0; j < n; j++) {
        const b = (g[i] * g[j]) / (kap[i] + kap[j]);
        const r = dg[i] + dg[j];
        let m0 = b, m1 = r * b, m2 = r * r * b;
        if (i === j) {
          m0 += sd[i];
          m1 += dsd[i] * sd[i];
          m2 += dsd[i] * dsd[i] * sd[i];
        }
        M[i * n + j] = m0;
        X1[i * n + j] = m1;
        X2[i * n + j] = m2;
      }
    }
    // M X = [M′ | M″] (n is small: dense Gaussian elimination with partial pivoting)
    solveDenseInPlace(M, n, [X1, X2], n);
    // tr(M⁻¹M″) − tr((M⁻¹M′)²)
    let tr2 = 0;
    let tr11 = 0;
    for (let i = 0; i < n; i++) {
      tr2 += X2[i * n + i];
      for (let k = 0; k < n; k++) tr11 += X1[i * n + k] * X1[k * n + i];
    }
    out[p] = -2 * (tr2 - tr11);
  }
  return out;
}

/**
 * Asymptotic straight-line trajectories ξ = offset + 4κ²τ of each soliton of a Kay–Moses solution, for τ → −∞
 * and τ → +∞. Expanding det(I + A) near one soliton, every other soliton lying to its RIGHT multiplies its
 * norming constant by ((κ_i − κ_j)/(κ_i + κ_j))², i.e. moves it back by (1/κ_i) ln((κ_i+κ_j)/|κ_i−κ_j|)
 * (pairwise-additive phase shifts, Drazin & Johnson 1989, §5; Hirota 1971). Faster solitons are on the right
 * at τ → +∞, slower ones at τ → −∞.
 */
export function solitonAsymptotes(solitons: readonly SolitonSpec[]): { kappa: number; speed: number; offsetMinus: number; offsetPlus: number }[] {
  return solitons.map((s, i) => {
    let minus = 0;
    let plus = 0;
    solitons.forEach((o, j) => {
      if (j === i) return;
      const l = Math.log((s.kappa + o.kappa) / Math.abs(s.kappa - o.kappa)) / s.kappa;
      if (o.kappa > s.kappa) plus -= l;
      else minus -= l;
    });
    return { kappa: s.kappa, speed: 4 * s.kappa * s.kappa, offsetMinus: s.center + minus, offsetPlus: s.center + plus };
  });
}
