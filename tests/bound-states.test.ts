import { describe, expect, it } from 'vitest';
import { makeGrid } from '../src/spectral/grid.ts';
import { boundEnergies, boxThreshold } from '../src/quantum/bound.ts';
import { lowestEigenpairs } from '../src/quantum/eigen.ts';
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { cyclicEigenvalues } from '../src/linalg/cyclic-sturm.ts';
import { ATOMIC_MASS_CONSTANT, BOLTZMANN_K, HBAR } from '../src/units/constants.ts';
import { speciesMass } from '../src/units/species.ts';

describe('bound-state energies converged in the grid size (src/quantum/bound.ts)', () => {
  it('−N(N+1) sech²ξ has E_n = −(N − n)², N = 1 … 4 (Pöschl–Teller; Landau & Lifshitz, Quantum Mechanics, §23)', () => {
    const grid = makeGrid(40, 1024);
    for (let N = 1; N <= 4; N++) {
      const u = grid.x.map((x) => -N * (N + 1) / Math.cosh(x) ** 2);
      const r = boundEnergies(grid, u, boxThreshold(grid.length));
      expect(r.energies.length).toBe(N);
      for (let n = 0; n < N; n++) expect(Math.abs(r.energies[n] + (N - n) ** 2)).toBeLessThan(1e-9); // closed form −(N−n)²
      expect(r.change).toBeLessThanOrEqual(r.tolerance);
    }
  });

  it('a ⁴⁰K Gaussian well (ℓ = 1 µm, 0.15 µK, σ = 2 µm, L = 100, 2048 points) agrees with a spectral Lanczos solve', () => {
    // natural units of physics.md §3: E₀ = ħ²/(2mℓ²) with CODATA 2018 ħ, k_B and the AME2020 ⁴⁰K mass (units/)
    const e0 = (HBAR * HBAR) / (2 * speciesMass('K40') * ATOMIC_MASS_CONSTANT * 1e-12);
    const depth = (0.15e-6 * BOLTZMANN_K) / e0;
    expect(depth).toBeGreaterThan(24.5); // ≈ 24.7 E₀ (hand calculation from the constants above; common practice)
    expect(depth).toBeLessThan(25);
    const grid = makeGrid(100, 2048);
    const u = grid.x.map((x) => -depth * Math.exp(-0.5 * (x / 2) ** 2));
    const r = boundEnergies(grid, u, boxThreshold(grid.length));
    expect(r.change).toBeLessThanOrEqual(r.tolerance);
    // independent reference: Fourier collocation (not finite differences) diagonalised by Chebyshev-filtered
    // Lanczos (quantum/eigen.ts) on 512 points of the same box, where the Gaussian and its states are resolved
    const coarse = makeGrid(100, 512);
    const uc = coarse.x.map((x) => -depth * Math.exp(-0.5 * (x / 2) ** 2));
    const ref = lowestEigenpairs(coarse, uc, r.energies.length + 1, { residualTol: 1e-9 });
    expect(r.energies.length).toBe(11);
    expect(ref.energies.filter((e) => e < boxThreshold(grid.length)).length).toBe(11);
    for (let i = 0; i < r.energies.length; i++) expect(Math.abs(r.energies[i] - ref.energies[i])).toBeLessThan(1e-6 * depth);
  });
});

describe('cyclic tridiagonal bisection with narrowed brackets (src/linalg/cyclic-sturm.ts)', () => {
  // the cyclic (circulant) tridiagonal with diagonal a and couplings b has eigenvalues a + 2b cos(2πk/n)
  // (Gray, Toeplitz and Circulant Matrices: A Review, 2006, §3.1)
  const n = 16;
  const d = new Float64Array(n).fill(2);
  const e = new Float64Array(n).fill(-1);
  const exact = Array.from({ length: n }, (_, k) => 2 - 2 * Math.cos((2 * Math.PI * k) / n)).sort((x, y) => x - y).slice(0, 4);
  it('a bracket that holds the level narrows the search, one that misses it falls back to the full range: both give a + 2b cos(2πk/n)', () => {
    const good = cyclicEigenvalues(d, e, 4, -1, 5, { centre: exact.map((x) => x + 1e-3), halfWidth: [1e-2, 1e-2, 1e-2, 1e-2] });
    const wrong = cyclicEigenvalues(d, e, 4, -1, 5, { centre: [3, 3, 3, 3], halfWidth: [0.1, 0.1, 0.1, 0.1] });
    // 1e-8: the counts lose digits at the degenerate pair k = ±1 (measured 5e-10 with or without brackets)
    for (let k = 0; k < 4; k++) {
      expect(Math.abs(good[k] - exact[k])).toBeLessThan(1e-8);
      expect(Math.abs(wrong[k] - exact[k])).toBeLessThan(1e-8);
    }
  });
  it('levels isolated by the counts and refined by Newton agree with a dense eigensolver (ml-matrix), with and without brackets', () => {
    // a cyclic tridiagonal with a deep well on the diagonal and uneven couplings: no degenerate levels; reference:
    // ml-matrix's EigenvalueDecomposition of the same dense symmetric matrix (an npm reference library)
    const m = 64;
    const dd = Float64Array.from({ length: m }, (_, j) => 2 - 6 / Math.cosh(0.25 * (j - 20)) ** 2 + 0.1 * Math.sin(j));
    const ee = Float64Array.from({ length: m }, (_, j) => -1 - 0.2 * Math.cos(0.7 * j));
    const dense = Matrix.zeros(m, m);
    for (let j = 0; j < m; j++) {
      dense.set(j, j, dd[j]);
      dense.set(j, (j + 1) % m, ee[j]);
      dense.set((j + 1) % m, j, ee[j]);
    }
    const ref = [...new EigenvalueDecomposition(dense, { assumeSymmetric: true }).realEigenvalues].sort((x, y) => x - y).slice(0, 6);
    const plain = cyclicEigenvalues(dd, ee, 6, -10, 10);
    const bracketed = cyclicEigenvalues(dd, ee, 6, -10, 10, { centre: ref.map((x) => x + 1e-4), halfWidth: ref.map(() => 1e-3) });
    // 1e-12: a few ε times the matrix scale (common practice)
    for (let k = 0; k < 6; k++) {
      expect(Math.abs(plain[k] - ref[k])).toBeLessThan(1e-12);
      expect(Math.abs(bracketed[k] - ref[k])).toBeLessThan(1e-12);
    }
  });
});
