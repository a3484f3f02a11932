import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { encodeNpy } from '../src/io/npy.ts';
import { parseConfig } from '../src/io/config.ts';
import { runDesign } from '../src/jobs/design.ts';
import { userErrorOf } from './user-error.ts';

const cfg = (initial: string, flow = 'flow: { dispersion: quantum, lambda_end: 0.05, frames: 2, tolerance: 1e-8 }', grid = 'grid: { length: 40, points: 512 }') =>
  parseConfig(`name: t\n${grid}\ninitial: ${initial}\n${flow}\n`, 'test.yaml', '.');

describe('design diagnostics', () => {
  for (const N of [1, 2, 3]) {
    it(`−N(N+1) sech²ξ, N = ${N}: bound states −(N−n)² predict solitons κ = 1 … N`, () => {
      // Pöschl–Teller levels (Landau & Lifshitz, Quantum Mechanics §23) and their soliton content
      // (Gardner, Greene, Kruskal & Miura, Phys. Rev. Lett. 19, 1095, 1967)
      const r = runDesign(cfg(`{ kind: sech2, depth: ${N * (N + 1)}, width: 1 }`));
      const kappas = r.predicted.map((p) => p.kappa);
      expect(kappas).toHaveLength(N);
      kappas.forEach((k, i) => expect(k).toBeCloseTo(N - i, 8));
      r.predicted.forEach((p, i) => {
        expect(p.depth).toBeCloseTo(2 * (N - i) ** 2, 7);
        expect(p.speed).toBeCloseTo(4 * (N - i) ** 2, 7);
      });
    });
  }

  it('samples on a coarser grid (.npy) are resampled spectrally: −6 sech² from 256 samples keeps its levels −4, −1', () => {
    // Pöschl–Teller levels −(N−n)² with N = 2 (Landau & Lifshitz §23)
    const dir = mkdtempSync(join(tmpdir(), 'isotrap-samples-'));
    const m = 256;
    const values = Float64Array.from({ length: m }, (_, j) => -6 / Math.cosh(-20 + (40 * j) / m) ** 2);
    writeFileSync(join(dir, 'v.npy'), encodeNpy(values, [m]));
    const c = parseConfig('name: t\ngrid: { length: 40, points: 512 }\ninitial: { kind: samples, file: v.npy }\nflow: { lambda_end: 0.01, frames: 2, tolerance: 1e-8 }\n', 't.yaml', dir);
    const r = runDesign(c);
    expect(r.bound.energies).toHaveLength(2);
    expect(r.bound.energies[0]).toBeCloseTo(-4, 7);
    expect(r.bound.energies[1]).toBeCloseTo(-1, 7);
  });

  it('reports δ² = 1/(u₀w²) and the lab scales of ⁸⁷Rb (E₀/h = 58.15 Hz at ℓ = 1 µm, physics.md §3)', () => {
    const c = parseConfig(
      'name: t\nunits: { system: lab, species: Rb87 }\ngrid: { length: 40, points: 256 }\ninitial: { kind: sech2, depth: 0.2, width: 1.5 }\nflow: { lambda_end: 0.01, frames: 2, tolerance: 1e-8 }\n',
      't.yaml',
      '.',
    );
    const r = runDesign(c);
    const u0 = 0.2 / 0.058150244; // depth in E₀
    expect(r.ctx.delta2).toBeCloseTo(1 / (u0 * 1.5 * 1.5), 5);
    expect(r.summary.scales.E0).toMatch(/58\.150 Hz/);
  });

  it('a classical (Hopf) design stops at the gradient catastrophe, near 1/max(6∂ξu₀) (characteristics)', () => {
    const r = runDesign(cfg('{ kind: sech2, depth: 2, width: 2 }', 'flow: { dispersion: classical, lambda_end: 1, frames: 21 }'));
    expect(r.summary.complete).toBe(false);
    expect(r.breakingPredicted).not.toBeNull();
    // u₀ = −2 sech²(ξ/2): max ∂ξu₀ = (2/2)·(4/(3√3)) … evaluate the closed form 1/max(6u₀′) directly
    const tb = 1 / (6 * 2 * (4 / (3 * Math.sqrt(3))) * 0.5);
    expect(r.breakingPredicted!).toBeCloseTo(tb, 3);
    expect(r.run.breaking!.lambdaExtrapolated).toBeCloseTo(tb, 2);
    expect(r.run.frames.length).toBeGreaterThan(1);
    expect(r.run.lambdas[r.run.lambdas.length - 1]).toBeLessThan(tb);
  });
});

describe('well centres outside the box', () => {
  it('are refused naming the key and the box (the periodic box is [−L/2, L/2], README Configs)', () => {
    const run = (initial: string) => () => runDesign(cfg(initial));
    expect(run('{ kind: sech2, depth: 6, width: 1, center: 1000000 }')).toThrow('test.yaml: initial.center = 1000000 is not allowed: must lie inside the box, −20 … 20 (± grid.length/2)');
    expect(run('{ kind: solitons, solitons: [{ kappa: 1, center: 0 }, { kappa: 2, center: -21 }] }')).toThrow(/initial\.solitons\[1\]\.center = -21 is not allowed/);
  });
});

describe('initial potentials that are not traps in the box', () => {
  it('a well wider than the box (flat at the edges) and a well narrower than any sample are refused naming their keys', () => {
    // bound states are counted below V = 0, the value far from the wells (physics.md §3): a potential that keeps its
    // depth at the box edge has no such reference, and a well that falls between samples is not on the grid at all
    const run = (initial: string) => () => runDesign(cfg(initial));
    expect(userErrorOf(run('{ kind: sech2, depth: 6, width: 1e300, center: 0 }'))).toMatch(/test\.yaml: the initial potential is 1\.00 of its extremum at the box edge.*initial\.width 1e\+300, grid\.length 40/);
    expect(userErrorOf(run('{ kind: sech2, depth: 6, width: 1e-300, center: 0.01 }'))).toMatch(/test\.yaml: the initial potential has no well on the grid.*initial\.depth 6, initial\.width 1e-300/);
  });
});
