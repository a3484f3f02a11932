import { readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { describe, expect, it } from 'vitest';
import { parse, stringify } from 'yaml';
import { parseConfig } from '../src/io/config.ts';
import { runDesign } from '../src/jobs/design.ts';
import { runVerify } from '../src/jobs/verify.ts';
import { UserError } from '../src/core/errors.ts';

/** a config text from a YAML object */
const configOf = (doc: unknown, name = 'painted.yaml') => parseConfig(stringify(doc), name, tmpdir());

describe('verify with painted corrections (jobs/verify.ts, quantum/painted.ts, physics.md §7)', () => {
  it('default scenario (at 512 points): the painted one-state correction keeps the ground state to 1 − 1e-6 and the painted potential and its ½{g, p} partner end with the same fidelity to 1e-8 (gauge equivalence, physics.md §7; Masuda & Nakamura, Proc. R. Soc. A 466, 1135, 2010)', async () => {
    const doc = parse(readFileSync('configs/default.yaml', 'utf8'));
    doc.grid.points = 512;
    // the ground state alone: the state the one-state correction carries (a bound state, as the gauge check needs)
    doc.verify = { states: 1, tolerance: 1e-9, painted: ['ground'] };
    const config = configOf(doc);
    const r = await runVerify(config, runDesign(config), { traceSamples: 0 });
    const p = r.file.painted;
    expect(p).not.toBeNull();
    const ground = p!.drives.find((d) => d.kind === 'ground')!;
    expect(1 - ground.fidelity[0]).toBeLessThan(1e-6);
    // the bare drive loses far more (measured 0.027 at the full grid): the painted potential is what keeps the state
    expect(1 - r.file.states[0].fidelity_bare).toBeGreaterThan(1e-3);
    const gauge = p!.gauge_check.find((g) => g.drive === 'painted_ground')!;
    expect(gauge.states).toBe(1);
    expect(gauge.max_difference).toBeLessThan(1e-8);
    expect(gauge.passed).toBe(true);
    // the power budget is reported against the starting trap, in the config's energy unit
    expect(p!.start.deepest).toBeCloseTo(-0.3489, 3);
    expect(Number.isFinite(ground.deepest) && Number.isFinite(ground.highest)).toBe(true);
    expect(ground.deepest).toBeLessThanOrEqual(p!.start.deepest + 1e-12);
    expect(p!.ground_clip!.clipped_weight).toBeLessThan(1e-6);
    expect(r.file.summary_rows.some((row) => /gauge check/.test(row.key))).toBe(true);
  }, 120_000);

  it('one soliton carried along by the flow (a pure translation at 4κ²): the variational painted drive keeps its bound state to 1 − 1e-6, and verify.json records the fit behind it (common practice: the moving frame; Masuda & Nakamura 2010)', async () => {
    const config = configOf({
      name: 'translation', grid: { length: 30, points: 256 }, initial: { kind: 'sech2', depth: 2, width: 1, center: -3 },
      flow: { lambda_end: 0.3, frames: 7 }, protocol: { duration: 1, ramp: 'sin2' }, verify: { states: 1, painted: ['variational'] },
    });
    const r = await runVerify(config, runDesign(config), { traceSamples: 0 });
    const p = r.file.painted!;
    const drive = p.drives.find((d) => d.kind === 'variational')!;
    expect(1 - drive.fidelity[0]).toBeLessThan(1e-6);
    // −2sech²ξ holds one bound state (Pöschl–Teller N = 1, E = −1; Landau & Lifshitz, QM §23): the fit's subspace
    expect(r.file.bound_states).toBe(1);
    expect(p.variational_fit!.states).toBe(1);
    expect(p.variational_fit!.frames).toBe(7);
    expect(p.variational_fit!.basis[0]).toBe('u');
    expect(p.variational_fit!.max_residual).toBeLessThan(1e-6);
    expect(p.gauge_check.find((g) => g.drive === 'painted')!.passed).toBe(true);
  }, 60_000);

  it('a linear ramp is refused for a painted correction with an input error naming protocol.ramp and the reason (λ̇ ≠ 0 at the start; physics.md §7)', async () => {
    const config = configOf({
      name: 'linear', grid: { length: 24, points: 256 }, initial: { kind: 'sech2', depth: 6, width: 1, center: 0 },
      flow: { lambda_end: 0.05, frames: 5 }, protocol: { duration: 0.3, ramp: 'linear' }, verify: { states: 2, painted: ['ground'] },
    });
    const design = runDesign(config);
    await expect(runVerify(config, design)).rejects.toThrow(UserError);
    await expect(runVerify(config, design)).rejects.toThrow(/protocol\.ramp = linear is not allowed with verify\.painted = \[ground\]: λ̇ = .* ≠ 0 at the start/);
  });
});
