import { EigenvalueDecomposition } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { integrateFlow } from '../src/flow/kdv.ts';
import { makeGrid, type Grid } from '../src/spectral/grid.ts';
import { spectrum } from '../src/spectral/ops.ts';
import { RealFFT } from '../src/spectral/fft.ts';
import { denseHamiltonian } from '../src/quantum/eigen.ts';
import { fitSequence } from '../src/check/flowfit.ts';
import { cubicSchedule, frameRates } from '../src/check/rates.ts';
import { evaluateG, gaugeCost, legendreTable, subspaceOf, subspaceWeights, variationalFit } from '../src/check/variational.ts';
import { RealGridOperators } from '../src/spectral/real-operators.ts';
import { compareCorrections, variationalSchedule } from '../src/check/drive.ts';

function bandLimit(grid: Grid, u: Float64Array): Float64Array {
  const s = spectrum(u);
  for (let m = Math.floor(grid.n / 3) + 1; m <= grid.n / 2; m++) s[2 * m] = s[2 * m + 1] = 0;
  const out = new Float64Array(grid.n);
  new RealFFT(grid.n).inverse(s, out);
  return out;
}

describe('variational gauge potential: the cost in operator form equals the eigenbasis pair sum', () => {
  it('Σ_m w_m Σ_{n∉deg m} |(u_λ)_nm + (E_n − E_m) B_nm|² from all N dense eigenvectors', () => {
    const g = makeGrid(20, 64);
    const u = g.x.map((x) => -3 / Math.cosh(x) ** 2 + 0.02 * x * x);
    const ul = g.x.map((x) => Math.exp(-x * x) * (1 + 0.3 * x));
    const leg = legendreTable(g, 3);
    const sub = subspaceOf(g, u, 3, 'dense');
    const w = subspaceWeights(sub.energies, 0.7);
    const a = 0.3, th = [-0.5, 0.2, 0.1, -0.05, 0.02];
    const op = gaugeCost(g, u, ul, sub, w, leg, a, th);
    // independent: full dense eigenbasis, B_nm = a(ψ_n, D³ψ_m) − ½Σ_j φ_j(ψ_n Dψ_m − Dψ_n ψ_m) (module doc derivation)
    const evd = new EigenvalueDecomposition(denseHamiltonian(g, u), { assumeSymmetric: true });
    const E = evd.realEigenvalues;
    const V = evd.eigenvectorMatrix;
    const ops = new RealGridOperators(g);
    const vec = (i: number) => Float64Array.from({ length: g.n }, (_, j) => V.get(j, i));
    const gfun = evaluateG(th, u, leg, new Float64Array(g.n));
    let ref = 0;
    for (let mi = 0; mi < 3; mi++) {
      const m = E.map((_, i) => i).sort((p, q) => E[p] - E[q])[mi];
      const pm = vec(m);
      const dpm = new Float64Array(g.n), d3pm = new Float64Array(g.n);
      ops.d1(pm, dpm); ops.d3(pm, d3pm);
      for (let n = 0; n < g.n; n++) {
        if (Math.abs(E[n] - E[m]) < 1e-7) continue;
        const pn = vec(n);
        const dpn = new Float64Array(g.n);
        ops.d1(pn, dpn);
        let vl = 0, b3 = 0, bg = 0;
        for (let j = 0; j < g.n; j++) { vl += pn[j] * ul[j] * pm[j]; b3 += pn[j] * d3pm[j]; bg += gfun[j] * (pn[j] * dpm[j] - dpn[j] * pm[j]); }
        const G = vl + (E[n] - E[m]) * (a * b3 - 0.5 * bg);
        ref += w[mi] * G * G;
      }
    }
    expect(Math.abs(op - ref) / ref).toBeLessThan(1e-9); // same quantity, two derivations (common practice: round-off)
  });
});

describe('variational gauge potential for an admissible sequence returns the exact cubic correction', () => {
  it('−6κ²sech²(κξ) split by the KdV flow: a = −4, g = −6u (physics.md §3) to 1e-6', () => {
    // κ = ½: the same −6 sech² split in the length unit 2ℓ (KdV scaling u → κ²u(κξ, κ³τ), Drazin & Johnson 1989),
    // chosen so that N = 256 resolves the emerging solitons far below 1e-6 (at κ = 1 the 2/3-rule cut limits the
    // discrete Lax identity to ~1e-5 on this grid, measured)
    const g = makeGrid(40, 256);
    const k = 0.5;
    const u0 = bandLimit(g, g.x.map((x) => (-6 * k * k) / Math.cosh(k * x) ** 2));
    const lam = Array.from({ length: 7 }, (_, i) => 2e-3 * (i + 0.3 * Math.sin(i)));
    const run = integrateFlow(g, { alpha: -6, beta: 1, drift: 0 }, u0, { tolerance: 1e-12, frames: lam });
    const fit = variationalFit(g, lam, run.frames);
    const leg = legendreTable(g, fit.legendre);
    for (const f of fit.frames) {
      expect(Math.abs(f.a + 4)).toBeLessThan(1e-6); // â = −4 (physics.md §3)
      const gg = evaluateG(f.coefficients, run.frames[f.index], leg, new Float64Array(g.n));
      let d = 0, s = 0;
      for (let j = 0; j < g.n; j++) { d = Math.max(d, Math.abs(gg[j] + 6 * run.frames[f.index][j])); s = Math.max(s, 6 * Math.abs(run.frames[f.index][j])); }
      expect(d / s).toBeLessThan(1e-6); // g = −6u (physics.md §3)
      expect(f.residual).toBeLessThan(1e-6);
    }
  });
});

describe('the exact correction at the frame spacing labs use: ∂_λu from the flow fit (check/rates.ts)', () => {
  it('21 frames of the κ = ½ split over τ ∈ [0, 4] (Δτ = 0.2): a = −4, g = −6u (physics.md §3) to 1e-6', () => {
    // the split of −6κ²sech²(κξ) (Drazin & Johnson 1989, scaled by κ = ½) integrated by the project's flow; at this
    // spacing the five-point λ-derivative route gives a between −10.7 and +2.7 (measured; the κ = 1 soliton moves
    // 0.8 widths per frame)
    const g = makeGrid(40, 256);
    const k = 0.5;
    const u0 = bandLimit(g, g.x.map((x) => (-6 * k * k) / Math.cosh(k * x) ** 2));
    const lam = Array.from({ length: 21 }, (_, i) => 0.2 * i);
    const run = integrateFlow(g, { alpha: -6, beta: 1, drift: 0 }, u0, { tolerance: 1e-12, frames: lam });
    const flow = fitSequence(g, run.frames, { passTolerance: 1e-6 });
    expect(flow.admissible).toBe(true);
    const rates = frameRates(g, lam, flow.tau, run.frames, flow.intervals);
    const fit = variationalFit(g, lam, run.frames, {}, rates.rates);
    const leg = legendreTable(g, fit.legendre);
    for (const f of fit.frames) {
      expect(Math.abs(f.a + 4)).toBeLessThan(1e-6); // â = −4 (physics.md §3)
      const u = run.frames[f.index];
      const gg = evaluateG(f.coefficients, u, leg, new Float64Array(g.n));
      let d = 0, s = 0;
      for (let j = 0; j < g.n; j++) { d = Math.max(d, Math.abs(gg[j] + 6 * u[j])); s = Math.max(s, 6 * Math.abs(u[j])); }
      expect(d / s).toBeLessThan(1e-6); // g = −6u (physics.md §3)
    }
  });
});

describe('harmonic trap with changing ω (Muga, Chen, Ibáñez, Lizuain & Ruschhaupt, J. Phys. B 43, 085509, 2010)', () => {
  const g = makeGrid(30, 128);
  const om = (l: number) => 1 + 1.5 * l; // ω from 1 to 2.5, dω/dλ = 1.5
  const lam = Array.from({ length: 21 }, (_, i) => i / 20);
  const frames = lam.map((l) => g.x.map((x) => (om(l) ** 2 * x * x) / 4)); // u = ω²ξ²/4 (2m = 1)
  const fit = variationalFit(g, lam, frames, { states: 4 });
  it('the variational correction is −(ω̇/4ω)(ξk + kξ): a = 0, g = −(ω̇/2ω)ξ to 1e-6', () => {
    const leg = legendreTable(g, fit.legendre);
    for (const f of fit.frames) {
      expect(Math.abs(f.a)).toBeLessThan(1e-6); // no k³ term (Muga et al. 2010)
      const gg = evaluateG(f.coefficients, frames[f.index], leg, new Float64Array(g.n));
      const c = -1.5 / (2 * om(f.lambda));
      let d = 0, s = 0;
      for (let j = 0; j < g.n; j++) { d = Math.max(d, Math.abs(gg[j] - c * g.x[j])); s = Math.max(s, Math.abs(c * g.x[j])); }
      expect(d / s).toBeLessThan(1e-6); // ½{g, k} = −(ω̇/4ω){ξ, k} ⇔ g = −(ω̇/2ω)ξ (Muga et al. 2010)
    }
  });
  it('keeps fidelity ≥ 1 − 1e-6 in the propagator; the bare drive and the cubic correction of the (failing) flow fit do not', () => {
    const flow = fitSequence(g, frames);
    const rates = frameRates(g, lam, flow.tau, frames, flow.intervals);
    expect(rates.fromFlow.some((f) => f)).toBe(false); // no KdV flow joins two parabolas (common practice argument)
    const r = compareCorrections({ grid: g, lambda: lam, frames, states: 4, duration: 0.8, drives: [
      { label: 'variational', schedule: variationalSchedule(fit) }, { label: 'cubic', schedule: cubicSchedule(lam, rates, fit.legendre) }, { label: 'none', schedule: null }] });
    for (let n = 0; n < 4; n++) expect(Math.abs(r.states[n].energyEnd - 2.5 * (n + 0.5))).toBeLessThan(1e-8); // E_n = ω(n + ½)
    const [vf, cf, nf] = r.drives;
    for (const f of vf.fidelity) expect(f).toBeGreaterThan(1 - 1e-6); // exact CD (Muga et al. 2010)
    for (const f of nf.fidelity) expect(f).toBeLessThan(0.99); // fast bare ramp excites (Muga et al. 2010, common practice)
    expect(cf.minFidelity).toBeLessThan(0.99);
  });
});

describe('a sequence that is not admissible: a Pöschl–Teller well that deepens and moves', () => {
  it('the variational correction beats the fitted cubic one (a translation here), which beats none', () => {
    const g = makeGrid(30, 128);
    const lam = Array.from({ length: 21 }, (_, i) => i / 20);
    // −s(s+1)sech²(ξ − 2λ), s(s+1) from 6 to 12: levels −(s − n)² move (Landau & Lifshitz §23), so no exact A exists
    const frames = lam.map((l) => g.x.map((x) => -(6 + 6 * l) / Math.cosh(x - 2 * l) ** 2));
    const fit = variationalFit(g, lam, frames, { states: 4 });
    const flow = fitSequence(g, frames);
    const cub = cubicSchedule(lam, frameRates(g, lam, flow.tau, frames, flow.intervals), fit.legendre);
    const r = compareCorrections({ grid: g, lambda: lam, frames, states: 2, duration: 2, drives: [
      { label: 'variational', schedule: variationalSchedule(fit) }, { label: 'cubic', schedule: cub }, { label: 'none', schedule: null }] });
    const [vf, cf, nf] = r.drives;
    for (let i = 0; i < 2; i++) {
      expect(vf.fidelity[i]).toBeGreaterThanOrEqual(cf.fidelity[i]); // variational principle: the cubic A is in the span
      expect(cf.fidelity[i]).toBeGreaterThan(nf.fidelity[i]);
      // excess energy is a deviation from the adiabatic level either way: compare magnitudes (the fitted cubic one of
      // this non-admissible sequence rests on drifts fitted over Δτ ~ 1e-11 and may land below the level)
      expect(Math.abs(vf.excessEnergy[i])).toBeLessThanOrEqual(Math.abs(cf.excessEnergy[i]));
    }
  });
});

describe('runCheck with the opt-in variational step', () => {
  it('adds a variational block: the harmonic trap gets g = −(ω̇/2ω)ξ and the correction wins', async () => {
    const { mkdtempSync, writeFileSync } = await import('node:fs');
    const { tmpdir } = await import('node:os');
    const { join } = await import('node:path');
    const { encodeNpy } = await import('../src/io/npy.ts');
    const { runCheck } = await import('../src/jobs/check.ts');
    const g = makeGrid(30, 128);
    const om = (l: number) => 1 + 1.5 * l;
    const lam = Array.from({ length: 21 }, (_, i) => i / 20);
    const flat = new Float64Array(lam.length * g.n);
    lam.forEach((l, k) => g.x.forEach((x, j) => (flat[k * g.n + j] = (om(l) ** 2 * x * x) / 4)));
    const dir = mkdtempSync(join(tmpdir(), 'isotrap-var-'));
    writeFileSync(join(dir, 'p.npy'), encodeNpy(flat, [lam.length, g.n]));
    writeFileSync(join(dir, 'sequence.json'), JSON.stringify({ x: Array.from(g.x), lambda: lam, length_unit: 'ℓ', energy_unit: 'E₀' }));
    const r = runCheck({ input: join(dir, 'p.npy'), variational: { states: 4, duration: 0.8 } });
    // ω² changes the levels ω(n + ½): not isospectral, so no flow joins the frames (Muga et al. 2010; physics.md §5)
    expect(r.admissible).toBe(false);
    expect(r.report.isospectral).toBe(false);
    expect(r.report.fit.failed).toHaveLength(20);
    const v = r.report.variational!;
    expect(v.frames[0].coefficients[2]).toBeCloseTo((-1.5 / 2) * (30 / 2), 6); // g = −(ω̇/2ω)ξ = θ P₁(2ξ/L) (Muga et al. 2010)
    expect(v.comparison.drives[0].min_fidelity).toBeGreaterThan(1 - 1e-6); // exact CD (Muga et al. 2010)
    expect(v.comparison.drives[2].min_fidelity).toBeLessThan(0.99); // bare fast ramp excites (common practice)
  });
});
