import { describe, expect, it } from 'vitest';
import { bandEnergies, lowestBand, mathieuA0B1, mathieuA1B2, planeWaveCutoff, tunnellingEstimate } from '../src/lattice/bands.ts';
import { tridiagonalLowest } from '../src/linalg/tridiagonal-lowest.ts';
import { KrylovExp } from '../src/integrate/krylov.ts';
import {
  applyTerms,
  cdTerms,
  denseFromTerms,
  emptyTerms,
  hermiticityDefect,
  latticeAnticommutator,
  latticeCubic,
  type LatticeTerms,
} from '../src/lattice/operators.ts';
import { complexFromReal as complexOf, overlap2 } from '../src/linalg/complex.ts';
import { LatticePropagator } from '../src/lattice/propagate.ts';
import { chainSites, LatticeSequence, TrigSampler } from '../src/lattice/sequence.ts';
import { twoSolitonFromSech2 } from '../src/flow/solitons.ts';
import { makeRamp } from '../src/protocol/ramp.ts';
import { makeGrid } from '../src/spectral/grid.ts';
import { verifyOnLattice } from '../src/lattice/verify.ts';

const sech = (z: number) => 1 / Math.cosh(z);

/** least-squares slope of log y against log x */
function slope(xs: number[], ys: number[]): number {
  const lx = xs.map(Math.log), ly = ys.map(Math.log);
  const mx = lx.reduce((a, b) => a + b) / lx.length, my = ly.reduce((a, b) => a + b) / ly.length;
  let sxy = 0, sxx = 0;
  for (let i = 0; i < lx.length; i++) {
    sxy += (lx[i] - mx) * (ly[i] - my);
    sxx += (lx[i] - mx) ** 2;
  }
  return sxy / sxx;
}

describe('band structure of the sinusoidal lattice (src/lattice/bands.ts)', () => {
  it('band edges reproduce the Mathieu characteristic values of A&S Table 20.1', () => {
    // Abramowitz & Stegun, Handbook of Mathematical Functions (1964), ch. 20, Table 20.1 "Characteristic values,
    // joining factors, some critical values": a₀, b₁, a₁, b₂ at q = 5 and 10, a₀ at q = 15, 20 — from memory
    // (8 decimals, so the tolerance is 1e-7)
    const table: [number, number, number, number, number][] = [
      [5, -5.80004602, -5.7900806, 1.85818754, 2.09946045],
      [10, -13.93697996, -13.93655248, -2.3991424, NaN],
    ];
    for (const [q, a0, b1, a1, b2] of table) {
      const e = mathieuA0B1(q);
      const f = mathieuA1B2(q);
      expect(Math.abs(e.a0 - a0)).toBeLessThan(1e-7);
      expect(Math.abs(e.b1 - b1)).toBeLessThan(1e-7);
      expect(Math.abs(f.a1 - a1)).toBeLessThan(1e-7);
      if (Number.isFinite(b2)) expect(Math.abs(f.b2 - b2)).toBeLessThan(1e-7);
    }
    // A&S Table 20.1, a₀(15) and a₀(20) (from memory)
    expect(Math.abs(mathieuA0B1(15).a0 - -22.51303776)).toBeLessThan(1e-7);
    expect(Math.abs(mathieuA0B1(20).a0 - -31.31339007)).toBeLessThan(1e-7);
  });

  it('agrees with the small-q power series of A&S eq. 20.2.25 and the free-particle limit', () => {
    // A&S eq. 20.2.25 (from memory): a₀ = −q²/2 + 7q⁴/128 − 29q⁶/2304 + …,
    // b₁ = 1 − q − q²/8 + q³/64 − q⁴/1536 − 11q⁵/36864 + …, a₁ = the same with q → −q
    const q = 0.05;
    const a0 = -q * q / 2 + (7 * q ** 4) / 128 - (29 * q ** 6) / 2304;
    const b1 = 1 - q - q * q / 8 + q ** 3 / 64 - q ** 4 / 1536 - (11 * q ** 5) / 36864;
    const a1 = 1 + q - q * q / 8 - q ** 3 / 64 - q ** 4 / 1536 + (11 * q ** 5) / 36864;
    expect(Math.abs(mathieuA0B1(q).a0 - a0)).toBeLessThan(1e-11);
    expect(Math.abs(mathieuA0B1(q).b1 - b1)).toBeLessThan(1e-11);
    expect(Math.abs(mathieuA1B2(q).a1 - a1)).toBeLessThan(1e-11);
    // s = 0: free particle, E(κ) = κ² (in E_R, κ in k_L) in the lowest band (|κ| ≤ 1) (common practice)
    for (const k of [0, 0.3, 0.7, 1]) expect(bandEnergies(0, k)[0]).toBeCloseTo(k * k, 13);
  });

  it('the plane-wave cutoff is converged to machine precision', () => {
    // the same matrix with 10 more plane waves on each side (common practice: cutoff doubling)
    for (const s of [1, 30, 300]) {
      const a = bandEnergies(s, 0.4);
      const b = bandEnergies(s, 0.4, planeWaveCutoff(s) + 10);
      expect(Math.abs(a[0] - b[0])).toBeLessThan(1e-12 * Math.max(1, s));
      expect(Math.abs(a[1] - b[1])).toBeLessThan(1e-12 * Math.max(1, s));
    }
  });

  it('the deep-lattice estimate (Zwerger 2003) is within a few per cent only for deep lattices', () => {
    // Zwerger, J. Opt. B 5, S9 (2003): J/E_R ≈ (4/√π) s^{3/4} e^{−2√s}; its relative error is the next term of the
    // Mathieu asymptotics b₁ − a₀ ∝ (1 − 7/(32√q) + O(1/q)), q = s/4 (DLMF §28.8(i), eq. 28.8.2, m = 0, from memory),
    // i.e. estimate/J − 1 ≈ 7/(16√s). (Beyond s ≈ 150 the band width e^{−2√s} drowns in the round-off ε·(2P)² of the plane-wave matrix.)
    const dev: number[] = [];
    for (const s of [60, 100, 150]) {
      const rel = tunnellingEstimate(s) / lowestBand(s).tunnelling - 1;
      expect(rel).toBeGreaterThan(0);
      if (s >= 100) expect(rel).toBeLessThan(0.05);
      dev.push(Math.abs(rel * Math.sqrt(s) - 7 / 16));
    }
    // the remaining O(1/s) term makes rel·√s approach 7/16 from above, monotonically
    expect(dev[0]).toBeLessThan(0.06);
    expect(dev[1]).toBeLessThan(dev[0]);
    expect(dev[2]).toBeLessThan(dev[1]);
    // s = 10 … 20: the estimate overestimates J by 12–19 % (7/(16√s) = 14 % … 10 %, plus O(1/s)); with the
    // 1/√s correction (DLMF 28.8.2) it is within 2.5 %
    for (const s of [10, 15, 20]) {
      const band = lowestBand(s).tunnelling;
      const rel = tunnellingEstimate(s) / band - 1;
      expect(rel).toBeGreaterThan(0.1);
      expect(rel).toBeLessThan(0.2);
      const corrected = tunnellingEstimate(s) * (1 - 7 / (16 * Math.sqrt(s)));
      expect(Math.abs(corrected / band - 1)).toBeLessThan(0.025);
    }
  });
});

describe('lattice operators (src/lattice/operators.ts)', () => {
  it('the lattice k³ has the symbol (2 sin kd − sin 2kd)/d³ on plane waves (physics.md §6)', () => {
    const h = 0.3, M = 40, k = 1.3;
    const re = new Float64Array(M), im = new Float64Array(M);
    for (let j = 0; j < M; j++) {
      re[j] = Math.cos(k * j * h);
      im[j] = Math.sin(k * j * h);
    }
    const a = latticeCubic(re, h, new Float64Array(2 * M));
    const b = latticeCubic(im, h, new Float64Array(2 * M));
    const symbol = (2 * Math.sin(k * h) - Math.sin(2 * k * h)) / h ** 3;
    for (let j = 2; j < M - 2; j++) {
      // K₃(cos + i sin) = a + i b must equal symbol·(cos + i sin)
      const outRe = a[2 * j] - b[2 * j + 1];
      const outIm = a[2 * j + 1] + b[2 * j];
      expect(outRe).toBeCloseTo(symbol * re[j], 10);
      expect(outIm).toBeCloseTo(symbol * im[j], 10);
    }
  });

  it('k³ and {u, k} converge to the continuum operators as O(d²) on smooth functions', () => {
    // continuum: k³f = i f‴, {u,k}f = −i(2uf′ + u′f) (k = −i∂); f = e^{−x²}, u = −2 sech²x (closed forms)
    const f = (x: number) => Math.exp(-x * x);
    const f1 = (x: number) => -2 * x * Math.exp(-x * x);
    const f3 = (x: number) => (-8 * x ** 3 + 12 * x) * Math.exp(-x * x);
    const u = (x: number) => -2 * sech(x) ** 2;
    const u1 = (x: number) => 4 * sech(x) ** 2 * Math.tanh(x);
    const hs = [0.2, 0.1, 0.05, 0.025];
    const eCubic: number[] = [], eAnti: number[] = [];
    for (const h of hs) {
      const xs = chainSites(16, h);
      const fv = xs.map(f), uv = xs.map(u);
      const c = latticeCubic(fv, h, new Float64Array(2 * xs.length));
      const a = latticeAnticommutator(uv, fv, h, new Float64Array(2 * xs.length));
      let mc = 0, ma = 0;
      for (let j = 2; j < xs.length - 2; j++) {
        const x = xs[j];
        mc = Math.max(mc, Math.abs(c[2 * j + 1] - f3(x)), Math.abs(c[2 * j]));
        ma = Math.max(ma, Math.abs(a[2 * j + 1] + (2 * u(x) * f1(x) + u1(x) * f(x))), Math.abs(a[2 * j]));
      }
      eCubic.push(mc);
      eAnti.push(ma);
    }
    // expected order 2 (physics.md §6: error O(k⁵d²) for k³; the bond-centred {u,k} is a second-order stencil)
    expect(slope(hs, eCubic)).toBeGreaterThan(1.9);
    expect(slope(hs, eCubic)).toBeLessThan(2.1);
    expect(slope(hs, eAnti)).toBeGreaterThan(1.9);
    expect(slope(hs, eAnti)).toBeLessThan(2.1);
  });

  it('every lattice Hamiltonian is Hermitian to machine precision and its product matches the matrix', () => {
    // H = H† (common practice: Hermitian generator of a unitary evolution)
    let state = 7;
    const rnd = () => ((state = (state * 16807) % 2147483647) / 2147483647) - 0.5;
    const M = 37, h = 0.4;
    const terms: LatticeTerms[] = [];
    for (let r = 0; r < 4; r++) {
      const t = emptyTerms(M, h);
      t.kin = 1 + rnd();
      for (let j = 0; j < M; j++) t.onsite[j] = 10 * rnd();
      for (let j = 0; j < M - 1; j++) t.bond[j] = 50 * rnd();
      t.nnn = 30 * rnd();
      terms.push(t);
    }
    const u = chainSites(M * h, h).map((x) => -2 * sech(x) ** 2);
    for (const tp of [0, 0.7, -1.3]) for (const sigma of [1, 0, -1]) terms.push(cdTerms(u, tp, sigma, emptyTerms(M, h)));
    for (const t of terms) {
      const d = denseFromTerms(t);
      expect(hermiticityDefect(d, M)).toBeLessThan(1e-15);
      // band structure of the CD Hamiltonian's nearest-neighbour element: −1/h² + i b (operators.ts module doc)
      expect(d.re[0 * M + 1]).toBeCloseTo(-t.kin / (h * h), 12);
      expect(d.im[0 * M + 1]).toBeCloseTo(t.bond[0], 12);
      expect(d.im[0 * M + 2]).toBeCloseTo(t.nnn, 12);
    }
  });

  it('on the soliton bound state the cubic CD operator is a pure current term: (4k³ + 3{u,k})ψ₀ = −4κ²kψ₀', () => {
    // closed form (by hand from ψ₀ = sech κξ, u = −2κ² sech²κξ, the exact one-soliton bound state, physics.md §4):
    // 4ψ‴ − 6uψ′ − 3u′ψ = 4κ²ψ′, i.e. (4k³ + 3{u,k})ψ₀ = 4iκ²ψ₀′ — the generator of the translation at speed 4κ²
    const kappa = 1.2;
    const errs: number[] = [];
    const hs = [0.1, 0.05, 0.025];
    for (const h of hs) {
      const xs = chainSites(20, h);
      const psi = xs.map((x) => sech(kappa * x));
      const uv = xs.map((x) => -2 * kappa * kappa * sech(kappa * x) ** 2);
      const c = latticeCubic(psi, h, new Float64Array(2 * xs.length));
      const a = latticeAnticommutator(uv, psi, h, new Float64Array(2 * xs.length));
      let m = 0;
      for (let j = 2; j < xs.length - 2; j++) {
        const dpsi = -kappa * sech(kappa * xs[j]) * Math.tanh(kappa * xs[j]);
        m = Math.max(m, Math.abs(4 * c[2 * j + 1] + 3 * a[2 * j + 1] - 4 * kappa * kappa * dpsi));
      }
      errs.push(m);
    }
    expect(errs[2]).toBeLessThan(1e-2);
    expect(slope(hs, errs)).toBeGreaterThan(1.9);
  });
});

describe('lattice linear algebra and sampling (src/lattice/linalg.ts, sequence.ts)', () => {
  it('lowest eigenpairs of the free open chain match E_n = (2 − 2cos(nπ/(M+1)))/h²', () => {
    // closed form of the open tight-binding chain (common practice; e.g. Ashcroft & Mermin-type textbook result)
    const M = 300, h = 0.2;
    const d = new Float64Array(M).fill(2 / (h * h));
    const e = new Float64Array(M).fill(-1 / (h * h));
    const r = tridiagonalLowest(d, e, 4);
    for (let n = 1; n <= 4; n++) {
      expect(r.values[n - 1]).toBeCloseTo((2 - 2 * Math.cos((n * Math.PI) / (M + 1))) / (h * h), 10);
      // eigenvector sin(njπ/(M+1)), normalised
      const v = r.vectors[n - 1];
      const norm = Math.sqrt((M + 1) / 2);
      const sign = Math.sign(v[0]);
      expect(Math.abs(v[10] * sign - Math.sin((n * 11 * Math.PI) / (M + 1)) / norm)).toBeLessThan(1e-8);
    }
  });

  it('the Lanczos exponential reproduces exp(−itH) on a plane wave of the free chain', () => {
    // on the open chain the eigenvector sin(nπj/(M+1)) evolves by the phase e^{−iE_n t} (closed form)
    const M = 200, h = 0.25, n = 3;
    const t = emptyTerms(M, h);
    t.kin = 1;
    const En = (2 - 2 * Math.cos((n * Math.PI) / (M + 1))) / (h * h);
    const v = new Float64Array(2 * M);
    for (let j = 0; j < M; j++) v[2 * j] = Math.sin((n * (j + 1) * Math.PI) / (M + 1)) / Math.sqrt((M + 1) / 2);
    const kry = new KrylovExp(2 * M, 30);
    const out = new Float64Array(2 * M);
    kry.expm((x, y) => applyTerms(t, x, y), v, 0.7, 1e-12, out);
    for (let j = 0; j < M; j += 17) {
      expect(out[2 * j]).toBeCloseTo(v[2 * j] * Math.cos(En * 0.7), 9);
      expect(out[2 * j + 1]).toBeCloseTo(-v[2 * j] * Math.sin(En * 0.7), 9);
    }
  });

  it('trigonometric sampling of grid data is exact for band-limited functions', () => {
    // a trigonometric polynomial below the Nyquist mode is reproduced exactly off the grid (Trefethen 2000, ch. 3)
    const grid = makeGrid(10, 32);
    const f = (x: number) => 1 + Math.cos((2 * Math.PI * 3 * x) / 10) - 0.5 * Math.sin((2 * Math.PI * 7 * x) / 10);
    const pts = Float64Array.from([-4.93, -1.234, 0.001, 2.5, 4.77]);
    const s = new TrigSampler(grid, pts).sample(grid.x.map(f), new Float64Array(pts.length));
    for (let i = 0; i < pts.length; i++) expect(s[i]).toBeCloseTo(f(pts[i]), 12);
  });
});

/** one soliton u = −2κ² sech²(κ(ξ − 4κ²τ − ξ₀)) (physics.md §4) and ∂_τu, as a LatticeSequence */
function solitonSequence(kappa: number, x0: number, tauEnd: number, sites: Float64Array): LatticeSequence {
  const z = (x: number, t: number) => kappa * (x - 4 * kappa * kappa * t - x0);
  return LatticeSequence.fromFunction(
    sites,
    Array.from({ length: 161 }, (_, i) => (tauEnd * i) / 160),
    (x, t) => -2 * kappa * kappa * sech(z(x, t)) ** 2,
    (x, t) => -16 * kappa ** 5 * sech(z(x, t)) ** 2 * Math.tanh(z(x, t)),
  );
}

function groundState(seq: LatticeSequence, lambda: number, h: number): Float64Array {
  const M = seq.sites.length;
  const u = seq.at(lambda, new Float64Array(M));
  return tridiagonalLowest(u.map((v) => v + 2 / (h * h)), new Float64Array(M).fill(-1 / (h * h)), 1).vectors[0];
}

describe('lattice Schrödinger verification (src/lattice/propagate.ts)', () => {
  it('the CF4 Magnus step is fourth order', () => {
    // Blanes & Moan, Appl. Numer. Math. 56, 1519 (2006): the two-exponential commutator-free method has order 4;
    // halving a fixed step must cut the error by ≈ 2⁴ = 16
    const h = 0.5, kappa = 1;
    const sites = chainSites(20, h);
    const seq = solitonSequence(kappa, -2, 0.5, sites);
    const ramp = makeRamp('sin2', 1, 0.5);
    const prop = new LatticePropagator({ sequence: seq, ramp, sigma: 1, h });
    const psi0 = complexOf(groundState(seq, 0, h));
    const runFixed = (steps: number) => {
      const v = [psi0.slice()];
      for (let i = 0; i < steps; i++) prop.step(i / steps, 1 / steps, v, v, 1e-14);
      return v[0];
    };
    const ref = runFixed(640);
    const err = [20, 40, 80].map((n) => {
      const v = runFixed(n);
      let s = 0;
      for (let i = 0; i < v.length; i++) s += (v[i] - ref[i]) ** 2;
      return Math.sqrt(s);
    });
    const p1 = Math.log2(err[0] / err[1]), p2 = Math.log2(err[1] / err[2]);
    expect(p1).toBeGreaterThan(3.6);
    expect(p2).toBeGreaterThan(3.7);
    expect(p2).toBeLessThan(4.4);
  });

  it('phase convention: CD keeps a translating soliton’s ground state, the flipped sign does not', () => {
    // exact soliton u = −2κ²sech²(κ(ξ − 4κ²τ)) (physics.md §4); the sign of −τ′(4k³ + 3{u,k}) (physics.md §3)
    const h = 0.2, kappa = 1, tauEnd = 1, T = 1;
    const sites = chainSites(30, h);
    const seq = solitonSequence(kappa, -2, tauEnd, sites);
    const ramp = makeRamp('sin2', T, tauEnd);
    const g0 = groundState(seq, 0, h), g1 = groundState(seq, tauEnd, h);
    const fid = (sigma: number) => {
      const v = [complexOf(g0)];
      new LatticePropagator({ sequence: seq, ramp, sigma, h }).run(v, 0, T, 1e-5);
      return overlap2(complexOf(g1), v[0]);
    };
    const cd = fid(1), flipped = fid(-1), bare = fid(0);
    expect(1 - cd).toBeLessThan(1e-4);
    expect(flipped).toBeLessThan(0.5);
    expect(bare).toBeLessThan(0.5);
  });

  it('a wide two-soliton split reproduces continuum-like fidelities, and refining the lattice reduces the error as d⁴', () => {
    // the Drazin & Johnson (1989) closed-form two-soliton from −6sech²ξ, rescaled by the KdV symmetry
    // u → ε²u(εξ, ε³τ) with ε = ½: solitons κ = 1 and ½, bound states −1 and −¼ (physics.md §4).
    // Expected order: the lattice CD operator differs from the exact one by O(k⁵d²) (physics.md §6), so the
    // transition amplitudes are O(d²) and the infidelity O(d⁴).
    const eps = 0.5, tauEnd = 0.3 / eps ** 3, T = 4, dl = 1e-4;
    const u = (x: number, t: number) => eps * eps * twoSolitonFromSech2(eps * x, eps ** 3 * t);
    const ramp = makeRamp('sin2', T, tauEnd);
    const hs = [1 / 3, 1 / 4, 1 / 6];
    const worst: number[] = [];
    let finest = null as null | ReturnType<typeof verifyOnLattice>;
    for (const h of hs) {
      const sites = chainSites(50, h);
      const seq = LatticeSequence.fromFunction(sites, Array.from({ length: 401 }, (_, i) => (tauEnd * i) / 400), u, (x, t) => (u(x, t + dl) - u(x, t - dl)) / (2 * dl));
      const r = verifyOnLattice(seq, h, ramp, 2, 1e-5, 1);
      worst.push(r.maxInfidelityCd);
      finest = r;
    }
    const r = finest as ReturnType<typeof verifyOnLattice>;
    // bound-state energies of the lattice H(0) approach −1 and −¼ (Pöschl–Teller, Landau & Lifshitz §23) as O(d²)
    expect(Math.abs(r.energiesStart[0] + 1)).toBeLessThan(1e-3);
    expect(Math.abs(r.energiesStart[1] + 0.25)).toBeLessThan(1e-3);
    // continuum CD is exact (physics.md §1, §3: 1 − 10⁻⁶): the fine lattice must reach 1 − 1e-4, the bare drive not
    for (const f of r.fidelityCd) expect(f).toBeGreaterThan(1 - 1e-4);
    expect(Math.max(...r.fidelityBare)).toBeLessThan(0.5);
    const p = slope(hs, worst);
    expect(p).toBeGreaterThan(3.6);
    expect(p).toBeLessThan(4.4);
  });
});
