import { describe, expect, it } from 'vitest';
import { boltzmannWeights, uhlmannFidelity } from '../src/quantum/observables.ts';
import { verifySequence } from '../src/quantum/verify.ts';
import { makeGrid } from '../src/spectral/grid.ts';

/** real unit vector e_i of length n, and complex (interleaved) a·e_i + b·e_j */
const real = (n: number, i: number): Float64Array => { const v = new Float64Array(n); v[i] = 1; return v; };
const complex = (n: number, terms: Array<[number, number, number]>): Float64Array => {
  const v = new Float64Array(2 * n);
  for (const [i, re, im] of terms) { v[2 * i] = re; v[2 * i + 1] = im; }
  return v;
};

describe('Uhlmann fidelity of ensembles (Nielsen & Chuang 2000, §9.2.2; squared, Jozsa 1994)', () => {
  it('commuting states: the classical fidelity of their eigenvalues', () => {
    // ρ = 0.7|1⟩⟨1| + 0.3|0⟩⟨0|, σ = 0.7|0⟩⟨0| + 0.3|1⟩⟨1|: F = (Σ √(r_i s_i))² = (2√0.21)² = 0.84 (N&C §9.2.1)
    const f = uhlmannFidelity([complex(4, [[1, 1, 0]]), complex(4, [[0, 1, 0]])], [0.7, 0.3], [real(4, 0), real(4, 1)], [0.7, 0.3]);
    expect(Math.abs(f - 0.84)).toBeLessThan(1e-14);
  });
  it('a pure state against a mixed one: ⟨ψ|σ|ψ⟩', () => {
    // F(|ψ⟩, σ)² = ⟨ψ|σ|ψ⟩ (N&C eq. 9.60): ψ = (|0⟩ + i|1⟩)/√2, σ = 0.7|0⟩⟨0| + 0.3|1⟩⟨1| gives 0.5
    const h = Math.SQRT1_2;
    const f = uhlmannFidelity([complex(4, [[0, h, 0], [1, 0, h]])], [1], [real(4, 0), real(4, 1)], [0.7, 0.3]);
    expect(Math.abs(f - 0.5)).toBeLessThan(1e-14);
    // pure against pure: |⟨v|ψ⟩|², the state fidelity
    expect(Math.abs(uhlmannFidelity([complex(4, [[0, 0.6, 0], [2, 0, 0.8]])], [1], [real(4, 0)], [1]) - 0.36)).toBeLessThan(1e-14);
  });
  it('Boltzmann weights sum to one and fall as exp(−ΔE/T)', () => {
    const w = boltzmannWeights([-1, 0, 1], 0.5);
    expect(Math.abs(w[0] + w[1] + w[2] - 1)).toBeLessThan(1e-15);
    expect(Math.abs(w[1] / w[0] - Math.exp(-2))).toBeLessThan(1e-15); // ΔE/T = 2
  });
  it('verify: the corrected drive carries the Gibbs state to the final Gibbs state, the bare one does not', () => {
    // one soliton u = −2 sech²(ξ − 4τ) (physics.md §4): exact transport keeps every level, so ρ(T) = σ_final
    const g = makeGrid(30, 128);
    const pot = (tau: number, out: Float64Array): void => {
      for (let j = 0; j < g.n; j++) out[j] = -2 / Math.cosh(g.x[j] - 4 * tau) ** 2;
    };
    const res = verifySequence({ grid: g, potential: pot, lambdaEnd: 0.4, ramp: 'sin2', duration: 1, tol: 1e-9, drives: ['cd', 'bare'], temperature: 0.3 });
    const [cd, bare] = res.drives;
    expect(Math.abs(1 - cd.thermal!.uhlmannFidelity!)).toBeLessThan(1e-9);
    expect(bare.thermal!.uhlmannFidelity!).toBeLessThan(0.99);
    expect(bare.thermal!.uhlmannFidelity!).toBeLessThanOrEqual(1 + 1e-12); // a fidelity is at most 1 (N&C §9.2.2)
    // nearly pure ensembles (weights down to 1e-10): the small singular values must not be lost to round-off
    const cold = verifySequence({ grid: g, potential: pot, lambdaEnd: 0.4, ramp: 'sin2', duration: 1, tol: 1e-9, drives: ['cd'], temperature: 0.05 });
    expect(Math.abs(1 - cold.drives[0].thermal!.uhlmannFidelity!)).toBeLessThan(1e-9);
  });
});
