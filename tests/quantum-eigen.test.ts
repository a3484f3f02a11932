import { describe, expect, it } from 'vitest';
import { makeGrid } from '../src/spectral/grid.ts';
import { groupDegenerate, lowestEigenpairs } from '../src/quantum/eigen.ts';
import { tridiagEigen } from '../src/linalg/tridiag.ts';
import { symmetricLowest } from '../src/linalg/symmetric-lowest.ts';
import { eigenMethodFor } from '../src/quantum/cost.ts';
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

describe('many levels: Householder tridiagonalisation (linalg/symmetric-lowest.ts)', () => {
  it('the lowest 40 eigenpairs of a random symmetric 150×150 matrix equal ml-matrix to 1e-12, residuals at round-off (npm reference)', () => {
    const n = 150;
    let seed = 7;
    const rnd = () => (seed = (seed * 16807) % 2147483647) / 2147483647 - 0.5;
    const a = new Float64Array(n * n);
    for (let i = 0; i < n; i++) for (let j = 0; j <= i; j++) { const v = rnd(); a[i * n + j] = v; a[j * n + i] = v; }
    const m = new Matrix(n, n);
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) m.set(i, j, a[i * n + j]);
    const ref = new EigenvalueDecomposition(m, { assumeSymmetric: true }).realEigenvalues.sort((x, y) => x - y);
    const r = symmetricLowest(Float64Array.from(a), n, 40);
    for (let k = 0; k < 40; k++) {
      expect(Math.abs(r.values[k] - ref[k])).toBeLessThan(1e-12);
      const x = r.vectors[k];
      let res = 0;
      for (let i = 0; i < n; i++) { let s = 0; for (let j = 0; j < n; j++) s += a[i * n + j] * x[j]; res = Math.max(res, Math.abs(s - r.values[k] * x[i])); }
      expect(res).toBeLessThan(1e-12);
    }
  });
  it('the Hamiltonian: Householder and ml-matrix agree on 60 levels of −6sech²ξ with its ±k box pairs (two independent solvers)', () => {
    const g = makeGrid(40, 128);
    const u = g.x.map((x) => -6 / Math.cosh(x) ** 2);
    const a = lowestEigenpairs(g, u, 60, { method: 'householder' });
    const b = lowestEigenpairs(g, u, 60, { method: 'dense' });
    for (let i = 0; i < 60; i++) expect(Math.abs(a.energies[i] - b.energies[i])).toBeLessThan(1e-9);
    for (const r of a.residuals) expect(r).toBeLessThan(a.residualTol);
    // bound states of Pöschl–Teller N = 2: −4 and −1 (Landau & Lifshitz, QM §23), to the resolution of 128 points
    // on 40 ℓ (measured 2e-8)
    expect(Math.abs(a.energies[0] + 4)).toBeLessThan(1e-7);
    expect(Math.abs(a.energies[1] + 1)).toBeLessThan(1e-7);
  });
  it('a band-limited well is solved on a coarse grid and lifted: equal to ml-matrix on all N points (independent solver)', () => {
    // −6sech²ξ on 30 ℓ: its spectrum falls to 1e-13 of the peak near mode 100, so 40 levels fit the 256-point grid
    const g = makeGrid(30, 512);
    const u = g.x.map((x) => -6 / Math.cosh(x) ** 2);
    const a = lowestEigenpairs(g, u, 40, { method: 'householder' });
    expect(a.detail).toContain('256-point grid');
    const b = lowestEigenpairs(g, u, 40, { method: 'dense' });
    for (let i = 0; i < 40; i++) expect(Math.abs(a.energies[i] - b.energies[i])).toBeLessThan(1e-10);
    for (const r of a.residuals) expect(r).toBeLessThan(a.residualTol);
    // Pöschl–Teller N = 2 bound states −4 and −1 (Landau & Lifshitz, QM §23); isolated levels: the same vector up to sign
    expect(Math.abs(a.energies[0] + 4)).toBeLessThan(1e-10);
    expect(Math.abs(a.energies[1] + 1)).toBeLessThan(1e-10);
    for (const i of [0, 1]) {
      let d = 0;
      for (let j = 0; j < g.n; j++) d += a.vectors[i][j] * b.vectors[i][j];
      expect(1 - Math.abs(d)).toBeLessThan(1e-12);
    }
  });
  it('a well with sharp walls is not band-limited: the dense solve keeps all N points', () => {
    const g = makeGrid(30, 256);
    const u = g.x.map((x) => (Math.abs(x) < 3 ? -5 : 0));
    const a = lowestEigenpairs(g, u, 50, { method: 'householder' });
    expect(a.detail).toContain('N×N');
    const b = lowestEigenpairs(g, u, 50, { method: 'dense' });
    for (let i = 0; i < 50; i++) expect(Math.abs(a.energies[i] - b.energies[i])).toBeLessThan(1e-9);
  });
  it('the cost model picks Lanczos for a few levels and the dense solve for hundreds (measured crossover)', () => {
    expect(eigenMethodFor(2048, 16)).toBe('lanczos');
    expect(eigenMethodFor(2048, 202)).toBe('householder');
    expect(eigenMethodFor(8192, 202)).toBe('lanczos'); // the dense matrix would not fit the memory budget
  });
});

