import { describe, expect, it } from 'vitest';
import { dispersionForMass, effectiveMassU, naturalTunnelling, recoilFrequency } from '../src/lattice/params.ts';
import { predictedWork, siteCountProblem, MIN_SITES, MAX_SITES } from '../src/lattice/cost.ts';
import { observedOrder, recommendLattice, solitonWidth } from '../src/lattice/study.ts';
import { ATOMIC_MASS_CONSTANT, PLANCK_H } from '../src/units/constants.ts';

const RB87_U = 86.909180531; // AME2020 via physics.md §3

describe('lattice parameters (src/lattice/params.ts)', () => {
  it('E_R/h = h/(8md²) for a lattice of period d (k_L = π/d; common practice), ≈ 2.03 kHz for ⁸⁷Rb at d = 532 nm', () => {
    const m = RB87_U * ATOMIC_MASS_CONSTANT;
    const d = 532e-9;
    const er = recoilFrequency(d, m);
    expect(er).toBeCloseTo(PLANCK_H / (8 * m * d * d), 9);
    expect(er / 1000).toBeCloseTo(2.0278, 3); // the familiar ⁸⁷Rb/1064 nm recoil (common practice)
  });

  it('m* = ħ²/(2Jd²) (physics.md §6): J = E_R/π² gives m* = m (since E_R = ħ²π²/(2md²))', () => {
    const m = RB87_U * ATOMIC_MASS_CONSTANT;
    const d = 532e-9;
    const jHz = recoilFrequency(d, m) / (Math.PI * Math.PI);
    expect(effectiveMassU(jHz, d)).toBeCloseTo(RB87_U, 9);
  });

  it('natural units: J = 1/h² and δ² ∝ 1/m (δ² = ħ²/(2mV₀w²), physics.md §3)', () => {
    expect(naturalTunnelling(0.5)).toBe(4);
    expect(dispersionForMass(0.2, 3, 6)).toBeCloseTo(0.1, 15);
  });
});

describe('lattice cost and study (src/lattice/cost.ts, study.ts)', () => {
  it('predicted work grows like λ_end/h³ at fixed sites once the cubic part dominates (formula in cost.ts)', () => {
    const a = predictedWork(100, 0.1, 0, 1, 0, 1);
    const b = predictedWork(100, 0.05, 0, 1, 0, 1);
    // (C/h³ + offset): with h halved the cubic part grows 8-fold; offset 1000 against C/h³ ≈ 1.04e4 at h = 0.1
    expect(b / a).toBeGreaterThan(7);
    expect(b / a).toBeLessThan(8);
  });

  it('too few or too many sites are refused with the count and the limit', () => {
    expect(siteCountProblem(1, MIN_SITES - 1, 10)).toMatch(/leaves only 7 sites/);
    expect(siteCountProblem(1e-3, MAX_SITES + 1, 10)).toMatch(/more than 20000/);
    expect(siteCountProblem(0.1, 100, 10)).toBeNull();
  });

  it('soliton width 1/κ of the deepest bound state E = −κ² (physics.md §4), capped by the well width', () => {
    expect(solitonWidth([-4, -1], Infinity)).toBeCloseTo(0.5, 15);
    expect(solitonWidth([-4, -1], 0.3)).toBe(0.3);
    expect(solitonWidth([], NaN)).toBeNaN();
  });

  it('observed order and extrapolation of 1 − F = C n^−4 (power law, exact for synthetic data)', () => {
    const pts = [2, 3, 4].map((n) => ({ sitesPerWidth: n, maxInfidelity: 0.5 * n ** -4 }));
    expect(observedOrder(pts)).toBeCloseTo(4, 12);
    const rec = recommendLattice(pts, 1e-4);
    expect(rec.kind).toBe('extrapolated');
    if (rec.kind === 'extrapolated') expect(rec.sitesPerWidth).toBeCloseTo((0.5 / 1e-4) ** 0.25, 10); // n = (C/target)^{1/4}
    expect(recommendLattice(pts, 0.01)).toEqual({ kind: 'met', index: 1 }); // 0.5/81 ≈ 6.2e-3 < 0.01, 0.5/16 > 0.01
    const flat = [{ sitesPerWidth: 2, maxInfidelity: 0.1 }, { sitesPerWidth: 4, maxInfidelity: 0.09 }];
    expect(recommendLattice(flat, 1e-4).kind).toBe('not-converging');
  });
});
