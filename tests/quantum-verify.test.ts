import { describe, expect, it } from 'vitest';
import { makeGrid } from '../src/spectral/grid.ts';
import { verifySequence } from '../src/quantum/verify.ts';

describe('verifySequence on a single soliton (u = −2κ²sech²(κ(ξ − 4κ²τ)), physics.md §4)', () => {
  it('default state count = bound states + 4, traces, thermal and fermion summaries, flipped drive worse than CD', () => {
    const g = makeGrid(30, 128);
    const kappa = 1;
    const pot = (tau: number, out: Float64Array): void => {
      for (let j = 0; j < g.n; j++) out[j] = -2 * kappa * kappa / Math.cosh(kappa * (g.x[j] - 4 * kappa * kappa * tau)) ** 2;
    };
    const res = verifySequence({ grid: g, potential: pot, lambdaEnd: 0.4, ramp: 'sin2', duration: 1, tol: 1e-9, drives: ['cd', 'bare', 'flipped'], temperature: 0.05, fermions: 1, traceSamples: 3 });
    expect(res.boundStates).toBe(1); // one soliton, one bound state at −κ² (physics.md §4)
    expect(res.states.length).toBe(5); // bound + 4 (the documented default of verify.states)
    expect(Math.abs(res.states[0].energyEnd + 1)).toBeLessThan(1e-9); // E = −κ²
    const [cd, bare, flipped] = res.drives;
    for (const f of cd.fidelity) expect(f).toBeGreaterThan(1 - 1e-8);
    expect(flipped.fidelity[0]).toBeLessThan(bare.fidelity[0] + 1e-12); // wrong sign is no better than no correction (physics.md §3)
    expect(cd.trace?.fidelity.length).toBe(3);
    // the trace runs from s = 0 to s = T and ends at the reported final fidelities (same eigenspaces)
    expect(cd.trace?.times).toEqual([0, 0.5, 1]);
    expect(bare.trace?.fidelity[2]).toEqual(bare.fidelity);
    for (const f of bare.trace?.fidelity[0] ?? []) expect(f).toBeGreaterThan(1 - 1e-12); // initial eigenstates
    for (const row of cd.trace?.fidelity ?? []) for (const f of row) expect(f).toBeGreaterThan(1 - 1e-8); // transported at every instant
    // thermal: weights sum to 1 over the computed states (definition), F_th = Σ p_n F_n
    const th = cd.thermal!;
    expect(Math.abs(th.weights.reduce((a, b) => a + b, 0) - 1)).toBeLessThan(1e-14);
    expect(Math.abs(th.ensembleFidelity - th.weights.reduce((a, w, i) => a + w * cd.fidelity[i], 0))).toBeLessThan(1e-15);
    // N = 1 fermion: many-body fidelity equals the single-state fidelity (Löwdin 1955)
    expect(Math.abs((bare.fermions?.manyBodyFidelity ?? -1) - bare.fidelity[0])).toBeLessThan(1e-12);
    // the excess energy of CD-transported states vanishes (exact eigenstates of H(λ_end))
    for (const e of cd.excessEnergy) expect(Math.abs(e)).toBeLessThan(1e-7);
    expect(bare.excessEnergy[0]).toBeGreaterThan(1e-3);
    expect(Math.max(...res.cdStrength!.leakage)).toBeGreaterThan(0); // the correction does couple the moving state out
    expect(res.warnings.some((w) => /fermions/.test(w))).toBe(false); // one fermion, one bound state
  });
  it('the coupling out of the occupied state equals the closed form of a translating soliton', () => {
    // one soliton u = −2 sech²(ξ − 4τ) (physics.md §4): its bound state φ₀ = sech(ξ − 4τ)/√2 translates, so
    // (1 − P)Aφ₀ = (1 − P) i∂_τφ₀ = −4i φ₀′ (adiabatic gauge potential, physics.md §1) and, with ∫φ₀′² = 1/3,
    // |λ̇|‖(1 − P)AP‖ = 4|λ̇|/√3 (closed form from ∫ sech² tanh² dξ = 2/3)
    const g = makeGrid(40, 256);
    const pot = (tau: number, out: Float64Array): void => {
      for (let j = 0; j < g.n; j++) out[j] = -2 / Math.cosh(g.x[j] - 4 * tau) ** 2;
    };
    // the samples carry the time-stepping error (amplitude ≤ √tol), which enters the coupling linearly: tol 1e-12
    const res = verifySequence({ grid: g, potential: pot, lambdaEnd: 0.2, ramp: 'sin2', duration: 1, tol: 1e-12, drives: ['cd'], states: 3, strengthSamples: 5 });
    const c = res.cdStrength!;
    expect(c.time).toHaveLength(5);
    const rate = (s: number): number => 0.2 * (1 - Math.cos(2 * Math.PI * s)); // sin2 ramp λ̇, T = 1 (protocol/ramp.ts)
    for (let i = 0; i < c.time.length; i++) {
      expect(Math.abs(c.leakage[i] - (4 / Math.sqrt(3)) * rate(c.time[i]))).toBeLessThan(1e-6);
      expect(c.window[i]).toBeLessThanOrEqual(c.leakage[i] * (1 + 1e-12)); // one element of a column ≤ the column's norm
    }
  });
  it('says when fermions beyond the bound states sit in box states', () => {
    // one soliton binds exactly one state (physics.md §4), so two of three fermions are in box states
    const g = makeGrid(30, 128);
    const pot = (tau: number, out: Float64Array): void => {
      for (let j = 0; j < g.n; j++) out[j] = -2 / Math.cosh(g.x[j] - 4 * tau) ** 2;
    };
    const res = verifySequence({ grid: g, potential: pot, lambdaEnd: 0.1, ramp: 'sin2', duration: 1, tol: 1e-6, drives: ['cd'], fermions: 3 });
    expect(res.boundStates).toBe(1);
    expect(res.warnings.filter((w) => /3 fermions fill the lowest levels but the trap binds only 1 .*2 of them sit in box states/.test(w))).toHaveLength(1);
  });
});
