import { describe, expect, it } from 'vitest';
import { etdPairCoefficients, etdPairStep, etdPairWorkspace, KROGSTAD_ETD43, WHALEN_ETD53, type EtdPairTable } from '../src/integrate/etd-pair.ts';
import { FLOW_PAIR, FlowOperator, integrateFlow, naturalFlowEquation } from '../src/flow/kdv.ts';
import { twoSolitonFromSech2 } from '../src/flow/solitons.ts';
import { makeGrid } from '../src/spectral/grid.ts';

const grid = makeGrid(60, 1024);
const kdv = naturalFlowEquation('quantum');
const u0 = grid.x.map((x) => -6 / Math.cosh(x) ** 2);
const exactAt = (tau: number) => grid.x.map((x) => twoSolitonFromSech2(x, tau));
const maxAbsDiff = (a: ArrayLike<number>, b: ArrayLike<number>) => {
  let e = 0;
  for (let j = 0; j < a.length; j++) e = Math.max(e, Math.abs(a[j] - b[j]));
  return e;
};

/** `steps` fixed steps of the pair from u₀ to τ; the max error against the closed form and the largest estimate */
function fixedSteps(table: EtdPairTable, tau: number, steps: number): { error: number; estimate: number } {
  const op = new FlowOperator(grid, kdv);
  const active = op.cutoff + 1;
  const co = etdPairCoefficients(table, tau / steps, op.lim.subarray(0, active));
  const ws = etdPairWorkspace(table, op.modes);
  const z = () => new Float64Array(2 * op.modes);
  let v = z(), nv = z(), out = z(), nOut = z();
  const err = z();
  op.fft.forward(u0, v);
  v.fill(0, 2 * active);
  op.nonlinear(v, nv);
  let estimate = 0;
  for (let s = 0; s < steps; s++) {
    etdPairStep(co, op.nonlinear, v, nv, out, nOut, err, ws, active);
    for (let i = 0; i < 2 * active; i++) estimate = Math.max(estimate, Math.hypot(err[i], err[i + 1]));
    [v, out] = [out, v];
    [nv, nOut] = [nOut, nv];
  }
  const u = new Float64Array(grid.n);
  op.fft.inverse(v, u);
  return { error: maxAbsDiff(u, exactAt(tau)), estimate };
}

describe('embedded exponential Runge–Kutta pairs (integrate/etd-pair.ts) on the two-soliton split (Drazin & Johnson 1989 closed form)', () => {
  // order of the propagated solution under step halving: the global error falls by 2^p (Hairer, Nørsett & Wanner,
  // Solving ODEs I, 1993, §II.3), over τ ∈ [0, 0.02] in 20, 40, 80 steps (|hL| up to 45 at the dealiasing cut); the band
  // [0.75, 1.25]·2^p allows the higher-order terms at these steps (common practice)
  for (const table of [KROGSTAD_ETD43, WHALEN_ETD53]) {
    it(`${table.name} (${table.source}): error ratio under step halving ≈ 2^${table.order}`, () => {
      const runs = [20, 40, 80].map((n) => fixedSteps(table, 0.02, n));
      for (let i = 1; i < runs.length; i++) {
        const ratio = runs[i - 1].error / runs[i].error;
        expect(ratio).toBeGreaterThan(0.75 * 2 ** table.order);
        expect(ratio).toBeLessThan(1.25 * 2 ** table.order);
      }
      // the estimate (embedded minus propagated, per step) scales as h^(embedded order + 1)
      const estimateRatio = runs[1].estimate / runs[2].estimate;
      expect(estimateRatio).toBeGreaterThan(0.75 * 2 ** (table.embeddedOrder + 1));
      expect(estimateRatio).toBeLessThan(1.25 * 2 ** (table.embeddedOrder + 1));
    });
  }

  it('the controller keeps the split within its tolerance: error ≤ accepted steps × tolerance × max|u₀|, and 100× tighter tolerance cuts the error by ≥ 30', () => {
    // bound: local errors ≤ tol·max|u₀| per step, summed over the steps with a unit propagation factor (Hairer, Nørsett
    // & Wanner 1993, §II.3); the error of an order-5 solution with an order-3 estimate falls as tol^(5/4) (100^(5/4) ≈ 316)
    const errors = [1e-7, 1e-9].map((tolerance) => {
      const run = integrateFlow(grid, kdv, u0, { tolerance, frames: [0.25], keepDense: false });
      const error = maxAbsDiff(run.frames[0], exactAt(0.25));
      expect(error).toBeLessThan(run.stats.accepted * tolerance * 6);
      expect(run.stats.rejected).toBeLessThan(run.stats.accepted / 10);
      return error;
    });
    expect(errors[0] / errors[1]).toBeGreaterThan(30);
    expect(FLOW_PAIR).toBe(WHALEN_ETD53);
  });
});
