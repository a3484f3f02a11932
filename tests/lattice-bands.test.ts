import { describe, expect, it } from 'vitest';
import { bandEnergies, inverseMassRatioAtBottom, lowestBand } from '../src/lattice/bands.ts';
import { ATOMIC_MASS_CONSTANT, PLANCK_H } from '../src/units/constants.ts';
import { speciesMass } from '../src/units/species.ts';

/**
 * Mathieu characteristic values from the three-term recurrences of the Fourier coefficients written as continued
 * fractions (Abramowitz & Stegun, Handbook of Mathematical Functions, 1964, eq. 20.2.5–20.2.21): for ce₀,
 * a − q w₁ = 0 with w₁ = 2q/(a − 4 − q w₂), w_r = q/(a − 4r² − q w_{r+1}); for se₁, a − 1 + q − q w₁ = 0 with
 * w_r = q/(a − (2r+1)² − q w_{r+1}). Roots by bisection in [−2q − 1, 1] (a₀ ≤ 0 and b₁ < 1 for q > 0; every
 * denominator stays negative there for the q used below).
 * Independent of the plane-wave matrix and its eigensolver.
 */
function mathieuByContinuedFraction(q: number): { a0: number; b1: number } {
  const terms = 40;
  const tail = (a: number, r0: number, square: (r: number) => number) => {
    let w = 0;
    for (let r = terms; r >= r0; r--) w = q / (a - square(r) - q * w);
    return w;
  };
  const fa0 = (a: number) => a - q * ((2 * q) / (a - 4 - q * tail(a, 2, (r) => 4 * r * r)));
  const fb1 = (a: number) => a - 1 + q - q * tail(a, 1, (r) => (2 * r + 1) ** 2);
  const root = (f: (a: number) => number) => {
    let [lo, hi] = [-2 * q - 1, 1];
    for (let i = 0; i < 200 && hi - lo > 1e-15; i++) {
      const mid = 0.5 * (lo + hi);
      if (f(mid) < 0) lo = mid;
      else hi = mid;
    }
    return 0.5 * (lo + hi);
  };
  return { a0: root(fa0), b1: root(fb1) };
}

/** Richardson-extrapolated curvature (E(δ) − E(0))/δ² from δ = 0.04, 0.02, 0.01 (error O(δ⁶); Richardson 1927) */
function richardsonCurvature(s: number): number {
  const e0 = bandEnergies(s, 0)[0];
  const c = (dl: number) => (bandEnergies(s, dl)[0] - e0) / (dl * dl);
  const [c1, c2, c3] = [c(0.04), c(0.02), c(0.01)];
  const r1 = (4 * c2 - c1) / 3;
  const r2 = (4 * c3 - c2) / 3;
  return (16 * r2 - r1) / 15;
}

describe('band curvature by k·p perturbation theory (src/lattice/bands.ts)', () => {
  it('free particle: m/m* = 1 at s = 0 (E = κ², common practice)', () => {
    expect(Math.abs(inverseMassRatioAtBottom(0) - 1)).toBeLessThan(1e-14);
  });

  it('shallow lattices: equals Richardson-extrapolated second differences (large steps, no round-off) to 1e-8', () => {
    for (const s of [1, 3, 6]) {
      const kp = inverseMassRatioAtBottom(s);
      expect(Math.abs(kp / richardsonCurvature(s) - 1)).toBeLessThan(1e-8); // Richardson, Phil. Trans. R. Soc. A 226 (1927)
    }
  });

  it('deep lattice: the tight-binding band −2J cos πκ gives m/m* = π²J (J = width/4) up to next-neighbour terms', () => {
    // E(κ) = −2J₁cos πκ − 2J₂cos 2πκ: width 4J₁, curvature 2π²(J₁ + 4J₂); J₂/J₁ falls like e^{−2√s}
    // (Zwerger, J. Opt. B 5, S9, 2003, §2; Ashcroft & Mermin 1976, ch. 10 tight binding)
    for (const [s, tol] of [[60, 2e-5], [100, 2e-6]] as const) {
      const b = lowestBand(s);
      expect(Math.abs(1 / b.massRatioAtBottom / (Math.PI ** 2 * b.tunnelling) - 1)).toBeLessThan(tol);
    }
  });

  it('is stable with the plane-wave cutoff where the second difference with δ = 1e-4 loses digits (s = 40)', () => {
    const a = inverseMassRatioAtBottom(40);
    const b = inverseMassRatioAtBottom(40, 40);
    expect(Math.abs(a / b - 1)).toBeLessThan(1e-9); // basis convergence (common practice)
    const b40 = lowestBand(40);
    // tight-binding value from the band width (above), to the size of the next-neighbour term at s = 40 (~2e-4)
    expect(Math.abs(a / (Math.PI ** 2 * b40.tunnelling) - 1)).toBeLessThan(3e-4);
  });

  it('the band J of ⁸⁷Rb at 1064 nm, s = 6, is (b₁ − a₀)/4 · E_R from the Mathieu continued fractions: ≈ 103.19 h·Hz', () => {
    // the continued fractions against A&S Table 20.1 (from memory): a₀(5) = −5.80004602, b₁(5) = −5.79008060
    const t = mathieuByContinuedFraction(5);
    expect(Math.abs(t.a0 + 5.80004602)).toBeLessThan(1e-7);
    expect(Math.abs(t.b1 + 5.7900806)).toBeLessThan(1e-7);
    const q = 0.05;
    const cf = mathieuByContinuedFraction(q);
    expect(Math.abs(cf.a0 - (-q * q / 2 + (7 * q ** 4) / 128))).toBeLessThan(1e-9); // A&S eq. 20.2.25 (from memory)
    expect(Math.abs(cf.b1 - (1 - q - q * q / 8 + q ** 3 / 64))).toBeLessThan(1e-7);
    const s = 6;
    const { a0, b1 } = mathieuByContinuedFraction(s / 4);
    // E_R/h = h/(2mλ²) with k_L = 2π/λ (CODATA 2018 h; AME2020 ⁸⁷Rb mass, physics.md §3)
    const recoilHz = PLANCK_H / (2 * speciesMass('Rb87') * ATOMIC_MASS_CONSTANT * 1064e-9 ** 2);
    const jHz = ((b1 - a0) / 4) * recoilHz;
    expect(Math.abs(lowestBand(s).tunnelling * recoilHz - jHz)).toBeLessThan(1e-9 * jHz);
    expect(Math.abs(jHz - 103.19)).toBeLessThan(0.01);
  });
});
