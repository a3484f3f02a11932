import { describe, expect, it } from 'vitest';
import { makeGrid } from '../src/spectral/grid.ts';
import { cdTerms, emptyTerms, SpectralOperator } from '../src/quantum/hamiltonian.ts';
import { dotIm, dotRe } from '../src/linalg/complex.ts';
import { makeRamp } from '../src/protocol/ramp.ts';
import { complexDeterminant, fermionFidelity, eigenspaceFidelity } from '../src/quantum/observables.ts';
import { makeRng } from '../src/core/rng.ts';
import { Matrix, determinant } from 'ml-matrix';

describe('ramps', () => {
  for (const kind of ['sin2', 'smooth', 'linear'] as const) {
    it(`${kind}: λ(0) = 0, λ(T) = λ_end, λ' equals the central difference of λ (closed forms in ramp.ts)`, () => {
      const r = makeRamp(kind, 2, 0.5);
      expect(r.value(0)).toBe(0);
      expect(Math.abs(r.value(2) - 0.5)).toBeLessThan(1e-15);
      for (const s of [0.3, 1.1, 1.7]) {
        const fd = (r.value(s + 1e-5) - r.value(s - 1e-5)) / 2e-5; // central difference, error O(1e-10) (common practice)
        expect(Math.abs(fd - r.rate(s))).toBeLessThan(1e-8);
      }
      // sin2 and smooth have zero slope at the ends (physics.md §1), linear does not
      expect(r.endSlopeZero).toBe(kind !== 'linear');
    });
  }
});

describe('spectral operators', () => {
  const g = makeGrid(20, 64);
  const op = new SpectralOperator(g);
  it('k³ and k² act on a plane wave e^{ik_m ξ} as k_m³, k_m² (definition of k = −i∂_ξ)', () => {
    const m = 5;
    const km = (2 * Math.PI * m) / g.length;
    const psi = new Float64Array(2 * g.n);
    for (let j = 0; j < g.n; j++) { psi[2 * j] = Math.cos(km * g.x[j]); psi[2 * j + 1] = Math.sin(km * g.x[j]); }
    const out = new Float64Array(2 * g.n);
    const t = emptyTerms();
    t.c2 = 0.7; t.c3 = -1.3;
    op.apply(t, psi, out);
    const lam = 0.7 * km * km - 1.3 * km ** 3;
    for (let j = 0; j < 2 * g.n; j++) expect(Math.abs(out[j] - lam * psi[j])).toBeLessThan(1e-10);
  });
  it('H_CD is Hermitian on the grid: ⟨a|Hb⟩ = conj⟨b|Ha⟩ (Nyquist zeroed for odd k, physics.md §5)', () => {
    const rng = makeRng(7);
    const a = Float64Array.from({ length: 2 * g.n }, () => rng() - 0.5);
    const b = Float64Array.from({ length: 2 * g.n }, () => rng() - 0.5);
    const u = g.x.map((x) => -6 / Math.cosh(x) ** 2 + 0.3 * Math.sin(x));
    const t = cdTerms(u, 0.4, 1);
    const ha = new Float64Array(2 * g.n);
    const hb = new Float64Array(2 * g.n);
    op.apply(t, a, ha);
    op.apply(t, b, hb);
    expect(Math.abs(dotRe(a, hb) - dotRe(b, ha))).toBeLessThan(1e-10);
    expect(Math.abs(dotIm(a, hb) + dotIm(b, ha))).toBeLessThan(1e-10);
  });
});

describe('determinants and fermion fidelity', () => {
  it('complex LU determinant equals ml-matrix for a real matrix and the closed form for a complex 2×2', () => {
    const n = 5;
    const rng = makeRng(3);
    const re = Float64Array.from({ length: n * n }, () => rng() - 0.5);
    const m = new Matrix(n, n);
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) m.set(i, j, re[i * n + j]);
    const [dr, di] = complexDeterminant(re, new Float64Array(n * n), n);
    expect(Math.abs(dr - determinant(m))).toBeLessThan(1e-12); // npm reference: ml-matrix determinant
    expect(Math.abs(di)).toBeLessThan(1e-15);
    // [[1+i, 2],[3i, 4−i]]: det = (1+i)(4−i) − 6i = 5 − 3i (closed form)
    const [r2, i2] = complexDeterminant(Float64Array.from([1, 2, 0, 4]), Float64Array.from([1, 0, 3, -1]), 2);
    expect(Math.abs(r2 - 5)).toBeLessThan(1e-14);
    expect(Math.abs(i2 + 3)).toBeLessThan(1e-14);
  });
  it('a Slater determinant of exactly transported states (eigenvectors times phases) has fidelity 1; for one particle it equals the single-state fidelity (Löwdin 1955)', () => {
    const n = 16;
    const rng = makeRng(11);
    // orthonormal real "final levels": columns of a random orthogonal matrix via Gram–Schmidt
    const vecs: Float64Array[] = [];
    for (let i = 0; i < 4; i++) {
      const v = Float64Array.from({ length: n }, () => rng() - 0.5);
      for (const q of vecs) { let s = 0; for (let j = 0; j < n; j++) s += q[j] * v[j]; for (let j = 0; j < n; j++) v[j] -= s * q[j]; }
      const nv = Math.hypot(...v);
      for (let j = 0; j < n; j++) v[j] /= nv;
      vecs.push(v);
    }
    const energies = [-2, -1, 0.5, 0.9];
    const evolved = vecs.map((v, i) => { const p = new Float64Array(2 * n); for (let j = 0; j < n; j++) { p[2 * j] = Math.cos(i + 0.3) * v[j]; p[2 * j + 1] = Math.sin(i + 0.3) * v[j]; } return p; });
    expect(Math.abs(fermionFidelity(evolved, vecs, energies, 3, 1e-9).manyBodyFidelity - 1)).toBeLessThan(1e-13); // |det of a diagonal phase matrix|² = 1
    // perturb the first state: N = 1 many-body fidelity = single-state fidelity (definition)
    const p = Float64Array.from(evolved[0]);
    for (let j = 0; j < n; j++) p[2 * j] += 0.1 * vecs[1][j];
    const nrm = Math.hypot(...p);
    for (let j = 0; j < 2 * n; j++) p[j] /= nrm;
    const single = eigenspaceFidelity(p, vecs, [0]);
    expect(Math.abs(fermionFidelity([p], vecs, energies, 1, 1e-9).manyBodyFidelity - single)).toBeLessThan(1e-14);
    expect(single).toBeLessThan(0.999);
  });
});
