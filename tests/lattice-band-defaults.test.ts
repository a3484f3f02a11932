import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { RB_LATTICE } from './fixtures.ts';
import { describe, expect, it } from 'vitest';
import { parseLatticeConfig } from '../src/io/config-lattice.ts';
import { latticeParameters } from '../src/jobs/lattice.ts';
import { depthForTunnelling, inverseMassRatioAtBottom, lowestBand, MAX_DEPTH_RECOIL } from '../src/lattice/bands.ts';
import { ATOMIC_MASS_CONSTANT, PLANCK_H } from '../src/units/constants.ts';
import { speciesMass } from '../src/units/species.ts';

/**
 * Lowest band energy E(κ)/E_R of V₀ sin²(k_L x) from a dense eigensolver (ml-matrix, an npm reference library
 * independent of the tool's tridiagonal QL): the plane-wave matrix H_nn = (κ + 2n)² + s/2, H_n,n±1 = −s/4
 * (A&S eq. 20.1.1 with a = E/E_R − s/2, q = −s/4), n = −16 … 16.
 */
function denseLowestBand(s: number, kappa: number): number {
  const P = 16;
  const n = 2 * P + 1;
  const H = Matrix.zeros(n, n);
  for (let i = 0; i < n; i++) {
    const g = kappa + 2 * (i - P);
    H.set(i, i, g * g + s / 2);
    if (i + 1 < n) {
      H.set(i, i + 1, -s / 4);
      H.set(i + 1, i, -s / 4);
    }
  }
  return Math.min(...new EigenvalueDecomposition(H, { assumeSymmetric: true }).realEigenvalues);
}

/**
 * m/m* = ½E″(0) from the cosine series of the band. E(κ) is even, 2-periodic and analytic (an isolated band), so
 * E(κ) = Σ e_n cos nπκ with exponentially decaying e_n (the hoppings of the Wannier functions; Kohn, Phys. Rev.
 * 115, 809, 1959), obtained from 17 samples on [0, 1] by the trapezoidal rule, which converges exponentially for
 * periodic analytic functions (Trefethen & Weideman, SIAM Review 56, 385, 2014). E″(0) = −π² Σ n² e_n; the sum
 * stops at n = 6, where e_n is below the samples' round-off (~1e-13 E_R) for s ≥ 20.
 */
function massRatioFromBandSeries(s: number): number {
  const N = 16;
  const E = Array.from({ length: N + 1 }, (_, j) => denseLowestBand(s, j / N));
  let curvature = 0;
  for (let n = 1; n <= 6; n++) {
    let c = 0;
    for (let j = 0; j <= N; j++) c += (j === 0 || j === N ? 0.5 : 1) * E[j] * Math.cos((n * Math.PI * j) / N);
    curvature -= Math.PI * Math.PI * n * n * ((2 / N) * c);
  }
  return curvature / 2;
}

const rbText = RB_LATTICE;

/** E_R/h = h/(2mλ²) of light of wavelength λ (k_L = 2π/λ; CODATA 2018 h, AME2020 mass, physics.md §3) */
const recoilHz = (wavelengthM: number) => PLANCK_H / (2 * speciesMass('Rb87') * ATOMIC_MASS_CONSTANT * wavelengthM ** 2);

describe('band-curvature mass (src/lattice/bands.ts, jobs/lattice.ts band_mass_ratio)', () => {
  it('k·p curvature equals the cosine series of an independent dense band to 1e-6 at s = 20 and s = 40, and the job reports it', () => {
    for (const s of [20, 40]) {
      const reference = massRatioFromBandSeries(s);
      expect(Math.abs(inverseMassRatioAtBottom(s) / reference - 1)).toBeLessThan(1e-6);
      // lattice.json's lattice.depth.band_mass_ratio = m*/m at the band bottom (latticeParameters → depthTunnelling)
      const p = latticeParameters(parseLatticeConfig(rbText(`{ wavelength_nm: 1064, depth_recoil: ${s} }`), 'x.yaml', '.'));
      expect(Math.abs(p.depth!.band_mass_ratio * reference - 1)).toBeLessThan(1e-6);
    }
    // a second difference with step 1e-4 of the same dense band is off by far more than 1e-6 at s = 40
    // (round-off ε‖H‖/δ² ≈ 1e-13/1e-8 against m/m* ≈ 1e-3)
    const e0 = denseLowestBand(40, 0);
    const crude = (denseLowestBand(40, 1e-4) - e0) / 1e-8;
    expect(Math.abs(crude / massRatioFromBandSeries(40) - 1)).toBeGreaterThan(1e-6);
  });
});

describe('default tunnelling with lattice.depth_recoil (jobs/lattice.ts)', () => {
  it('is the band value: ⁸⁷Rb at 1064 nm, s = 6 gives J = 103.19 h·Hz; the deep-lattice estimate 130.78 h·Hz is kept beside it', () => {
    const p = latticeParameters(parseLatticeConfig(rbText('{ wavelength_nm: 1064, depth_recoil: 6 }'), 'x.yaml', '.'));
    expect(p.tunnellingSource).toBe('band');
    // physics.md §6: band −2J cos kd has width 4J; the width is E(κ = 1) − E(0) of the dense band above
    const er = recoilHz(1064e-9);
    const bandJ = ((denseLowestBand(6, 1) - denseLowestBand(6, 0)) / 4) * er;
    expect(Math.abs(p.tunnelling / bandJ - 1)).toBeLessThan(1e-9);
    expect(Math.abs(p.tunnelling - 103.19)).toBeLessThan(0.01); // (b₁ − a₀)/4 at q = 1.5, A&S ch. 20 (tests/lattice-bands.test.ts)
    // Zwerger, J. Opt. B 5, S9 (2003), eq. (8): J = (4/√π) s^{3/4} e^{−2√s} E_R
    const zwerger = (4 / Math.sqrt(Math.PI)) * 6 ** 0.75 * Math.exp(-2 * Math.sqrt(6)) * er;
    expect(Math.abs(p.depth!.estimate_hz / zwerger - 1)).toBeLessThan(1e-12);
    expect(Math.abs(p.depth!.estimate_hz - 130.78)).toBeLessThan(0.01);
    expect(p.warnings).toHaveLength(0);
    // tunnelling_source: estimate still selects the estimate, with the warning naming both values
    const e = latticeParameters(parseLatticeConfig(rbText('{ wavelength_nm: 1064, depth_recoil: 6, tunnelling_source: estimate }'), 'x.yaml', '.'));
    expect(e.tunnellingSource).toBe('estimate');
    expect(e.tunnelling).toBeCloseTo(zwerger, 9);
    expect(e.warnings.join(' ')).toMatch(/130\.8 h·Hz .*26\.7 % .*103\.2 h·Hz/);
  });

  it('depthForTunnelling inverts the band J(s) (used by the lattice-depth choice)', () => {
    for (const s of [5, 12.5, 40]) {
      const j = (denseLowestBand(s, 1) - denseLowestBand(s, 0)) / 4; // dense band width / 4, as above
      expect(Math.abs(depthForTunnelling(j)! - s)).toBeLessThan(1e-7 * s);
    }
    expect(depthForTunnelling(0.3)).toBeNull(); // J(0) = ¼ E_R: the free band (A&S 20.2.25 at q = 0: b₁ − a₀ = 1)
    expect(depthForTunnelling(lowestBand(MAX_DEPTH_RECOIL).tunnelling / 2)).toBeNull();
  });
});
