import { describe, expect, it } from 'vitest';
import { bandEnergies, inverseMassRatioAtBottom, lowestBand } from '../src/lattice/bands.ts';

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
});
