import { describe, expect, it } from 'vitest';
import { tmpdir } from 'node:os';
import { parseConfig } from '../src/io/config.ts';
import { runDesign } from '../src/jobs/design.ts';
import { sequencePotential, type SequenceSource } from '../src/flow/dense.ts';
import { verifySequence, verifySequenceThreaded, type VerifyOptions } from '../src/quantum/verify.ts';
import { stateGroups, STATE_GROUP_SIZE } from '../src/quantum/drive-group.ts';

// u(ξ, 0) = −6 sech² ξ splitting into two solitons (physics.md §4), small grid: six states, so two groups
const CONFIG = `name: threads
units: { system: natural }
grid: { length: 20, points: 128 }
initial: { kind: sech2, depth: 6, width: 1, center: 0 }
flow: { lambda_end: 0.1, frames: 5 }
protocol: { duration: 0.5, ramp: sin2 }
`;

describe('verify on worker threads', () => {
  it('gives the numbers of the one-thread run, to the last digit (fixed state groups, each with its own step control; common practice)', async () => {
    const config = parseConfig(CONFIG, 'threads.yaml', tmpdir());
    const design = runDesign(config);
    const source: SequenceSource = { dense: design.run.dense.data(), lo: 0, hi: 0.1 };
    const opts: VerifyOptions = {
      grid: design.ctx.grid, potential: sequencePotential(source), source, lambdaEnd: 0.1, ramp: 'sin2', duration: 0.5,
      states: 6, temperature: 1, drives: ['cd', 'bare'], traceSamples: 3, strengthSamples: 5,
    };
    expect(stateGroups(6)).toEqual([[0, STATE_GROUP_SIZE], [STATE_GROUP_SIZE, 6]]);
    // a large ensemble in at most 16 groups (the same for any thread count)
    const big = stateGroups(200);
    expect(big).toHaveLength(16);
    expect(big[0]).toEqual([0, 13]);
    expect(big.at(-1)).toEqual([195, 200]);
    const one = verifySequence(opts);
    const two = await verifySequenceThreaded(opts, 2, 0);
    expect(two.timings.threads).toBe(2);
    expect(one.timings.threads).toBe(1);
    for (let d = 0; d < one.drives.length; d++) {
      const a = one.drives[d], b = two.drives[d];
      expect(b.fidelity).toEqual(a.fidelity);
      expect(b.excessEnergy).toEqual(a.excessEnergy);
      expect(b.thermal?.uhlmannFidelity).toEqual(a.thermal?.uhlmannFidelity);
      expect(b.trace).toEqual(a.trace);
      expect(b.stats.steps).toBe(a.stats.steps);
    }
    expect(two.cdStrength).toEqual(one.cdStrength);
    // the corrected drive keeps every state (exact CD, physics.md §3) to the default budget 1e-8
    // the corrected drive keeps the bound states (exact CD, physics.md §3) to the default budget 1e-8 (the box states of
    // this small periodic grid come in near-degenerate pairs split by ~1e-6, beyond the degeneracy tolerance)
    for (const f of one.drives[0].fidelity.slice(0, one.boundStates)) expect(1 - f).toBeLessThan(1e-8);
  }, 60_000);

  it('a trace and strength samples reach the end exactly when T·9/9 rounds above T (T = 0.9: 9·0.9/9 > 0.9 in binary floating point)', () => {
    // IEEE 754 double rounding (common practice): the trace's last time must be T itself, or the propagation, which
    // ends at T, never reaches it
    expect((0.9 * 9) / 9).not.toBe(0.9);
    const config = parseConfig(CONFIG.replace('duration: 0.5', 'duration: 0.9'), 'end.yaml', tmpdir());
    const design = runDesign(config);
    const source: SequenceSource = { dense: design.run.dense.data(), lo: 0, hi: 0.1 };
    const r = verifySequence({ grid: design.ctx.grid, potential: sequencePotential(source), lambdaEnd: 0.1, ramp: 'sin2', duration: 0.9, states: 2, drives: ['cd'], traceSamples: 10, strengthSamples: 33 });
    const cd = r.drives[0];
    expect(cd.trace!.times.at(-1)).toBe(0.9);
    expect(cd.trace!.fidelity.at(-1)).toEqual(cd.fidelity);
    expect(r.cdStrength!.time).toHaveLength(33);
  });
});
