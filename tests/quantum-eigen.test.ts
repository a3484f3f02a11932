import { describe, expect, it } from 'vitest';
import { makeGrid } from '../src/spectral/grid.ts';
import { groupDegenerate, lowestEigenpairs } from '../src/quantum/eigen.ts';
import { tridiagEigen } from '../src/linalg/tridiag.ts';
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';

describe('tridiagonal QL', () => {
  it('matches ml-matrix on a random symmetric tridiagonal matrix', () => {
    const n = 12;
    const d = Float64Array.from({ length: n }, (_, i) => Math.sin(i + 1));
    const e = Float64Array.from({ length: n }, (_, i) => (i < n - 1 ? Math.cos(2 * i + 0.5) : 0));
    const a = new Matrix(n, n);
    for (let i = 0; i < n; i++) { a.set(i, i, d[i]); if (i < n - 1) { a.set(i, i + 1, e[i]); a.set(i + 1, i, e[i]); } }
    const ref = new EigenvalueDecomposition(a, { assumeSymmetric: true }).realEigenvalues.sort((x, y) => x - y); // npm reference ml-matrix
    const z = new Float64Array(n * n);
    tridiagEigen(d, e, n, z);
    const got = Array.from(d).sort((x, y) => x - y);
    for (let i = 0; i < n; i++) expect(Math.abs(got[i] - ref[i])).toBeLessThan(1e-12);
  });
});

describe('lowest eigenpairs', () => {
  it('harmonic oscillator u = ω²ξ²/4 gives E_n = ω(n + ½) (Landau & Lifshitz, QM §23; k² + ω²ξ²/4 is p²/2m + mω²x²/2 with m = ½)', () => {
    const omega = 1.5;
    const g = makeGrid(30, 256);
    const u = g.x.map((x) => (omega * omega * x * x) / 4);
    const r = lowestEigenpairs(g, u, 8);
    for (let n = 0; n < 8; n++) expect(Math.abs(r.energies[n] - omega * (n + 0.5))).toBeLessThan(1e-9); // closed form ω(n+½)
    for (const res of r.residuals) expect(res).toBeLessThan(r.residualTol);
  });

  for (const N of [1, 2, 3]) {
    it(`Pöschl–Teller −N(N+1)sech²ξ, N = ${N}: E_n = −(N−n)² (Landau & Lifshitz, QM §23)`, () => {
      const g = makeGrid(60, 512);
      const u = g.x.map((x) => -N * (N + 1) / Math.cosh(x) ** 2);
      const r = lowestEigenpairs(g, u, N + 3);
      for (let n = 0; n < N; n++) expect(Math.abs(r.energies[n] - -((N - n) ** 2))).toBeLessThan(1e-9); // closed form
      // reflectionless: the continuum pairs are exactly degenerate (Kay & Moses 1956, physics.md §4)
      const groups = groupDegenerate(r.energies, 1e-8);
      expect(groups.slice(N + 1).every((gr) => gr.length === 2 || gr[gr.length - 1] === r.energies.length - 1)).toBe(true);
    });
  }

  it('one or two levels alone at 1024 points (the filter cut from the lowest probe Ritz values): −6sech²ξ gives −4, −1 (Landau & Lifshitz, QM §23)', () => {
    const g = makeGrid(60, 1024);
    const u = g.x.map((x) => -6 / Math.cosh(x) ** 2);
    for (const count of [1, 2]) {
      const r = lowestEigenpairs(g, u, count);
      expect(Math.abs(r.energies[0] + 4)).toBeLessThan(1e-9); // closed form −(N − n)², N = 2
      if (count === 2) expect(Math.abs(r.energies[1] + 1)).toBeLessThan(1e-9);
      // the cut lies among the low levels, not near the top of the spectrum (|E| ≤ k_max² ≈ 2880)
      expect(Number(/cut=([-\d.e+]+)/.exec(r.detail)?.[1])).toBeLessThan(100);
    }
  });

  it('Lanczos with locking and the dense solver agree, degenerate partners included (common practice: two independent solvers)', () => {
    const g = makeGrid(40, 128);
    const u = g.x.map((x) => -6 / Math.cosh(x) ** 2);
    const a = lowestEigenpairs(g, u, 11, { method: 'lanczos' });
    const b = lowestEigenpairs(g, u, 11, { method: 'dense' });
    for (let i = 0; i < 11; i++) expect(Math.abs(a.energies[i] - b.energies[i])).toBeLessThan(1e-9);
    expect(groupDegenerate(a.energies, 1e-8).map((x) => x.length).slice(3, 7)).toEqual([2, 2, 2, 2]); // ±k pairs of the box
  });
});
