import { describe, expect, it } from 'vitest';
import { sech2Trap, wellScale, wellsTrap } from '../src/flow/traps.ts';
import { makeGrid } from '../src/spectral/grid.ts';

describe('initial trap shapes and the deepest well scale (src/flow/traps.ts)', () => {
  const grid = makeGrid(40, 512);

  it('−d sech²((ξ − c)/w) is −d at the centre and −d sech²(1) = −0.41997 d one half-width away (closed form)', () => {
    const x = Float64Array.from([1.5, 1.5 + 0.8, 1.5 - 0.8]);
    const u = sech2Trap(3, 0.8, 1.5, x);
    expect(u[0]).toBe(-3);
    expect(u[1]).toBeCloseTo(-3 / Math.cosh(1) ** 2, 14);
    expect(u[2]).toBeCloseTo(-3 * 0.41997434161402614, 14);
  });

  it('a sum of a sech² well and a Gaussian barrier adds the two shapes; the Gaussian is e^{−1/2} of its height at one standard deviation (closed form)', () => {
    const x = Float64Array.from([-2, 4, 4.5]);
    const u = wellsTrap(
      [
        { shape: 'sech2', depth: 2, width: 1, center: -2 },
        { shape: 'gaussian', depth: -0.5, width: 0.5, center: 4 },
      ],
      x,
    );
    expect(u[0]).toBeCloseTo(-2 + 0.5 * Math.exp(-0.5 * 144), 14);
    expect(u[1]).toBeCloseTo(0.5 - 2 / Math.cosh(6) ** 2, 14);
    expect(u[2]).toBeCloseTo(0.5 * Math.exp(-0.5) - 2 / Math.cosh(6.5) ** 2, 14);
  });

  it('curvature width sqrt(2d/u″) is w for −d sech²(ξ/w) and √2 σ for a Gaussian of standard deviation σ (closed form u″(0))', () => {
    const s = wellScale(grid, sech2Trap(6, 1.3, 0, grid.x));
    expect(s.depth).toBe(6);
    expect(s.width).toBeCloseTo(1.3, 10);
    const g = wellScale(grid, wellsTrap([{ shape: 'gaussian', depth: 2, width: 1.1, center: 0 }], grid.x));
    expect(g.depth).toBe(2);
    expect(g.width).toBeCloseTo(Math.SQRT2 * 1.1, 10);
  });

  it('a potential without a well has no curvature width (NaN)', () => {
    expect(wellScale(grid, new Float64Array(grid.n).fill(1)).width).toBeNaN();
  });
});
