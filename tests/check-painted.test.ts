import { describe, expect, it } from 'vitest';
import { makeGrid } from '../src/spectral/grid.ts';
import { makeRamp } from '../src/protocol/ramp.ts';
import { gaugeCheck, localPotential } from '../src/quantum/painted.ts';
import { paintedVariationalField } from '../src/check/painted.ts';
import { SequenceInterpolant } from '../src/check/drive.ts';

describe('SequenceInterpolant.rateAt (check/drive.ts)', () => {
  it('the cubic Hermite derivative reproduces ∂_λ(λ³ f) = 3λ² f exactly between knots (a cubic is its own Hermite interpolant)', () => {
    const f = Float64Array.of(1, -2, 0.5);
    const lam = [0, 0.4, 1.1];
    const seq = new SequenceInterpolant(lam, lam.map((l) => f.map((v) => l ** 3 * v)), lam.map((l) => f.map((v) => 3 * l * l * v)));
    const out = new Float64Array(3);
    for (const l of [0.1, 0.4, 0.73, 1.05]) {
      seq.rateAt(l, out);
      out.forEach((v, j) => expect(Math.abs(v - 3 * l * l * f[j])).toBeLessThan(1e-13));
    }
  });
});

describe('painted variational correction: ½{g, k} with a = 0 (check/painted.ts, physics.md §7)', () => {
  // harmonic trap with changing ω: u = ω²ξ²/4 (2m = 1), ω = 1 + 1.5λ; the exact CD term −(ω̇/4ω){ξ, k} has no k³
  // (Muga, Chen, Ibáñez, Lizuain & Ruschhaupt, J. Phys. B 43, 085509, 2010)
  const grid = makeGrid(30, 128);
  const om = (l: number): number => 1 + 1.5 * l;
  const lam = Array.from({ length: 21 }, (_, i) => i / 20);
  const frames = lam.map((l) => grid.x.map((x) => (om(l) ** 2 * x * x) / 4));
  const rates = lam.map((l) => grid.x.map((x) => (2 * 1.5 * om(l) * x * x) / 4)); // ∂_λ(ω²ξ²/4), closed form
  const field = paintedVariationalField(grid, lam, frames, { states: 4 }, rates);
  const ramp = makeRamp('smooth', 2, 1);

  it('the fit leaves k³ out: a = 0 and the k³ column is not kept at every frame', () => {
    for (const f of field.fit.frames) {
      expect(f.a).toBe(0);
      expect(f.kept[0]).toBe(false);
    }
  });

  it('the painted trap is harmonic with Ω² = ω² − 3ω̇²/(4ω²) + ω̈/(2ω) to 1e-5 where |ξ| < 3 (Ibáñez et al., PRL 109, 100403, 2012; the fit itself is good to 1e-6, tests/check-variational.test.ts)', () => {
    const n = grid.n;
    const g = new Float64Array(n), gl = new Float64Array(n), v = new Float64Array(n);
    for (const s of [0.3, 0.9, 1.5]) {
      const l = ramp.value(s), r = ramp.rate(s), acc = ramp.accel(s), w = om(l);
      field.at(l, g, gl);
      localPotential(grid, g, gl, r, acc, v);
      const wd = 1.5 * r, wdd = 1.5 * acc;
      const big = w * w - (3 * wd * wd) / (4 * w * w) + wdd / (2 * w);
      let err = 0;
      grid.x.forEach((x, j) => { if (Math.abs(x) < 3) err = Math.max(err, Math.abs((w * w * x * x) / 4 + v[j] - (big * x * x) / 4)); });
      expect(err / ((big * 9) / 4)).toBeLessThan(1e-5);
    }
  });

  it('its drive keeps every tracked state to 1 − 1e-6, and painted and ½{g, p} drives agree to 1e-8 (gauge check, physics.md §7)', () => {
    const check = gaugeCheck({ grid, potential: (l, out) => field.sequence.at(l, out), field, ramp, states: 3, propagate: { tol: 1e-11 } });
    for (const f of check.painted) expect(f).toBeGreaterThan(1 - 1e-6);
    expect(check.maxDifference).toBeLessThan(1e-8);
  });
});
