import { describe, expect, it } from 'vitest';
import { makeGrid } from '../src/spectral/grid.ts';
import { boundEnergies, boxThreshold } from '../src/quantum/bound.ts';
import { fitReflectionless, mergedCentres } from '../src/flow/reflectionless.ts';
import { nSolitonPotential, twoSolitonFromSech2 } from '../src/flow/solitons.ts';
import { collisionSequence, kappasFromDepths, nearestAdmissible, reachableSplit, splitSequence, transportSequence } from '../src/flow/targets.ts';
import { depthBudget, narrowestFeature } from '../src/flow/budgets.ts';
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

/** minimum of a sampled function by the vertex of the parabola through the lowest sample and its neighbours */
function sampledMinimum(x: Float64Array, u: Float64Array, lo: number, hi: number): number {
  let best = -1;
  for (let j = 1; j < x.length - 1; j++) if (x[j] >= lo && x[j] <= hi && (best < 0 || u[j] < u[best])) best = j;
  const [a, b, c] = [u[best - 1], u[best], u[best + 1]];
  const h = x[best + 1] - x[best];
  return x[best] + (0.5 * h * (a - c)) / (a - 2 * b + c);
}

function fineAxis(lo: number, hi: number, h: number): Float64Array {
  return Float64Array.from({ length: Math.round((hi - lo) / h) + 1 }, (_, j) => lo + j * h);
}

describe('target wells (src/flow/targets.ts)', () => {
  it('the merged well of κ = 1 … N is −N(N+1) sech²(ξ − ξ_c) (Pöschl–Teller; Landau & Lifshitz §23)', () => {
    const x = fineAxis(-12, 12, 0.01);
    for (let N = 2; N <= 4; N++) {
      const kappas = Array.from({ length: N }, (_, i) => N - i);
      const u = nSolitonPotential(mergedCentres(kappas, 0.5), x, 0);
      expect(maxAbsDiff(u, x.map((v) => -N * (N + 1) / Math.cosh(v - 0.5) ** 2))).toBeLessThan(1e-10);
    }
  });

  it('two wells with depths 8 : 2 split to the requested separation, symmetric about the centre', () => {
    const kappas = kappasFromDepths([8, 2]); // depth 2κ² (physics.md §4): κ = 2, 1
    const seq = splitSequence({ kappas, separation: 12, centre: 1 });
    // symmetric drift from the speeds 4κ²: c = −2(κ₁² + κ₂²) = −10 (physics.md §4, one-soliton speed)
    expect(seq.drift).toBe(-10);
    const x = fineAxis(-12, 14, 2e-4);
    const width = 1 / 2;
    const end = seq.potential(x, seq.tauEnd);
    const right = sampledMinimum(x, end, 1, 14);
    const left = sampledMinimum(x, end, -12, 1);
    expect(Math.abs(right - left - 12)).toBeLessThan(1e-3 * width);
    expect(Math.abs(0.5 * (right + left) - 1)).toBeLessThan(1e-3 * width);
    // asymptotic lines of the even merged well: offsets ±½ of the phase shifts ln3/κ (physics.md §4, Drazin &
    // Johnson 1989), so τ = (S − ½(ln3/2 + ln3))/(4(κ₁² − κ₂²)) up to overlaps e^{−κ₂S} (hand calculation)
    expect(Math.abs(seq.tauEnd - (12 - 0.5 * (Math.log(3) / 2 + Math.log(3))) / 12)).toBeLessThan(1e-5);
    const mid = seq.potential(x, 0.6 * seq.tauEnd);
    const m = [sampledMinimum(x, mid, -12, 1), sampledMinimum(x, mid, 1, 14)];
    expect(Math.abs(0.5 * (m[0] + m[1]) - 1)).toBeLessThan(1e-3 * width);
    // τ = 0: one merged well (a single minimum)
    const start = seq.potential(x, 0);
    let minima = 0;
    for (let j = 1; j < x.length - 1; j++) if (start[j] < start[j - 1] && start[j] <= start[j + 1]) minima++;
    expect(minima).toBe(1);
  });

  it('the merge is the mirror image: separated wells at τ = 0 meet in one well at the end', () => {
    const seq = splitSequence({ kappas: [2, 1], separation: 12, direction: 'merge' });
    const x = fineAxis(-10, 10, 2e-4);
    const first = seq.potential(x, 0);
    const p = [sampledMinimum(x, first, -10, 0), sampledMinimum(x, first, 0, 10)];
    expect(Math.abs(p[1] - p[0] - 12)).toBeLessThan(5e-4);
    // KdV is invariant under (ξ, τ) → (−ξ, −τ) (Drazin & Johnson 1989, §1): the merged end mirrors the split start
    const split = splitSequence({ kappas: [2, 1], separation: 12 });
    const endMerge = seq.potential(x, seq.tauEnd);
    const startSplit = split.potential(Float64Array.from(x, (v) => -v), 0);
    expect(maxAbsDiff(endMerge, startSplit)).toBeLessThan(1e-6);
  });

  it('collision: the wells come out with the phase shifts of Drazin & Johnson (1989)', () => {
    const [k1, k2] = [2, 1];
    const seq = collisionSequence([k1, k2], 16);
    const x = fineAxis(-40, 40, 2e-4);
    const u0 = seq.potential(x, 0);
    const u1 = seq.potential(x, seq.tauEnd);
    const before = [sampledMinimum(x, u0, -40, 0), sampledMinimum(x, u0, 0, 40)];
    const after = [sampledMinimum(x, u1, 0, 40), sampledMinimum(x, u1, -40, 0)];
    const v = [4 * k1 * k1 + seq.drift, 4 * k2 * k2 + seq.drift];
    const shift = Math.log((k1 + k2) / (k1 - k2)); // physics.md §4 (Drazin & Johnson 1989)
    expect(Math.abs(after[0] - before[0] - v[0] * seq.tauEnd - shift / k1)).toBeLessThan(1e-6);
    expect(Math.abs(after[1] - before[1] - v[1] * seq.tauEnd + shift / k2)).toBeLessThan(1e-6);
    expect(Math.abs(after[0] - after[1] - 16)).toBeLessThan(1e-6);
  });

  it('the sequence is the design flow from its first frame (integrateFlow with the same drift)', () => {
    const seq = splitSequence({ kappas: [2, 1], separation: 12 });
    const grid = makeGrid(40, 1024);
    const tau = 0.2;
    const run = integrateFlow(grid, naturalFlowEquation('quantum', seq.drift), seq.potential(grid.x, 0), { tolerance: 1e-11, frames: [tau] });
    expect(maxAbsDiff(run.frames[run.frames.length - 1], seq.potential(grid.x, tau))).toBeLessThan(1e-7);
  });

  it('transport moves one well by the requested distance', () => {
    const seq = transportSequence(1.5, -3, 5, 0.7);
    const x = fineAxis(-8, 8, 2e-4);
    expect(Math.abs(sampledMinimum(x, seq.potential(x, 0.7), -8, 8) - 2)).toBeLessThan(1e-6); // −3 + 5 (common practice)
  });

  it('explains what cannot be had: equal depths, unreachable positions', () => {
    expect(() => splitSequence({ kappas: [1, 1], separation: 5 })).toThrow(/nearest admissible κ.*\[1\.00000, 0\.952381\]/i);
    const near = nearestAdmissible([1, 1, 0.99], 1.1);
    [1, 1 / 1.1, 1 / 1.21].forEach((v, i) => expect(near[i]).toBeCloseTo(v, 14)); // ratios 1.1 (definition)
    // three wells: positions at one τ are affine in κ² (speeds 4κ²), so equal spacing with κ = 3, 2, 1 is out of reach
    expect(() => reachableSplit([3, 2, 1], [5, 0, -5], 1e-3)).toThrow(/nearest reachable/);
    const ok = reachableSplit([3, 2, 1], [11, 6, 3], 1e-9); // p = A + 4τκ² with A = 2, 4τ = 1 (hand calculation)
    expect(ok.separation).toBeCloseTo(8, 12);
    expect(ok.centre).toBeCloseTo(20 / 3, 12);
  });
});

describe('budgets (src/flow/budgets.ts)', () => {
  it('the width at half depth of −2κ² sech²(κξ) is 2 arccosh(√2)/κ', () => {
    const x = fineAxis(-10, 10, 1e-3);
    for (const k of [0.7, 2]) {
      const u = x.map((v) => -2 * k * k / Math.cosh(k * v) ** 2);
      expect(Math.abs(narrowestFeature(x, [u]).narrowest - (2 * Math.acosh(Math.SQRT2)) / k)).toBeLessThan(1e-5); // closed form
    }
  });

  it('the −6 sech² split (Drazin & Johnson 1989) needs 4/3 of the starting depth and ends with the κ = 2 width', () => {
    const x = fineAxis(-15, 25, 1e-3);
    const frames = [0, 0.25, 0.5, 1].map((t) => x.map((v) => twoSolitonFromSech2(v, t)));
    const d = depthBudget(frames);
    expect(d.startDepth).toBeCloseTo(6, 10);
    expect(Math.abs(d.ratio - 8 / 6)).toBeLessThan(1e-6); // depth 2κ² = 8 of the κ = 2 soliton
    expect(d.frame).toBe(3);
    const r = narrowestFeature(x, frames);
    expect(Math.abs(r.narrowest - Math.acosh(Math.SQRT2))).toBeLessThan(1e-5); // 2 arccosh(√2)/κ with κ = 2
  });
});
