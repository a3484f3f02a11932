import { describe, expect, it } from 'vitest';
import { integrateFlow, naturalFlowEquation } from '../src/flow/kdv.ts';
import { solitonFrameSpeed, twoSolitonFromSech2 } from '../src/flow/solitons.ts';
import { complexFromReal, overlap2 } from '../src/linalg/complex.ts';
import { makeRamp } from '../src/protocol/ramp.ts';
import { runGroup, runsInFrame, sourceDrive } from '../src/quantum/drive-group.ts';
import { lowestEigenpairs } from '../src/quantum/eigen.ts';
import { NO_ERRORS } from '../src/quantum/propagator.ts';
import { boundStates } from '../src/quantum/spectrum-track.ts';
import { makeGrid } from '../src/spectral/grid.ts';
import { tmpdir } from 'node:os';
import { parseConfig } from '../src/io/config.ts';
import { runDesign } from '../src/jobs/design.ts';
import { runVerify } from '../src/jobs/verify.ts';

// Schrödinger drives of a designed sequence in the frame of its fastest soliton (drive-group.ts sourceDrive): the
// two-soliton split of −6 sech²ξ (Drazin & Johnson 1989 closed form; solitons of speed 16 and 4, physics.md §4)
describe('KdV drives in the moving frame of the flow', () => {
  const grid = makeGrid(60, 512);
  const kdv = naturalFlowEquation('quantum');
  const u0 = grid.x.map((x) => -6 / Math.cosh(x) ** 2);
  const lambdaEnd = 0.5;
  const T = 2;
  const ramp = makeRamp('sin2', T, lambdaEnd);
  const flow = (frameSpeed: number) => integrateFlow(grid, kdv, u0, { tolerance: 1e-10, frames: [0, lambdaEnd], frameSpeed });
  const speed = solitonFrameSpeed(kdv, boundStates(grid, u0).energies);
  const moving = { dense: flow(speed).dense.data(), lo: 0, hi: lambdaEnd };
  const lab = { dense: flow(0).dense.data(), lo: 0, hi: lambdaEnd };
  const init = lowestEigenpairs(grid, u0, 3).vectors.map(complexFromReal);
  /** eigenstates of the closed-form potential at λ: the exact CD drive carries the initial ones onto them */
  const exactStates = (lambda: number) => lowestEigenpairs(grid, grid.x.map((x) => twoSolitonFromSech2(x, lambda)), 3).vectors.map(complexFromReal);
  const fid = (a: Float64Array, b: Float64Array) => overlap2(a, b) / (overlap2(a, a) * overlap2(b, b)) ** 0.5;
  const task = { states: init, duration: T, sampleTimes: [1], control: { tol: 1e-10, errorControl: 'global' as const } };

  it('the corrected drive in the frame keeps every eigenstate, and its sampled and final states come back in the lab', () => {
    // exact counterdiabatic driving along a KdV flow (physics.md §3): fidelity 1 with the instantaneous eigenstates
    const H = sourceDrive(grid, moving, ramp, 1, 0, NO_ERRORS);
    expect(H.offset?.(T)).toBeCloseTo(speed * lambdaEnd, 12);
    const res = runGroup(H, task);
    const atEnd = exactStates(lambdaEnd);
    const atMid = exactStates(ramp.value(1));
    res.states.forEach((psi, i) => expect(fid(psi, atEnd[i])).toBeGreaterThan(1 - 1e-8));
    // at s = 1 the fast soliton has moved speed·λ(1) = 4 ℓ: a state left in the frame would miss its eigenstate
    res.samples[0].forEach((psi, i) => expect(fid(psi, atMid[i])).toBeGreaterThan(1 - 1e-8));
    // fewer steps than the same drive in the lab for the same budget
    const inLab = runGroup(sourceDrive(grid, lab, ramp, 1, 0, NO_ERRORS), task);
    expect(res.stats.steps).toBeLessThan(inLab.stats.steps);
  });

  it('the bare drive gives the same lab states in either frame (the frame is a change of variables)', () => {
    const a = runGroup(sourceDrive(grid, moving, ramp, 0, 0, NO_ERRORS), task);
    const b = runGroup(sourceDrive(grid, lab, ramp, 0, 0, NO_ERRORS), task);
    a.states.forEach((psi, i) => expect(fid(psi, b.states[i])).toBeGreaterThan(1 - 1e-9));
  });

  it('a drive with the lab\'s errors runs in the lab frame', () => {
    expect(runsInFrame(moving, NO_ERRORS)).toBe(true);
    expect(runsInFrame(moving, { ...NO_ERRORS, shift: 0.01 })).toBe(false);
    expect(runsInFrame(lab, NO_ERRORS)).toBe(false);
    expect(sourceDrive(grid, moving, ramp, 1, 0, { ...NO_ERRORS, scale: 0.1 }).offset).toBeUndefined();
  });
});

describe('verify.step_control', () => {
  const yaml = (control: string) => `name: one-pass
units: { system: natural }
grid: { length: 30, points: 256 }
initial: { kind: sech2, depth: 6, width: 1, center: 0 }
flow: { dispersion: quantum, lambda_end: 0.1, frames: 5 }
protocol: { duration: 0.5, ramp: sin2 }
verify: { states: 3, tolerance: 1e-8, step_control: ${control} }
`;

  it('local: one pass with the embedded estimate keeps the eigenstates within the budget, global: the doubling ladder', async () => {
    // exact counterdiabatic driving along a KdV flow (physics.md §3): fidelity 1 up to the time-stepping budget
    for (const control of ['local', 'global'] as const) {
      const config = parseConfig(yaml(control), 'one-pass.yaml', tmpdir());
      const cd = (await runVerify(config, runDesign(config), { traceSamples: 0, threads: 1 })).natural.drives.find((d) => d.drive === 'cd')!;
      for (const f of cd.fidelity) expect(f).toBeGreaterThan(1 - 1e-8);
      expect(cd.stats.errorEstimator).toBe(control === 'local' ? 'embedded pair' : 'global step halving');
      expect(cd.stats.levels === undefined).toBe(control === 'local');
    }
  }, 60_000);

  it('another value is refused naming the key and the allowed values', () => {
    expect(() => parseConfig(yaml('sideways'), 'one-pass.yaml', tmpdir())).toThrow(/verify\.step_control.*global, local/);
  });
});
