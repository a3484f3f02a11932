import { describe, expect, it } from 'vitest';
import { parseCompareConfig } from '../src/io/config-compare.ts';
import { quantumDrives, runCompare } from '../src/jobs/compare.ts';

// physics.md §2: the cubic correction is exact only along a KdV-admissible (quantum) sequence; along the Hopf
// (classical, ħ → 0) sequence of the same start it is not, and at δ² = 1/6 the difference is large.
describe('compare: quantum consequence of a classical design', () => {
  it('the KdV sequence keeps its states under the cubic correction, the Hopf sequence does not', () => {
    const cfg = parseCompareConfig(
      `name: q
grid: { length: 40, points: 256 }
initial: { kind: sech2, depth: 2, width: 1 }
flow: { lambda_end: 0.2, frames: 5 }
protocol: { duration: 0.5, ramp: sin2 }
verify: { states: 3, tolerance: 1e-8 }
compare: { sweep: [0.25, 0.5, 1], samples: 11, trajectories: { shells: 1, phases: 2 } }
`,
      'q.yaml',
      '.',
    );
    const result = runCompare(cfg);
    const s = quantumDrives(cfg, result);
    expect(s.quantum.status).toBe('done');
    const q = s.quantum.drives.find((d) => d.drive === 'quantum+cubic')!;
    const c = s.quantum.drives.find((d) => d.drive === 'classical+cubic')!;
    expect(q.states[0].fidelity).toBeGreaterThan(1 - 1e-6);
    expect(c.states[0].fidelity).toBeLessThan(1 - 1e-4);
    // −2 sech²ξ has its one bound state at E = −1 (Pöschl–Teller, Landau & Lifshitz §23)
    expect(q.states[0].energy).toBeCloseTo(-1, 6);
  });
});
