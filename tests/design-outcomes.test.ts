/** The design job asked for an outcome (initial.kind target / reflectionless), its budgets, and the design summary's honesty. */
import { describe, expect, it } from 'vitest';
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { encodeNpy } from '../src/io/npy.ts';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { parseConfig } from '../src/io/config.ts';
import { runDesign, writeDesignOutputs } from '../src/jobs/design.ts';
import { runVerify } from '../src/jobs/verify.ts';
import { makeGrid } from '../src/spectral/grid.ts';
import { findWells } from '../src/flow/wells.ts';
import { nSolitonPotential } from '../src/flow/solitons.ts';
import { lowestEigenpairs } from '../src/quantum/eigen.ts';
import { boxThreshold } from '../src/quantum/bound.ts';
import { DISPERSION_EXPLANATION } from '../src/units/scales.ts';
import { ATOMIC_MASS_CONSTANT, BOLTZMANN_K, HBAR } from '../src/units/constants.ts';
import { speciesMass } from '../src/units/species.ts';
import { checkSummaryRows } from '../src/report/panels/check.ts';
import { designSummaryRows } from '../src/report/panels/design.ts';
import type { CheckReport } from '../src/io/formats/check.ts';
import { readSequenceFile } from '../src/io/formats/sequence.ts';
import { userErrorOf } from './user-error.ts';

const cfg = (initial: string, flow = 'flow: { frames: 3, tolerance: 1e-9 }', extra = '', grid = 'grid: { length: 60, points: 256 }') =>
  parseConfig(`name: t\n${grid}\ninitial: ${initial}\n${flow}\n${extra}`, 't.yaml', '.');

describe('initial.kind target through the design job', () => {
  it('two wells of depths 4 : 1 end 8 apart, symmetric about the centre, and the summary says the outcome is met', () => {
    const r = runDesign(cfg('{ kind: target, outcome: split, depths: [2, 0.5], separation: 8, center: 1 }'));
    const o = r.summary.outcome!;
    expect(o.met).toBe(true);
    // depth 2κ² (physics.md §4): κ = 1 and ½; the symmetric drift −(4/N)Σκ² = −2.5 (Σ of the speeds 4κ² + c is 0)
    expect(r.ctx.config.flow.drift).toBeCloseTo(-2.5, 12);
    const p = o.wells.map((w) => w.reached_position!).sort((a, b) => b - a);
    expect(Math.abs(p[0] - p[1] - 8)).toBeLessThan(1e-3 * 1); // width 1/κ_max = 1 (the requested tolerance)
    expect(Math.abs(0.5 * (p[0] + p[1]) - 1)).toBeLessThan(1e-3); // mean position kept at the centre
    // the flow from the built start equals the exact two-soliton sequence (Kay & Moses 1956) at the end
    expect(o.exact_distance_relative).toBeLessThan(1e-4);
  });

  it('the verified drive keeps the eigenstates of a target split, whose flow has a drift (the correction gains λ̇ c k)', async () => {
    // −c u_ξ = [−c∂_ξ, −∂² + u] adds −c∂_ξ to the Lax operator (Lax, Comm. Pure Appl. Math. 21, 467, 1968; physics.md §3)
    const c = cfg('{ kind: target, outcome: split, depths: [2, 0.5], separation: 8 }', 'flow: { frames: 5, tolerance: 1e-9 }', 'protocol: { duration: 4 }\nverify: { states: 2 }\n');
    const v = (await runVerify(c, runDesign(c))).file;
    v.states.forEach((st) => expect(st.fidelity_cd).toBeGreaterThan(1 - 1e-6)); // exact CD (physics.md §1)
    v.states.forEach((st) => expect(st.fidelity_bare).toBeLessThan(0.5)); // a 4 t₀ ramp excites (common practice)
  });

  it('a transport moves one well by the distance asked in the λ given; a moving well is no budget warning', () => {
    const r = runDesign(cfg('{ kind: target, outcome: transport, depths: [1], distance: 10, center: -5 }', 'flow: { lambda_end: 2, frames: 5, tolerance: 1e-9 }'));
    // speed 4κ² + c (physics.md §4) with κ² = ½: c = distance/λ − 4κ² = 5 − 2 = 3 (hand calculation)
    expect(r.ctx.config.flow.drift).toBeCloseTo(3, 12);
    expect(Math.abs(r.summary.outcome!.wells[0].reached_position! - 5)).toBeLessThan(1e-3 / Math.SQRT1_2);
    expect(r.summary.warnings.filter((w) => w.includes('starting'))).toEqual([]); // same well, sampled elsewhere
  });

  it('refuses what cannot be had, naming the key and offering the nearest admissible request (exit 2)', () => {
    const equal = userErrorOf(() => cfg('{ kind: target, outcome: split, depths: [0.5, 0.5], separation: 8 }'));
    // κ = √(d/2) = ½ twice; the nearest admissible lowers the second κ by MIN_KAPPA_RATIO 1.05: d = 0.5/1.05² (definition)
    expect(equal).toContain('initial.depths = [0.5,0.5] is not allowed: the depths must all differ');
    expect(equal).toContain(`[0.50000, ${(0.5 / 1.05 ** 2).toPrecision(5)}]`);
    // three wells: final positions are affine in κ² (speeds 4κ²), so equal spacing with depths 18, 8, 2 cannot be had
    const far = userErrorOf(() => cfg('{ kind: target, outcome: split, depths: [18, 8, 2], positions: [5, 0, -5] }'));
    expect(far).toMatch(/initial\.positions = \[5, 0, -5\] is not allowed: a split cannot reach them.*nearest reachable/);
    const end = userErrorOf(() => cfg('{ kind: target, outcome: split, depths: [2, 0.5], separation: 8 }', 'flow: { lambda_end: 1 }'));
    expect(end).toContain('flow.lambda_end = 1 is not allowed: initial.kind target with outcome split sets it');
    const gap = userErrorOf(() => cfg('{ kind: target, outcome: collision, depths: [2, 0.5] }'));
    expect(gap).toContain('initial.gap is missing: required with outcome collision');
  });
});

describe('initial.kind reflectionless through the design job', () => {
  it('−6 sech²ξ is its own reflectionless fit and sheds nothing (Kay & Moses 1956; Landau & Lifshitz §23)', () => {
    const r = runDesign(cfg('{ kind: reflectionless, from: { kind: sech2, depth: 6, width: 1 } }', 'flow: { lambda_end: 0.05, frames: 2, tolerance: 1e-9 }', '', 'grid: { length: 40, points: 256 }'));
    const fit = r.summary.outcome!.fit!;
    expect(fit.distance_l2_relative).toBeLessThan(1e-8);
    expect(Math.abs(fit.radiation_fraction)).toBeLessThan(1e-8); // ∫u² = (16/3)Σκ³ for κ = 2, 1 (closed form)
    expect(r.summary.outcome!.met).toBe(true);
  });

  it('a Gaussian trap: the start keeps its bound states and the summary states the radiation the trap would shed', () => {
    const r = runDesign(cfg('{ kind: reflectionless, from: { kind: wells, wells: [{ shape: gaussian, depth: 4, width: 1 }] } }', 'flow: { lambda_end: 0.05, frames: 2, tolerance: 1e-9 }', '', 'grid: { length: 40, points: 256 }'));
    const fit = r.summary.outcome!.fit!;
    expect(fit.radiation_fraction).toBeGreaterThan(0); // a Gaussian is not reflectionless (common practice)
    expect(fit.distance_l2_relative).toBeGreaterThan(1e-3);
    // the start is the Kay–Moses potential of the fit: isospectral with the Gaussian (the design's own bound states)
    expect(r.summary.spectral_drift!).toBeLessThan(1e-8);
  });
});

describe('initial.from of a reflectionless start', () => {
  it('reads a samples file relative to the config and names initial.from.file when it is missing', () => {
    const dir = mkdtempSync(join(tmpdir(), 'isotrap-from-'));
    writeFileSync(join(dir, 'v.npy'), encodeNpy(Float64Array.from({ length: 256 }, (_, j) => -6 / Math.cosh(-20 + (40 * j) / 256) ** 2), [256]));
    const c = parseConfig('name: t\ngrid: { length: 40, points: 256 }\ninitial: { kind: reflectionless, from: { kind: samples, file: v.npy } }\nflow: { lambda_end: 0.01 }\n', 't.yaml', dir);
    expect(c.initial.kind === 'reflectionless' && c.initial.from.kind === 'samples' && c.initial.from.file).toBe(join(dir, 'v.npy'));
    const missing = userErrorOf(() => parseConfig('name: t\ngrid: { length: 40, points: 256 }\ninitial: { kind: reflectionless, from: { kind: samples, file: nope.npy } }\nflow: { lambda_end: 0.01 }\n', 't.yaml', dir));
    expect(missing).toContain('initial.from.file = "nope.npy" is not allowed: file not found');
  });
});

describe('budgets', () => {
  it('the split of −6 sech²ξ needs 8/6 of the starting depth and warns past budget.depth (Drazin & Johnson 1989)', () => {
    const r = runDesign(cfg('{ kind: target, outcome: split, depths: [8, 2], separation: 10 }', 'flow: { frames: 2, tolerance: 1e-9 }', 'budget: { depth: 7, feature: 1 }', 'grid: { length: 40, points: 512 }'));
    const b = r.summary.budgets;
    // merged start −6 sech² (Pöschl–Teller κ = 2, 1), deepest well 2κ₁² = 8 at the end (physics.md §4)
    // budgets are read off the grid samples (spacing h = 0.078): a minimum between samples is missed by ≲ d(κh/2)²
    expect(Math.abs(b.start_depth - 6)).toBeLessThan(6 * 0.01);
    expect(Math.abs(b.depth_ratio - 8 / 6)).toBeLessThan(0.02);
    // width at half depth 2 arccosh(√2)/κ (closed form) for κ = 2 at the end, the merged −6 sech²ξ: 2 arccosh(√2)
    // (the half-depth points are interpolated linearly between samples: error ≲ h²/4)
    expect(Math.abs(b.narrowest_feature! - Math.acosh(Math.SQRT2))).toBeLessThan(5e-3);
    expect(Math.abs(b.start_feature! - 2 * Math.acosh(Math.SQRT2))).toBeLessThan(5e-3);
    expect(r.summary.warnings.some((w) => w.includes('beyond budget.depth = 7'))).toBe(true);
    expect(r.summary.warnings.some((w) => w.includes('below budget.feature = 1'))).toBe(true);
  });
});

describe('small defects of the design summary', () => {
  it('"wells found" are wells, not radiation ripples: three solitons plus a ripple train show three wells', () => {
    // ripples −a cos kξ with a = 0.05, k = 3 have strength 2a/k² ≈ 0.01 (linear: Ursell number a/k² ≪ 1, Whitham 1974
    // §13.11); the three solitons κ = 1.5, 1, 0.7 (Kay & Moses 1956) each have strength 2
    const grid = makeGrid(80, 1024);
    const u = nSolitonPotential([{ kappa: 1.5, center: 12 }, { kappa: 1, center: 0 }, { kappa: 0.7, center: -12 }], grid.x, 0);
    grid.x.forEach((x, j) => { if (x < -22) u[j] -= 0.05 * Math.cos(3 * x) * Math.exp(-(((x + 30) / 5) ** 2)); });
    const wells = findWells(grid, u);
    expect(wells).toHaveLength(3);
    wells.forEach((w, i) => expect(w.depth).toBeCloseTo(2 * [1.5, 1, 0.7][i] ** 2, 3)); // depth 2κ² (physics.md §4)
  });

  it('δ² of a Gaussian uses the curvature width √2σ, as the README and the summary state it', () => {
    const r = runDesign(cfg('{ kind: wells, wells: [{ shape: gaussian, depth: 4, width: 1.5 }] }', 'flow: { lambda_end: 0.01, frames: 2, tolerance: 1e-8 }', '', 'grid: { length: 40, points: 256 }'));
    // u = −4 exp(−ξ²/2σ²): u″(0) = 4/σ², w² = 2u₀/u″ = 2σ² (closed form), δ² = 1/(u₀w²) (physics.md §3)
    expect(r.ctx.delta2).toBeCloseTo(1 / (4 * 2 * 1.5 ** 2), 6);
    expect(DISPERSION_EXPLANATION).toContain('√2σ for a Gaussian');
    expect(readFileSync('README.md', 'utf8')).toContain('w = √(2V₀/V″) the curvature width at the minimum of the deepest well (√2σ for a Gaussian');
  });

  it('with no bound state the bound-state drift is "not tested", not 0 (design and check)', () => {
    // −0.001 sech²ξ binds at E ≈ −(∫u/2)² = −1e-6, above the box threshold −(2π/40)² (common practice)
    const r = runDesign(cfg('{ kind: sech2, depth: 0.001, width: 1 }', 'flow: { lambda_end: 0.01, frames: 2, tolerance: 1e-8 }', '', 'grid: { length: 40, points: 256 }'));
    expect(r.summary.spectral_drift).toBeNull();
    const dir = join(mkdtempSync(join(tmpdir(), 'isotrap-untested-')), 'out');
    writeDesignOutputs(r, dir, false);
    const seq = readSequenceFile(join(dir, 'sequence.json'));
    expect(seq.summary.spectral_drift).toBeNull();
    expect(designSummaryRows(seq).find((row) => row.key === 'bound-state drift')?.value).toMatch(/^not tested/);
    const check = { input: 'x.npy', summary: ['v'], intervals: [], spectral_drift: 0, isospectral: null } as Partial<CheckReport>;
    expect(checkSummaryRows({ ...check, fit: { max_residual: 0 }, frames: [{ tau: 0 }], repaired: { relative_l2: 0 } } as CheckReport).find((row) => row.key === 'bound-state drift')?.value).toMatch(/^not tested/);
  });

  it('the ⁴⁰K Gaussian well: predicted depths equal a fine solve to 1e-6 of the depth and no false drift is reported', () => {
    const r = runDesign(parseConfig('name: k\nunits: { system: lab, species: K40, energy: uK }\ngrid: { length: 100, points: 2048 }\ninitial: { kind: wells, wells: [{ shape: gaussian, depth: 0.15, width: 2 }] }\nflow: { lambda_end: 0.002, frames: 2 }\n', 'k.yaml', '.'));
    // natural units (physics.md §3) with CODATA 2018 ħ, k_B and the AME2020 ⁴⁰K mass; reference: Fourier collocation
    // diagonalised by Chebyshev-filtered Lanczos (quantum/eigen.ts) on 512 points of the same box
    const e0 = (HBAR * HBAR) / (2 * speciesMass('K40') * ATOMIC_MASS_CONSTANT * 1e-12);
    const toUk = (e: number) => (e * e0) / (1e-6 * BOLTZMANN_K);
    const depth = 0.15;
    const coarse = makeGrid(100, 512);
    const u = coarse.x.map((x) => -(depth / toUk(1)) * Math.exp(-0.5 * (x / 2) ** 2));
    const ref = lowestEigenpairs(coarse, u, 12, { residualTol: 1e-9 }).energies.filter((e) => e < boxThreshold(100));
    expect(r.predicted).toHaveLength(ref.length);
    r.predicted.forEach((p, i) => expect(Math.abs(p.depth - toUk(-2 * ref[i]))).toBeLessThan(1e-6 * depth)); // depth 2κ² = −2E
    expect(r.summary.spectral_drift!).toBeLessThan(1e-6 * depth);
  });
});
