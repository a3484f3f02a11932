import { describe, expect, it } from 'vitest';
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { makeGrid, type Grid } from '../src/spectral/grid.ts';
import { emptyTerms, SpectralOperator, type OperatorTerms } from '../src/quantum/hamiltonian.ts';
import { complexFromReal } from '../src/linalg/complex.ts';
import { kdvDrive, Propagator, type DrivenHamiltonian, type Scheme } from '../src/quantum/propagator.ts';
import { propagate } from './reference/schemes.ts';
import type { KineticIntegrable } from './reference/split4.ts';
import { lowestEigenpairs, groupDegenerate } from '../src/quantum/eigen.ts';
import { makeRng } from '../src/core/rng.ts';
import { eigenspaceFidelity, groupOf, fermionFidelity } from '../src/quantum/observables.ts';
import { makeRamp } from '../src/protocol/ramp.ts';
import { NumericalError } from '../src/core/errors.ts';

/**
 * Exact exp(−iMt)ψ for the dense Hermitian matrix M of an operator, through the real symmetric embedding
 * S = [[Re M, −Im M],[Im M, Re M]] = WΛWᵀ (ml-matrix): rep(e^{−iMt}) = W cos(Λt)Wᵀ − J W sin(Λt)Wᵀ, J[a; b] = [−b; a]
 * (the standard real representation of complex matrices, common practice; spectral theorem for the exponential).
 */
function denseExp(grid: Grid, t: OperatorTerms, psi: Float64Array, time: number): Float64Array {
  const n = grid.n;
  const op = new SpectralOperator(grid);
  const e = new Float64Array(2 * n);
  const col = new Float64Array(2 * n);
  const S = new Matrix(2 * n, 2 * n);
  for (let c = 0; c < n; c++) {
    e.fill(0);
    e[2 * c] = 1;
    op.apply(t, e, col);
    for (let r = 0; r < n; r++) {
      const re = col[2 * r], im = col[2 * r + 1];
      S.set(r, c, re); S.set(r + n, c + n, re); S.set(r, c + n, -im); S.set(r + n, c, im);
    }
  }
  const evd = new EigenvalueDecomposition(S, { assumeSymmetric: true });
  const W = evd.eigenvectorMatrix;
  const lam = evd.realEigenvalues;
  const y = new Float64Array(2 * n);
  for (let r = 0; r < n; r++) { y[r] = psi[2 * r]; y[r + n] = psi[2 * r + 1]; }
  const cosPart = new Float64Array(2 * n);
  const sinPart = new Float64Array(2 * n);
  for (let l = 0; l < 2 * n; l++) {
    let proj = 0;
    for (let r = 0; r < 2 * n; r++) proj += W.get(r, l) * y[r];
    const c = Math.cos(lam[l] * time) * proj, s = Math.sin(lam[l] * time) * proj;
    for (let r = 0; r < 2 * n; r++) { cosPart[r] += W.get(r, l) * c; sinPart[r] += W.get(r, l) * s; }
  }
  const out = new Float64Array(2 * n);
  for (let r = 0; r < n; r++) {
    // rep = cos − J sin, J[a; b] = [−b; a] → −J sin = [sin_b; −sin_a]
    out[2 * r] = cosPart[r] + sinPart[r + n];
    out[2 * r + 1] = cosPart[r + n] - sinPart[r];
  }
  return out;
}

function constantHamiltonian(grid: Grid, pieces: Array<{ until: number; terms: OperatorTerms }>): KineticIntegrable {
  return {
    grid,
    terms(s, out) {
      const p = pieces.find((q) => s < q.until) ?? pieces[pieces.length - 1];
      Object.assign(out, p.terms);
    },
    kineticIntegral(sa, sb, out) {
      // piecewise constant coefficients; the steps in the test never straddle a boundary
      const p = pieces.find((q) => 0.5 * (sa + sb) < q.until) ?? pieces[pieces.length - 1];
      out[0] = p.terms.c1 * (sb - sa); out[1] = p.terms.c2 * (sb - sa); out[2] = p.terms.c3 * (sb - sa);
    },
  };
}

function dist(a: Float64Array, b: Float64Array): number {
  let s = 0;
  for (let j = 0; j < a.length; j++) s += (a[j] - b[j]) ** 2;
  return Math.sqrt(s);
}

describe('propagator against a dense exact exponential (ml-matrix eigen-decomposition), N = 32', () => {
  const g = makeGrid(10, 32);
  const u1 = g.x.map((x) => -3 / Math.cosh(x) ** 2);
  const u2 = g.x.map((x) => -1.5 / Math.cosh(x - 1) ** 2);
  const cd = (u: Float64Array, c: number): OperatorTerms => ({ ...emptyTerms(), c2: 1, c3: -4 * c, v: u, w: u, b: -3 * c });
  const rng = makeRng(5);
  const psi0 = Float64Array.from({ length: 2 * g.n }, () => rng() - 0.5);
  const nrm = Math.hypot(...psi0);
  for (let j = 0; j < psi0.length; j++) psi0[j] /= nrm;

  for (const scheme of ['magnus4', 'etd4', 'split4', 'etd53', 'etd43'] as Scheme[]) {
    it(`${scheme}: time-independent H_CD (complex Hermitian), ‖ψ − ψ_exact‖ < 1e-7`, () => {
      const H = constantHamiltonian(g, [{ until: Infinity, terms: cd(u1, 0.2) }]);
      const r = propagate(H, [psi0], 0, 0.5, { scheme, tol: 1e-14 });
      expect(dist(r.states[0], denseExp(g, cd(u1, 0.2), psi0, 0.5))).toBeLessThan(1e-7); // exact: spectral theorem
    });
    it(`${scheme}: piecewise-constant H (two CD Hamiltonians, propagated in turn), ‖ψ − ψ_exact‖ < 1e-7`, () => {
      const r1 = propagate(constantHamiltonian(g, [{ until: Infinity, terms: cd(u1, 0.2) }]), [psi0], 0, 0.25, { scheme, tol: 1e-14 });
      const r2 = propagate(constantHamiltonian(g, [{ until: Infinity, terms: cd(u2, -0.1) }]), r1.states, 0.25, 0.5, { scheme, tol: 1e-14 });
      const ref = denseExp(g, cd(u2, -0.1), denseExp(g, cd(u1, 0.2), psi0, 0.25), 0.25); // e^{−iH₂t₂}e^{−iH₁t₁}ψ
      expect(dist(r2.states[0], ref)).toBeLessThan(1e-7);
    });
  }

  it('fixed steps converge with order ≈ 4 for a time-dependent H (magnus4 and etd4; Blanes & Moan 2006; Cox & Matthews 2002)', () => {
    const uu = new Float64Array(g.n);
    const H: DrivenHamiltonian = {
      grid: g,
      terms(s, out) {
        const c = 0.3 * Math.sin(3 * s);
        for (let j = 0; j < g.n; j++) uu[j] = -3 * (1 + 0.5 * Math.sin(2 * s)) / Math.cosh(g.x[j]) ** 2;
        Object.assign(out, cd(uu, c));
      },
    };
    // h‖H‖ must be below ~π for the asymptotic regime (Magnus convergence; Blanes, Casas, Oteo & Ros, Phys. Rep.
    // 470, 151, 2009): ‖H‖ ≈ 1.2·k_max³ ≈ 1200 here, so 400 and 800 steps
    for (const scheme of ['magnus4', 'etd4'] as Scheme[]) {
      const ref = propagate(H, [psi0], 0, 1, { scheme, fixedSteps: 6400, tol: 1e-16 }).states[0];
      const e1 = dist(propagate(H, [psi0], 0, 1, { scheme, fixedSteps: 400, tol: 1e-16 }).states[0], ref);
      const e2 = dist(propagate(H, [psi0], 0, 1, { scheme, fixedSteps: 800, tol: 1e-16 }).states[0], ref);
      const order = Math.log2(e1 / e2);
      expect(order).toBeGreaterThan(3.5); // fourth-order schemes: error ratio 2⁴ per halving
      expect(order).toBeLessThan(4.6);
    }
    // the embedded pairs propagate their higher-order solution (h‖H‖ < 2 at 800 steps): ETD5(3) order 5 (Whalen, Brio & Moloney, J. Comput.
    // Phys. 280, 579, 2015, §3), Krogstad's ETD4 order 4 (Krogstad, J. Comput. Phys. 203, 72, 2005)
    for (const [scheme, p] of [['etd53', 5], ['etd43', 4]] as const) {
      const ref = propagate(H, [psi0], 0, 1, { scheme: 'etd53', fixedSteps: 12800, tol: 1e-16 }).states[0];
      const e1 = dist(propagate(H, [psi0], 0, 1, { scheme, fixedSteps: 800, tol: 1e-16 }).states[0], ref);
      const e2 = dist(propagate(H, [psi0], 0, 1, { scheme, fixedSteps: 1600, tol: 1e-16 }).states[0], ref);
      const order = Math.log2(e1 / e2);
      // at least the classical order; on this linear problem ETD5(3) converges like h⁶ (measured 6.0 at 800 → 1600)
      expect(order, scheme).toBeGreaterThan(p - 0.5);
      expect(order, scheme).toBeLessThan(p + 1.3);
    }
  });
});

describe('single soliton translated by a sin2 ramp (physics.md §4: u = −2κ²sech²(κ(ξ − 4κ²τ)))', () => {
  it('CD keeps the bound state and the lowest continuum states with fidelity ≥ 1 − 1e-8', () => {
    const kappa = 1;
    const g = makeGrid(30, 128);
    const pot = (tau: number, out: Float64Array): void => {
      for (let j = 0; j < g.n; j++) out[j] = -2 * kappa * kappa / Math.cosh(kappa * (g.x[j] - 4 * kappa * kappa * tau)) ** 2;
    };
    const ramp = makeRamp('sin2', 1, 0.4);
    const u0 = new Float64Array(g.n), u1 = new Float64Array(g.n);
    pot(0, u0); pot(0.4, u1);
    const e0 = lowestEigenpairs(g, u0, 5);
    const e1 = lowestEigenpairs(g, u1, 5);
    expect(Math.abs(e0.energies[0] + kappa * kappa)).toBeLessThan(1e-9); // E = −κ² (physics.md §4)
    const groups = groupDegenerate(e1.energies, 1e-8);
    const r = propagate(kdvDrive(g, pot, ramp, 1), e0.vectors.slice(0, 3).map(complexFromReal), 0, 1, { tol: 1e-9 });
    for (let i = 0; i < 3; i++) expect(eigenspaceFidelity(r.states[i], e1.vectors, groupOf(groups, i))).toBeGreaterThan(1 - 1e-8);
    const bare = propagate(kdvDrive(g, pot, ramp, 0), [complexFromReal(e0.vectors[0])], 0, 1, { tol: 1e-9 });
    expect(eigenspaceFidelity(bare.states[0], e1.vectors, groupOf(groups, 0))).toBeLessThan(0.99); // fast bare transport excites
  });
});

describe('harmonic trap with changing ω and the exact CD term −(ω̇/4ω)(xp + px) (Muga et al., J. Phys. B 43, 085509, 2010)', () => {
  it('fidelity ≥ 1 − 1e-8 with the term for the lowest 4 levels, clearly lower without; N = 1 fermion fidelity equals it', () => {
    const g = makeGrid(30, 128);
    const w0 = 1, w1 = 2.5, T = 0.8;
    const ramp = makeRamp('smooth', T, 1);
    const omega = (s: number): number => w0 + (w1 - w0) * ramp.value(s);
    const omegaDot = (s: number): number => (w1 - w0) * ramp.rate(s);
    const v = new Float64Array(g.n);
    const drive = (withCd: boolean): DrivenHamiltonian => ({
      grid: g,
      terms(s, out) {
        const w = omega(s);
        for (let j = 0; j < g.n; j++) v[j] = (w * w * g.x[j] * g.x[j]) / 4; // u = ω²ξ²/4 (m = ½)
        out.c1 = 0; out.c2 = 1; out.c3 = 0; out.v = v;
        out.w = withCd ? g.x : null;
        out.b = withCd ? -omegaDot(s) / (4 * w) : 0; // −(ω̇/4ω){ξ, k}
      },
    });
    const hoU = (w: number) => g.x.map((x) => (w * w * x * x) / 4);
    const e0 = lowestEigenpairs(g, hoU(w0), 4);
    const e1 = lowestEigenpairs(g, hoU(w1), 4);
    for (let n = 0; n < 4; n++) expect(Math.abs(e1.energies[n] - w1 * (n + 0.5))).toBeLessThan(1e-9); // E_n = ω(n + ½)
    const groups = groupDegenerate(e1.energies, 1e-8);
    const init = e0.vectors.map(complexFromReal);
    const withCd = propagate(drive(true), init, 0, T, { scheme: 'magnus4', tol: 1e-10 });
    const without = propagate(drive(false), init, 0, T, { scheme: 'magnus4', tol: 1e-10 });
    const fCd = withCd.states.map((p, i) => eigenspaceFidelity(p, e1.vectors, groupOf(groups, i)));
    const fBare = without.states.map((p, i) => eigenspaceFidelity(p, e1.vectors, groupOf(groups, i)));
    for (const f of fCd) expect(f).toBeGreaterThan(1 - 1e-8);
    for (const f of fBare) expect(f).toBeLessThan(0.99);
    // N = 1: many-body fidelity |det⟨n|φ⟩|² is the single-state fidelity (Löwdin 1955)
    const fm = fermionFidelity(without.states, e1.vectors, e1.energies, 1, 1e-8).manyBodyFidelity;
    expect(Math.abs(fm - fBare[0])).toBeLessThan(1e-12);
    const f2 = fermionFidelity(withCd.states, e1.vectors, e1.energies, 4, 1e-8).manyBodyFidelity;
    expect(f2).toBeGreaterThan(1 - 1e-7); // product of transported states → 1 up to the stepping tolerance
  });
});

describe('global error control: converged to its budget or refused', () => {
  // single soliton (physics.md §4) on a small grid; the budget is met for a reachable tolerance and refused with a
  // NumericalError (never a silent result) when the largest level is reached first
  const kappa = 1;
  const g = makeGrid(30, 64);
  const pot = (tau: number, out: Float64Array): void => {
    for (let j = 0; j < g.n; j++) out[j] = -2 * kappa * kappa / Math.cosh(kappa * (g.x[j] - 4 * kappa * kappa * tau)) ** 2;
  };
  const ramp = makeRamp('sin2', 1, 0.2);
  const u0 = new Float64Array(g.n);
  pot(0, u0);
  const init = lowestEigenpairs(g, u0, 1).vectors.map(complexFromReal);
  it('meets a reachable budget and reports an estimate within it', () => {
    const r = propagate(kdvDrive(g, pot, ramp, 1), init, 0, 1, { tol: 1e-8, errorControl: 'global' });
    expect(r.stats.estimatedAmplitudeError).toBeLessThanOrEqual(Math.sqrt(1e-8));
  });
  it('accepts levels that agree to round-off (a static free particle: H = k², integrated in closed form)', () => {
    // u = 0 and λ̇ = 0: every level gives exp(−ik²T) ψ̂ to round-off (the exact k-diagonal part of etd4, physics.md
    // §8), so no convergence ratio is measurable; the propagation must still end at once, not run to the cap
    const zero = (_tau: number, out: Float64Array): void => { out.fill(0); };
    const still = makeRamp('sin2', 1, 0);
    const r = propagate(kdvDrive(g, zero, still, 1), init, 0, 1, { tol: 1e-8, errorControl: 'global' });
    expect(r.stats.levels).toEqual([64, 128]);
    expect(r.stats.estimatedAmplitudeError).toBeLessThan(1e-12);
  });
  it('with sample times denser than the first levels, the levels still differ and the budget is met (common practice: the uniform grid refined, samples inserted)', () => {
    // 41 samples against levels of 8, 16, … steps: were the steps cut at the samples alone, two levels would be the
    // same discretisation, agree exactly and be accepted with any error
    const times = Array.from({ length: 41 }, (_, i) => i / 40);
    const tol = 1e-10;
    const r = propagate(kdvDrive(g, pot, ramp, 1), init, 0, 1, { tol, errorControl: 'global', expectedSteps: 32, sampleTimes: times, onSample: () => undefined });
    const ref = propagate(kdvDrive(g, pot, ramp, 1), init, 0, 1, { fixedSteps: 4000 }).states[0];
    expect(r.stats.levels![0]).toBeLessThan(times.length);
    expect(new Set(r.stats.levels).size).toBe(r.stats.levels!.length);
    const d = dist(r.states[0], ref);
    expect(d).toBeLessThan(Math.sqrt(tol));
  });
  it('the embedded pair under local control meets its budget in one pass (Whalen, Brio & Moloney 2015)', () => {
    const tol = 1e-10;
    const r = propagate(kdvDrive(g, pot, ramp, 1), init, 0, 1, { tol, scheme: 'etd53', errorControl: 'local' });
    expect(r.stats.errorEstimator).toBe('embedded pair');
    const ref = propagate(kdvDrive(g, pot, ramp, 1), init, 0, 1, { fixedSteps: 4000 }).states[0];
    expect(dist(r.states[0], ref)).toBeLessThan(Math.sqrt(tol));
  });
  it('a scheme carrying its last stage (FSAL) does not carry it into another propagation that starts at the same time (common practice: a cached stage belongs to one state set)', () => {
    const H = kdvDrive(g, pot, ramp, 1);
    const other = [Float64Array.from(init[0], (v, j) => (j % 2 === 0 ? v : 0.3 * v))];
    const shared = new Propagator(g);
    shared.propagate(H, init, 0, 1, { scheme: 'etd53', fixedSteps: 40 });
    // the first ended at s = 1; a second one from s = 1 with other states must not reuse its stage
    const again = shared.propagate(H, other, 1, 1.2, { scheme: 'etd53', fixedSteps: 10 }).states[0];
    const fresh = new Propagator(g).propagate(H, other, 1, 1.2, { scheme: 'etd53', fixedSteps: 10 }).states[0];
    expect(again).toEqual(fresh);
  });
  it('refuses with a NumericalError when the level cap comes first', () => {
    expect(() => propagate(kdvDrive(g, pot, ramp, 1), init, 0, 1, { tol: 1e-28, errorControl: 'global', maxSteps: 256 })).toThrow(NumericalError);
    expect(() => propagate(kdvDrive(g, pot, ramp, 1), init, 0, 1, { tol: 1e-28, errorControl: 'global', maxSteps: 256 })).toThrow(/did not reach its time-stepping budget/);
  });
});
