import { describe, expect, it } from 'vitest';
import { makeGrid } from '../src/spectral/grid.ts';
import { boundEnergies, boxThreshold } from '../src/quantum/bound.ts';
import { fitReflectionless } from '../src/flow/reflectionless.ts';
import { nSolitonPotential } from '../src/flow/solitons.ts';
import { integrateFlow, naturalFlowEquation } from '../src/flow/kdv.ts';
import type { Grid } from '../src/spectral/grid.ts';
import { resample } from '../src/spectral/ops.ts';

function kappasOf(grid: Grid, u: Float64Array): number[] {
  return boundEnergies(grid, u, boxThreshold(grid.length)).energies.map((e) => Math.sqrt(-e));
}

function maxAbsDiff(a: ArrayLike<number>, b: ArrayLike<number>): number {
  let m = 0;
  for (let j = 0; j < a.length; j++) m = Math.max(m, Math.abs(a[j] - b[j]));
  return m;
}

describe('reflectionless fit (src/flow/reflectionless.ts)', () => {
  it('−N(N+1) sech²ξ, N = 1 … 4, is its own fit with κ = 1 … N and sheds nothing', () => {
    // Pöschl–Teller (Landau & Lifshitz, Quantum Mechanics, §23); κ = 1 … N (Gardner, Greene, Kruskal & Miura,
    // Phys. Rev. Lett. 19, 1095, 1967); reflectionless, so radiation 0 (Kay & Moses, J. Appl. Phys. 27, 1503, 1956)
    const grid = makeGrid(30, 256);
    for (let N = 1; N <= 4; N++) {
      const u = grid.x.map((x) => -N * (N + 1) / Math.cosh(x) ** 2);
      const kappas = kappasOf(grid, u);
      expect(kappas.length).toBe(N);
      const fit = fitReflectionless(grid, u, kappas);
      expect(fit.distance).toBeLessThan(1e-8);
      fit.solitons.forEach((s, i) => expect(Math.abs(s.kappa - (N - i))).toBeLessThan(1e-9));
      // ∫u² = N²(N+1)²·4/3 = (16/3)Σn³ for this potential (closed form), so the radiation vanishes
      expect(Math.abs(fit.radiation)).toBeLessThan(1e-8 * (N * (N + 1)) ** 2);
    }
  });

  it('N = 2: the fitted centres are the norming constants of the Pöschl–Teller eigenfunctions', () => {
    // ψ₂ = (√3/2) sech²ξ ~ 2√3 e^{−2ξ} and ψ₁ = √(3/2) tanhξ sechξ ~ √6 e^{−ξ}: c² = 12 and 6; with c² = 2κe^{2κx}
    // (flow/solitons.ts) x₂ = ln 3 / 4 and x₁ = ln 3 / 2 (hand calculation from Landau & Lifshitz §23 eigenfunctions)
    const grid = makeGrid(30, 256);
    const u = grid.x.map((x) => -6 / Math.cosh(x) ** 2);
    const fit = fitReflectionless(grid, u, kappasOf(grid, u));
    expect(Math.abs(fit.solitons[0].center - Math.log(3) / 4)).toBeLessThan(1e-8);
    expect(Math.abs(fit.solitons[1].center - Math.log(3) / 2)).toBeLessThan(1e-8);
  });

  it('a Gaussian well: the fit keeps its bound states and flows as the Kay–Moses N-soliton (no radiation)', () => {
    // box wide enough that the tails e^{−2κ_min|ξ|} of the fit are below 1e-11 at its edge (κ_min ≈ 0.45)
    const grid = makeGrid(60, 512);
    const u = grid.x.map((x) => -6 * Math.exp(-0.5 * x * x));
    const kappas = kappasOf(grid, u);
    expect(kappas.length).toBe(3);
    const fit = fitReflectionless(grid, u, kappas);
    expect(fit.distance).toBeGreaterThan(1e-3); // a Gaussian is not reflectionless (common practice)
    expect(fit.radiation).toBeGreaterThan(0);
    const again = kappasOf(grid, fit.potential);
    expect(again.length).toBe(3);
    again.forEach((k, i) => expect(Math.abs(k * k - kappas[i] * kappas[i])).toBeLessThan(1e-8)); // isospectral by construction
    // the flow on a grid whose 2/3-dealiased band resolves the κ ≈ 2.1 soliton to 1e-11 (spectrum ~ e^{−πk/2κ})
    const fine = makeGrid(60, 1024);
    const start = nSolitonPotential(fit.solitons, fine.x, 0);
    expect(maxAbsDiff(resample(fit.potential, 1024), start)).toBeLessThan(1e-9);
    const tau = 0.2;
    const run = integrateFlow(fine, naturalFlowEquation('quantum'), start, { tolerance: 1e-11, frames: [tau] });
    const exact = nSolitonPotential(fit.solitons, fine.x, tau); // Kay & Moses (1956)
    expect(maxAbsDiff(run.frames[run.frames.length - 1], exact)).toBeLessThan(1e-7);
  });
});
