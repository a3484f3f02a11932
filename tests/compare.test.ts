import { describe, expect, it } from 'vitest';
import { driftSweep, fitPowerLaw, scaledProblem, scalingStudy } from '../src/classical/scaling.ts';
import { UserError } from '../src/core/errors.ts';
import { parseCompareConfig } from '../src/io/config-compare.ts';
import { runCompare, withQuantumDrives } from '../src/jobs/compare.ts';
import { toJson } from '../src/jobs/design.ts';
import { compareFigures } from '../src/report/panels/compare.ts';
import { makeGrid } from '../src/spectral/grid.ts';

const sech2 = (z: number) => 1 / Math.cosh(z) ** 2;

describe('least-squares power law (src/classical/scaling.ts)', () => {
  it('recovers an exact power law and gives the textbook slope error for noisy data', () => {
    // y = 3x^2.5 exactly: slope 2.5, zero residual (common practice)
    const xs = [0.1, 0.2, 0.4, 0.8];
    const f = fitPowerLaw(xs, xs.map((x) => 3 * x ** 2.5));
    expect(f.exponent).toBeCloseTo(2.5, 12);
    expect(f.prefactor).toBeCloseTo(3, 12);
    // log y = 1 + 2 log x + (+e, −e, −e, +e) at log x = 0, 1, 2, 3: slope 2 exactly (the noise is orthogonal
    // to the centred abscissae), standard error √(RSS/(n−2)/Sxx) = √(4e²/2/5) (Press et al., Numerical Recipes,
    // 3rd ed. 2007, §15.2, with σ from the residuals)
    const e = 0.01;
    const noise = [e, -e, -e, e];
    const g = fitPowerLaw([0, 1, 2, 3].map(Math.exp), [0, 1, 2, 3].map((t, i) => Math.exp(1 + 2 * t + noise[i])));
    expect(g.exponent).toBeCloseTo(2, 12);
    expect(g.uncertainty).toBeCloseTo(Math.sqrt((4 * e * e) / 2 / 5), 12);
  });
});

describe('ħ-scaling of the quantum–classical distance (src/classical/scaling.ts)', () => {
  const grid = makeGrid(40, 512);
  const u0 = grid.x.map((x) => -sech2(x));
  const problem = scaledProblem(grid, u0, 1, 1);
  // first-order perturbation theory in the dispersive term −δ²v_yyy (∝ ħ², physics.md §2): distance ∝ δ²
  const deltas = [0.01, 0.0178, 0.0316, 0.0562, 0.1]; // one decade
  const study = scalingStudy(problem, { deltas, lambdaScaled: 0.25 * problem.breaking, tolerance: 1e-10 });

  it('scaled breaking of −sech² y is √3/8 and the fitted exponent is 2 ± 0.1 over a decade of δ', () => {
    // τ_b = √3 w/(8d) for −d sech²(x/w) (1/max(6u₀′), physics.md §4; the maximum by calculus, common practice)
    expect(study.breakingScaled).toBeCloseTo(Math.sqrt(3) / 8, 9);
    expect(Math.abs(study.fitMax.exponent - 2)).toBeLessThan(0.1);
    expect(Math.abs(study.fitL2.exponent - 2)).toBeLessThan(0.1);
    expect(study.fitMax.uncertainty).toBeLessThan(0.05);
  });

  it('along the quantum sequence the classical CD energies and actions drift ∝ δ² (exponent 2 ± 0.1)', () => {
    // dH₀/ds = −λ′u_ξξξ along KdV under the classical CD Hamiltonian (physics.md §2–§3): ∝ δ² in scaled variables
    const few = scalingStudy(problem, { deltas: [0.01, 0.0316, 0.1], lambdaScaled: 0.25 * problem.breaking, tolerance: 1e-10 });
    const d = driftSweep(problem, few, { shells: 2, phases: 2, duration: Math.PI, ramp: 'sin2' });
    expect(Math.abs(d.energyFit.exponent - 2)).toBeLessThan(0.1);
    expect(Math.abs(d.actionFit.exponent - 2)).toBeLessThan(0.1);
    expect(d.points[0].energyMean).toBeLessThan(d.points[2].energyMean / 50);
  });
});

const configText = (extra = '') => `name: cmp
grid: { length: 40, points: 256 }
initial: { kind: sech2, depth: 2, width: 1.5 }
flow: { dispersion: quantum, lambda_end: 0.3, frames: 7, tolerance: 1e-10 }
compare: { samples: 41, sweep_drift: false, trajectories: { shells: 2, phases: 2, periods: 2 }${extra} }
`;

describe('runCompare (src/jobs/compare.ts)', () => {
  const cfg = parseCompareConfig(configText(), 'cmp.yaml', '.');
  const r = runCompare(cfg);
  const s = r.summary;
  const depth = 2, width = 1.5;

  it('reports the characteristics breaking λ √3w/(8d) and checks the spectral Hopf run against characteristics', () => {
    // closed form of 1/max(6∂ξu₀) for −d sech²(x/w) (physics.md §4; calculus, common practice)
    expect(Math.abs(s.breaking_lambda - (Math.sqrt(3) * width) / (8 * depth)) / s.breaking_lambda).toBeLessThan(1e-9);
    expect(s.lambda_common).toBeCloseTo(0.95 * s.breaking_lambda, 12);
    // Fourier/exponential Runge–Kutta Hopf run against the exact solution u = u₀(ξ + 6uτ) (Whitham 1974, §2.1)
    for (const e of s.characteristics_check.max_error) expect(e).toBeLessThan(1e-5);
  });

  it('the distance starts with slope max|u₀‴|/max|u₀| and reaches 1 % where the curve says', () => {
    // d/dλ (u_c − u_q) = u_ξξξ at λ = 0 (the two flows differ by the dispersive term only, physics.md §2):
    // relative max distance ≈ λ max|u₀‴|/d; u₀‴ = (2d/w³) sech²(z)(12 tanh³z − 8 tanh z) (calculus, common practice)
    let m = 0;
    for (let t = -1; t <= 1; t += 1e-5) m = Math.max(m, Math.abs((1 - t * t) * (12 * t ** 3 - 8 * t)));
    const slope = ((2 * depth) / width ** 3) * m / depth;
    const l1 = s.distance.lambda[1];
    expect(Math.abs(s.distance.max[1] / l1 - slope) / slope).toBeLessThan(0.05);
    expect(s.distance.lambda_1pct).not.toBeNull();
    const k = s.distance.max.findIndex((d) => d >= 0.01);
    expect(s.distance.lambda_1pct!).toBeGreaterThan(s.distance.lambda[k - 1]);
    expect(s.distance.lambda_1pct!).toBeLessThanOrEqual(s.distance.lambda[k]);
    // linear estimate of the 1 % point (λ ≈ 0.01/slope) within the curvature of the curve (common practice)
    expect(Math.abs(s.distance.lambda_1pct! * slope / 0.01 - 1)).toBeLessThan(0.2);
  });

  it('classical CD trajectories keep their energy along the Hopf sequence; along KdV they drift', () => {
    // ∂_λH = {A, H} along a Hopf sequence (physics.md §2): energy constant to the integrator's accuracy
    const t = s.classical_phase_space.trajectories;
    expect(t.length).toBe(4);
    for (const tr of t) {
      expect(tr.classical.energy_drift / depth).toBeLessThan(1e-9);
      expect(tr.classical.action_drift!).toBeLessThan(1e-8);
      expect(tr.quantum.energy_drift / depth).toBeGreaterThan(1e-5);
    }
    expect(s.scaling.points).toHaveLength(5);
    expect(s.scaling.phase_space).toBeNull();
  });

  it('is JSON-serialisable with the documented keys and a pending slot for quantum fidelities', () => {
    const parsed = JSON.parse(toJson(s)) as Record<string, unknown>;
    for (const key of ['breaking_lambda', 'distance', 'scaling', 'classical_phase_space', 'quantum']) expect(parsed).toHaveProperty(key);
    expect(parsed.scaling).toHaveProperty('exponent');
    expect(parsed.scaling).toHaveProperty('uncertainty');
    expect(s.quantum.status).toBe('pending');
    const filled = withQuantumDrives(s, [{ drive: 'quantum+cubic', states: [{ index: 0, energy: -1, fidelity: 0.999, excess_energy: 1e-4 }] }], 'test');
    expect(filled.quantum.status).toBe('done');
    // sanity of the sampled classical sequence at λ = 0: it is u₀ itself
    const uc = new Float64Array(r.ctx.grid.n);
    r.classicalAt(0, uc);
    expect(Math.max(...uc.map((v, j) => Math.abs(v - r.ctx.u0[j])))).toBeLessThan(1e-12);
  });

  it('draws both sequences in one x window around the trap, inside the box, and says so', () => {
    // the trap −2 sech²(x/1.5) lives within a few widths of 0; the box is 40 long (src/report/crop.ts)
    const maps = compareFigures(s).filter((f) => f.id === 'compare-quantum' || f.id === 'compare-classical');
    expect(maps).toHaveLength(2);
    for (const m of maps) {
      const [, lo, hi] = /x cropped to (\S+) … (\S+) /.exec(m.caption)!.map(Number);
      expect(lo).toBeGreaterThan(-20);
      expect(hi).toBeLessThan(20);
      expect(lo).toBeLessThan(-2 * width);
      expect(hi).toBeGreaterThan(2 * width);
      expect(m.caption).toContain('the box is -20 … 20');
    }
  });

  it('rejects bad compare keys with a message naming key, value and what is allowed', () => {
    expect(() => parseCompareConfig(configText(', lambda_fraction: 2'), 'c.yaml', '.')).toThrow(UserError);
    expect(() => parseCompareConfig(configText(', lambda_fraction: 2'), 'c.yaml', '.')).toThrow(/compare\.lambda_fraction = 2 is not allowed: must be a number in \(0, 0\.9\]/);
    expect(() => parseCompareConfig(configText(', sweep: [1, 1, 2]'), 'c.yaml', '.')).toThrow(/compare\.sweep/);
    expect(() => parseCompareConfig(configText(', colour: red'), 'c.yaml', '.')).toThrow(/compare\.colour = "red" is not allowed: unknown key/);
  });
});
