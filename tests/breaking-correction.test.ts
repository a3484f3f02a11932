import { describe, expect, it } from 'vitest';
import { makeRamp } from '../src/protocol/ramp.ts';
import { gridBreaking, breakingTime } from '../src/flow/breaking.ts';
import { makeGrid } from '../src/spectral/grid.ts';
import { hopfCurvatureGrowth } from '../src/classical/hopf.ts';

describe('Hopf breaking formula (src/flow/breaking.ts)', () => {
  it('u₀ = −d sech²(x/w): τ_b = 1/max(6u₀′) = √3 w/(8d) (max u₀′ = 4d/(3√3 w) at tanh(x/w) = 1/√3; Whitham 1974 §2.1)', () => {
    const d = 3, w = 1.5;
    const grid = makeGrid(60, 4096);
    const u0 = grid.x.map((x) => -d / Math.cosh(x / w) ** 2);
    const exact = (Math.sqrt(3) * w) / (8 * d);
    // the grid maximum of u₀′ misses the true one by O(dx²): relative error ≤ 1e-4 at dx ≈ 0.015
    expect(Math.abs(gridBreaking(grid, u0) - exact) / exact).toBeLessThan(1e-4);
    expect(breakingTime(0)).toBe(Infinity);
    expect(breakingTime(-1)).toBe(Infinity);
  });

  it('curvature growth q³, q = 1/(1 − λ/λ_b): 8 at half the breaking λ (closed form)', () => {
    expect(hopfCurvatureGrowth(0.5, 1)).toBe(8);
    expect(hopfCurvatureGrowth(0, 2)).toBe(1);
  });
});
