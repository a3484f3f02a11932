import { describe, expect, it } from 'vitest';
import { NumericalError } from '../src/core/errors.ts';
import { integrateFlow, naturalFlowEquation } from '../src/flow/kdv.ts';
import { invariantDrift, invariants } from '../src/flow/invariants.ts';
import { nSolitonPotential, oneSoliton, solitonAsymptotes, solitonFrameSpeed, solitonFromBoundState, twoSolitonFromSech2 } from '../src/flow/solitons.ts';
import { DenseFlow } from '../src/flow/dense.ts';
import { boundStates } from '../src/quantum/spectrum-track.ts';
import { translateHalfSpectrum } from '../src/spectral/translate.ts';
import { spectrum } from '../src/spectral/ops.ts';
import { RealFFT } from '../src/spectral/fft.ts';
import { findWells } from '../src/flow/wells.ts';
import { makeGrid } from '../src/spectral/grid.ts';

const maxAbsDiff = (a: ArrayLike<number>, b: ArrayLike<number>) => {
  let e = 0;
  for (let j = 0; j < a.length; j++) e = Math.max(e, Math.abs(a[j] - b[j]));
  return e;
};
const frames = (end: number, count: number) => Array.from({ length: count }, (_, i) => (end * i) / (count - 1));

describe('KdV integrator against exact solutions', () => {
  const g = makeGrid(60, 1024);
  const kdv = naturalFlowEquation('quantum');

  it('one soliton u = −2κ² sech²(κ(ξ − 4κ²τ − ξ₀)) to 1e-7 at τ = 0.5 (physics.md §4, exact KdV solution)', () => {
    const u0 = g.x.map((x) => oneSoliton(1.5, -5, x, 0));
    const run = integrateFlow(g, kdv, u0, { tolerance: 1e-10, frames: frames(0.5, 3) });
    const exact = g.x.map((x) => oneSoliton(1.5, -5, x, 0.5));
    expect(maxAbsDiff(run.frames[2], exact)).toBeLessThan(1e-7);
  });

  it('two-soliton split of −6 sech²ξ to 1e-7 at τ = 0.5, N = 1024, L = 60 (Drazin & Johnson 1989 closed form)', () => {
    const u0 = g.x.map((x) => -6 / Math.cosh(x) ** 2);
    const run = integrateFlow(g, kdv, u0, { tolerance: 1e-10, frames: frames(0.5, 11) });
    expect(run.frames).toHaveLength(11);
    for (const [i, tau] of run.lambdas.entries()) {
      const exact = g.x.map((x) => twoSolitonFromSech2(x, tau));
      expect(maxAbsDiff(run.frames[i], exact)).toBeLessThan(1e-7);
    }
    // dense output between stored steps (cubic Hermite) stays close to the closed form too
    const mid = new Float64Array(g.n);
    run.dense.at(0.2345, mid);
    expect(maxAbsDiff(mid, g.x.map((x) => twoSolitonFromSech2(x, 0.2345)))).toBeLessThan(1e-6);
    // the solitons that emerge: κ = 2 (depth 8) and κ = 1 (depth 2) (physics.md §4)
    const wells = findWells(g, run.frames[10]);
    expect(wells).toHaveLength(2);
    expect(wells[0].depth).toBeCloseTo(8, 3);
    expect(wells[1].depth).toBeCloseTo(2, 2);
    // the three invariants (Miura, Gardner & Kruskal 1968) are conserved
    const drift = invariantDrift(invariants(g, kdv, u0), invariants(g, kdv, run.frames[10]));
    expect(drift.max).toBeLessThan(1e-8);
  });

  it('in the frame of the fastest soliton (speed 16 for −6 sech²ξ) the split meets the closed form in a quarter of the steps, frames and dense output in the lab', () => {
    // Drazin & Johnson 1989 closed form; the solitons emerging from −6 sech²ξ have κ = 2 and 1, speeds 16 and 4
    // (physics.md §4; Gardner, Greene, Kruskal & Miura 1967)
    const u0 = g.x.map((x) => -6 / Math.cosh(x) ** 2);
    const speed = solitonFrameSpeed(kdv, boundStates(g, u0).energies);
    expect(speed).toBeCloseTo(16, 6);
    const lab = integrateFlow(g, kdv, u0, { tolerance: 1e-8, frames: frames(0.5, 6) });
    const moving = integrateFlow(g, kdv, u0, { tolerance: 1e-8, frames: frames(0.5, 6), frameSpeed: speed });
    expect(moving.stats.accepted).toBeLessThan(lab.stats.accepted / 3);
    for (const [i, tau] of moving.lambdas.entries()) {
      expect(maxAbsDiff(moving.frames[i], g.x.map((x) => twoSolitonFromSech2(x, tau)))).toBeLessThan(2e-7);
    }
    // between the stored steps: u and ∂_λu from the interpolant in the moving frame, carried to the lab; the exact
    // ∂_τu by central differences of the closed form (error ~ δ²·u_τττ ≈ 1e-7 for δ = 1e-5)
    const dense = DenseFlow.fromData(moving.dense.data());
    const u = new Float64Array(g.n), rate = new Float64Array(g.n);
    for (const tau of [0.0613, 0.2345, 0.4871]) {
      dense.at(tau, u);
      dense.rateAt(tau, rate);
      expect(maxAbsDiff(u, g.x.map((x) => twoSolitonFromSech2(x, tau)))).toBeLessThan(1e-6);
      const d = 1e-5;
      const exactRate = g.x.map((x) => (twoSolitonFromSech2(x, tau + d) - twoSolitonFromSech2(x, tau - d)) / (2 * d));
      expect(maxAbsDiff(rate, exactRate)).toBeLessThan(1e-3);
    }
  });

  it('translating a half spectrum by a moves sech²(ξ) to sech²(ξ − a) (Fourier shift theorem)', () => {
    const n = g.n;
    for (const a of [0.37, -11.2, 61.3]) {
      const v = spectrum(g.x.map((x) => 1 / Math.cosh(x) ** 2));
      translateHalfSpectrum(v, n / 2, a, g.length);
      const out = new Float64Array(n);
      new RealFFT(n).inverse(v, out);
      // the periodic image of the shifted profile (a mod L)
      const exact = g.x.map((x) => [-1, 0, 1].reduce((s, w) => s + 1 / Math.cosh(x - a + g.length * Math.round(a / g.length) + w * g.length) ** 2, 0));
      expect(maxAbsDiff(out, exact)).toBeLessThan(1e-13);
    }
  });

  it('the Kay–Moses determinant reproduces the closed form with c₁² = 6, c₂² = 12 (centres ln3/2, ln3/4)', () => {
    // Kay & Moses 1956 / Hirota 1971 against Drazin & Johnson 1989: two independent closed forms
    const specs = [{ kappa: 1, center: Math.log(3) / 2 }, { kappa: 2, center: Math.log(3) / 4 }];
    for (const tau of [-0.4, 0, 0.3]) {
      const km = nSolitonPotential(specs, g.x, tau);
      expect(maxAbsDiff(km, g.x.map((x) => twoSolitonFromSech2(x, tau)))).toBeLessThan(1e-12);
    }
  });

  it('two-soliton collision phase shifts (1/κ) ln((κ₁+κ₂)/(κ₁−κ₂)) (Drazin & Johnson 1989)', () => {
    const specs = [{ kappa: 2, center: 0 }, { kappa: 1, center: 0 }];
    const t0 = -0.8;
    const t1 = 0.8;
    const u0 = nSolitonPotential(specs, g.x, t0);
    const run = integrateFlow(g, kdv, u0, { tolerance: 1e-9, frames: [t1 - t0] });
    const before = findWells(g, u0);
    const after = findWells(g, run.frames[0]);
    expect(before).toHaveLength(2);
    expect(after).toHaveLength(2);
    const r = Math.log(3); // ln((2+1)/(2−1))
    const fastShift = after[0].position - before[0].position - 16 * (t1 - t0);
    const slowShift = after[1].position - before[1].position - 4 * (t1 - t0);
    expect(fastShift).toBeCloseTo(r / 2, 3);
    expect(slowShift).toBeCloseTo(-r, 3);
    // and the asymptote helper says the same
    const asym = solitonAsymptotes(specs);
    expect(asym[0].offsetPlus - asym[0].offsetMinus).toBeCloseTo(r / 2, 12);
    expect(asym[1].offsetPlus - asym[1].offsetMinus).toBeCloseTo(-r, 12);
  });

  it('−12 sech²ξ breaks into three solitons of depths 18, 8, 2 (Gardner, Greene, Kruskal & Miura 1967)', () => {
    const g2 = makeGrid(80, 1024);
    const u0 = g2.x.map((x) => -12 / Math.cosh(x) ** 2);
    const run = integrateFlow(g2, kdv, u0, { tolerance: 1e-8, frames: [0.6] });
    const wells = findWells(g2, run.frames[0]);
    expect(wells.map((w) => w.depth).slice(0, 3)).toEqual([expect.closeTo(18, 1), expect.closeTo(8, 1), expect.closeTo(2, 1)]);
  });
});

describe('Zabusky–Kruskal and Hopf breaking', () => {
  // Zabusky & Kruskal, Phys. Rev. Lett. 15, 240 (1965): w_t + w w_x + δ² w_xxx = 0, w(x,0) = cos πx on [0, 2),
  // δ = 0.022; breaking time of the dispersionless problem t_B = 1/π.
  const g = makeGrid(2, 512);
  const w0 = g.x.map((x) => Math.cos(Math.PI * x));

  it('eight solitary waves have formed by t = 3.6 t_B', () => {
    const run = integrateFlow(g, { alpha: 1, beta: 0.022 ** 2, drift: 0 }, w0, { tolerance: 1e-8, frames: [3.6 / Math.PI] });
    const w = run.frames[0];
    // every crest (local maximum) is a solitary wave; the eighth is still small, emerging from the trough as
    // in Zabusky & Kruskal's Fig. 1. The count is the same at N = 256, 512, 1024.
    let crests = 0;
    for (let j = 0; j < g.n; j++) {
      const a = w[(j - 1 + g.n) % g.n], b = w[j], c = w[(j + 1) % g.n];
      if (b > a && b >= c) crests++;
    }
    expect(crests).toBe(8);
  });

  it('the dispersionless flow stops at the gradient catastrophe t_B = 1/π (characteristics)', () => {
    const run = integrateFlow(g, { alpha: 1, beta: 0, drift: 0 }, w0, { tolerance: 1e-9, frames: [0.2, 0.5] });
    expect(run.breaking).not.toBeNull();
    expect(run.lambdas).toEqual([0.2]); // frames before breaking are kept
    expect(run.breaking!.lambdaReached).toBeLessThan(1 / Math.PI);
    expect(run.breaking!.lambdaExtrapolated).toBeCloseTo(1 / Math.PI, 3);
  });
});

describe('bounded memory', () => {
  it('fails with a NumericalError stating the cost when the dense output passes its budget', () => {
    // one soliton u = −2 sech²(ξ − 4τ) (physics.md §4) on a small grid; the budget allows 10 dense points
    const g = makeGrid(40, 128);
    const u0 = Float64Array.from(g.x, (x) => -2 / Math.cosh(x) ** 2);
    const perPoint = 2 * 2 * (Math.floor(128 / 3) + 1) * 8;
    const run = () => integrateFlow(g, naturalFlowEquation('quantum'), u0, { tolerance: 1e-10, frames: [1], maxDenseBytes: 10 * perPoint });
    expect(run).toThrow(NumericalError);
    expect(run).toThrow(/the flow needs more memory than its budget: 10 steps to λ = .* of 1/);
    // the default budget is ample for the same flow
    const ok = integrateFlow(g, naturalFlowEquation('quantum'), u0, { tolerance: 1e-10, frames: [1] });
    expect(ok.dense.bytes).toBe(ok.dense.lambdas.length * perPoint);
  });
});

describe('solitons predicted from bound states (src/flow/solitons.ts)', () => {
  it('E = −4 and E = −1 of −6 sech²ξ become κ = 2 (depth 8, speed 16) and κ = 1 (depth 2, speed 4) (physics.md §4; Drazin & Johnson 1989)', () => {
    expect(solitonFromBoundState(-4)).toEqual({ kappa: 2, depth: 8, speed: 16 });
    expect(solitonFromBoundState(-1)).toEqual({ kappa: 1, depth: 2, speed: 4 });
  });
});
