import { describe, expect, it } from 'vitest';
import { makeGrid } from '../src/spectral/grid.ts';
import { twoSolitonFromSech2 } from '../src/flow/solitons.ts';
import { verifySequence } from '../src/quantum/verify.ts';
import { gaussianRandomField } from '../src/spectral/random-field.ts';
import { tmpdir } from 'node:os';
import { stringify } from 'yaml';
import { parseConfig } from '../src/io/config.ts';
import { runDesign } from '../src/jobs/design.ts';
import { runVerify } from '../src/jobs/verify.ts';

// two-soliton split of −6 sech²ξ (Drazin & Johnson, Solitons: an Introduction, 1989; physics.md §4), fast enough
// that the bare ramp loses most of the ground state
const grid = makeGrid(24, 256);
const split = (tau: number, out: Float64Array): void => { grid.x.forEach((x, j) => { out[j] = twoSolitonFromSech2(x, tau); }); };
const run = (errors: { scale?: number; depth?: number; shift?: number; psf?: number }) =>
  verifySequence({ grid, potential: split, lambdaEnd: 0.1, ramp: 'smooth', duration: 0.3, states: 2, tol: 1e-10, drives: ['cd'], errors, traceSamples: 0, strengthSamples: 0 });

/** least-squares slope of log y against log x (common practice: the exponent of a power law) */
function logSlope(x: number[], y: number[]): number {
  const xs = x.map(Math.log), ys = y.map(Math.log);
  const mx = xs.reduce((a, b) => a + b) / xs.length, my = ys.reduce((a, b) => a + b) / ys.length;
  return xs.reduce((t, v, i) => t + (v - mx) * (ys[i] - my), 0) / xs.reduce((t, v) => t + (v - mx) ** 2, 0);
}

describe('errors a lab makes in building the correction (quantum/propagator.ts DriveErrors)', () => {
  it('no error reproduces the exact correction to the last digit; a correction scale error ε costs infidelity ∝ ε² (first-order perturbation theory: the amplitude error is linear in ε; fitted exponent 2 ± 0.05)', () => {
    const exact = run({}).drives[0].fidelity;
    expect(run({ scale: 0, depth: 0, shift: 0 }).drives[0].fidelity).toEqual(exact);
    const eps = [0.005, 0.01, 0.02];
    const loss = eps.map((e) => 1 - run({ scale: e }).drives[0].fidelity[0]);
    const slope = logSlope(eps, loss);
    expect(Math.abs(slope - 2)).toBeLessThan(0.05); // measured 2.001
    expect(loss[0]).toBeGreaterThan(1e3 * (1 - exact[0])); // well above the time-stepping floor
  }, 60_000);

  it('a calibration error of the depth and a late correction each cost fidelity, growing with the error (common practice)', () => {
    const depth = [0.01, 0.03].map((d) => 1 - run({ depth: d }).drives[0].fidelity[0]);
    const late = [0.003, 0.01].map((s) => 1 - run({ shift: s }).drives[0].fidelity[0]);
    for (const l of [depth, late]) {
      expect(l[0]).toBeGreaterThan(1e-8);
      expect(l[1]).toBeGreaterThan(l[0]);
    }
    expect(() => run({ scale: Number.NaN })).toThrow(/errors\.scale = NaN must be a finite number/);
  }, 60_000);

  it('an optical point-spread function of 1/e² radius w costs infidelity ∝ w⁴ (the blur changes V by (w²/8)V″ + O(w⁴), so the amplitude error is ∝ w²: first-order perturbation theory; fitted exponent 4 ± 0.15)', () => {
    // Gaussian blur e^{−k²w²/8} (spectral/blur.ts): Taylor expansion of the multiplier, 1 − k²w²/8 + …
    const exact = run({}).drives[0].fidelity;
    expect(run({ psf: 0 }).drives[0].fidelity).toEqual(exact);
    const ws = [0.05, 0.1, 0.2];
    const loss = ws.map((w) => 1 - run({ psf: w }).drives[0].fidelity[0]);
    const slope = logSlope(ws, loss);
    expect(Math.abs(slope - 4)).toBeLessThan(0.15); // measured 3.96
    expect(loss[0]).toBeGreaterThan(1e3 * (1 - exact[0]));
  }, 60_000);
});

describe('shot-to-shot potential noise (spectral/random-field.ts, quantum/shots.ts)', () => {
  it('the Gaussian random field has rms σ and correlation σ²exp(−r²/2ℓ_c²) over realisations (closed form of the spectral synthesis; statistical error ≈ 2 %)', () => {
    const g = makeGrid(40, 256);
    const sigma = 0.3, ell = 1.5, shots = 400;
    const lag = Math.round(ell / g.dx); // r = lag·dx ≈ ℓ_c
    let v0 = 0, vr = 0, count = 0;
    for (let s = 0; s < shots; s++) {
      const f = gaussianRandomField(g, sigma, ell, 1000 + s);
      for (let j = 0; j < g.n; j++) {
        v0 += f[j] * f[j];
        vr += f[j] * f[(j + lag) % g.n];
        count++;
      }
    }
    const r = lag * g.dx;
    expect(Math.abs(Math.sqrt(v0 / count) / sigma - 1)).toBeLessThan(0.03);
    expect(Math.abs(vr / count / (sigma * sigma) - Math.exp(-(r * r) / (2 * ell * ell)))).toBeLessThan(0.03);
    // a realisation is fixed by its seed
    expect(Array.from(gaussianRandomField(g, sigma, ell, 7))).toEqual(Array.from(gaussianRandomField(g, sigma, ell, 7)));
  });

  it('the shot-averaged infidelity of the exact correction grows as rms² (first-order perturbation theory: a static δV mis-tracks the states by an amplitude ∝ δV; fitted exponent 2 ± 0.05), the spread is reported per shot', async () => {
    const doc = (rms: number) => ({
      name: 'noise', grid: { length: 30, points: 256 }, initial: { kind: 'sech2', depth: 6, width: 1, center: 0 }, flow: { lambda_end: 0.3, frames: 7 },
      protocol: { duration: 1, ramp: 'sin2' }, verify: { states: 2, tolerance: 1e-10, errors: { noise_rms: rms, noise_correlation: 1, noise_shots: 4 } },
    });
    const rms = [0.002, 0.004, 0.008];
    const config0 = parseConfig(stringify(doc(rms[0])), 'n.yaml', tmpdir());
    const design = runDesign(config0);
    const loss: number[] = [];
    for (const a of rms) {
      const r = await runVerify(parseConfig(stringify(doc(a)), 'n.yaml', tmpdir()), design, { traceSamples: 0 });
      loss.push(1 - r.file.states[0].fidelity_cd);
      const spread = r.file.errors!.noise_spread!.find((d) => d.drive === 'cd')!;
      expect(spread.min_fidelity_per_shot).toHaveLength(4);
      expect(spread.worst_fidelity[0]).toBeLessThanOrEqual(r.file.states[0].fidelity_cd);
    }
    expect(Math.abs(logSlope(rms, loss) - 2)).toBeLessThan(0.05); // measured 2.000
    expect(loss[0]).toBeGreaterThan(1e3 * 1e-10); // far above the time-stepping budget
    await expect(runVerify(parseConfig(stringify({ ...doc(0.01), verify: { states: 2, errors: { noise_rms: 0.01 } } }), 'n.yaml', tmpdir()), design)).rejects.toThrow(/verify\.errors\.noise_correlation is missing/);
  }, 120_000);
});
