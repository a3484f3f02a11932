import { existsSync, mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterEach, describe, expect, it, vi } from 'vitest';
import { main } from '../src/cli/main.ts';
import { encodeNpy } from '../src/io/npy.ts';
import { twoSolitonFromSech2 } from '../src/flow/solitons.ts';
import { integrateFlow, naturalFlowEquation } from '../src/flow/kdv.ts';
import { estimateFlowSteps } from '../src/flow/cost.ts';
import { makeGrid } from '../src/spectral/grid.ts';
import { verifySequence } from '../src/quantum/verify.ts';
import { expectedLadderSteps, Propagator, kdvDrive } from '../src/quantum/propagator.ts';
import { makeRamp } from '../src/protocol/ramp.ts';
import { lowestEigenpairs } from '../src/quantum/eigen.ts';
import { estimateSchrodingerSteps } from '../src/quantum/cost.ts';
import { compareCorrections } from '../src/check/drive.ts';
import { complexFromReal } from '../src/linalg/complex.ts';
import { approxBytes, approxCount, approxDuration, assertDesignAffordable, assertVerifyAffordable } from '../src/io/cost.ts';
import { makeContext } from '../src/jobs/context.ts';
import { parseConfig } from '../src/io/config.ts';
import { userErrorOf } from './user-error.ts';

/** limits and estimates are common practice (io/cost.ts, flow/cost.ts, quantum/cost.ts, check/cost.ts); a refusal
 *  comes before any computing, so it ends in seconds where the refused runs would take hours: the bound leaves room
 *  for a loaded machine (no timing target lives in a test; speed is in `npm run bench`) */
const QUICK_MS = 20_000;

function scratch(): string {
  return mkdtempSync(join(tmpdir(), 'isotrap-cost-'));
}

/** run the CLI in-process; returns the exit code, stderr and the wall time */
async function cli(args: string[]): Promise<{ code: number; stderr: string; ms: number }> {
  let stderr = '';
  const spy = vi.spyOn(process.stderr, 'write').mockImplementation((chunk: string | Uint8Array) => {
    stderr += String(chunk);
    return true;
  });
  const started = performance.now();
  try {
    const code = await main(['node', 'isotrap', ...args]);
    return { code, stderr, ms: performance.now() - started };
  } finally {
    spy.mockRestore();
  }
}

afterEach(() => {
  vi.unstubAllEnvs();
});

const SMALL = `name: small
units: { system: natural }
grid: { length: 40, points: 256 }
initial: { kind: sech2, depth: 6, width: 1, center: 0 }
flow: { dispersion: quantum, lambda_end: 0.1, frames: 5, tolerance: 1e-8 }
protocol: { duration: 2.0, ramp: sin2 }
`;

/** write a config into a fresh folder; returns the config path and an output folder that does not exist yet */
function config(text: string): { path: string; out: string } {
  const dir = scratch();
  writeFileSync(join(dir, 'c.yaml'), text);
  return { path: join(dir, 'c.yaml'), out: join(dir, 'out') };
}

async function expectRefused(args: string[], out: string, patterns: RegExp[]): Promise<string> {
  const r = await cli([...args, '--out', out, '--quiet']);
  expect(r.code, r.stderr).toBe(2);
  expect(r.ms).toBeLessThan(QUICK_MS);
  expect(existsSync(out)).toBe(false);
  expect(r.stderr).not.toMatch(/\n\s+at /);
  for (const p of patterns) expect(r.stderr).toMatch(p);
  return r.stderr;
}

describe('bounded cost: refusals before computing (exit 2, nothing written)', () => {
  it('design: initial.depth = 1e6 is refused with the key, the estimate in grid-point steps and hours, and the limit', async () => {
    const c = config(SMALL.replace('depth: 6', 'depth: 1e6'));
    await expectRefused(['design', c.path], c.out, [/initial\.depth = 1000000/, /grid-point steps \(≈ [\d.]+ h on a 2-core laptop\)/, /limit of 1 h/, /ISOTRAP_LIFT_LIMITS=1/]);
  });

  it('design: flow.lambda_end = 1e6 is refused naming flow.lambda_end', async () => {
    const c = config(SMALL.replace('lambda_end: 0.1', 'lambda_end: 1e6'));
    await expectRefused(['design', c.path], c.out, [/flow\.lambda_end = 1000000/, /≈ [\d.]+ × 10\S+ grid-point steps/]);
  });

  it('design: 65,536 points × 10,000 frames is refused for memory (≈ 44 GiB against 2 GiB)', async () => {
    const c = config(SMALL.replace('points: 256', 'points: 65536').replace('frames: 5', 'frames: 10000'));
    // 65,536 × 10,000 values × 72 bytes = 4.7e10 bytes ≈ 44 GiB (flow/cost.ts FRAME_VALUE_BYTES)
    await expectRefused(['design', c.path], c.out, [/flow\.frames = 10000 × grid\.points = 65536/, /≈ 44 GiB/, /memory limit of 2 GiB/]);
  });

  it('verify: verify.states = 200 on an 8192-point grid is refused naming the key, the estimate and the states that fit', async () => {
    // above 4096 points the dense solve does not fit (quantum/cost.ts HOUSEHOLDER_MAX_POINTS): 202 levels by Lanczos
    const c = config(SMALL.replace('points: 256', 'points: 8192').replace('length: 40', 'length: 480') + 'verify: { states: 200 }\n');
    await expectRefused(['verify', c.path], c.out, [/verify\.states = 200/, /eigen solves of 202 levels/, /products with H \(≈ [\d.]+ h/, /at most about \d+ states fit/]);
  });

  it('an affordable verify states its estimate: the dense solve for 202 levels, the Lanczos one for a few (common practice)', () => {
    const many = parseConfig(SMALL.replace('points: 256', 'points: 1024') + 'verify: { states: 200 }\n', 'many.yaml', tmpdir());
    const e = assertVerifyAffordable(many, makeContext(many), 2, 10)!;
    expect(e.text).toMatch(/^estimated ≈ [\d.]+ (s|min) on a 2-core laptop \(10 eigen solves of 202 levels by dense Householder on \d+ points; 2 drives of 200 states/);
    expect(e.seconds).toBeGreaterThan(0);
    const few = parseConfig(SMALL + 'verify: { states: 4 }\n', 'few.yaml', tmpdir());
    expect(assertVerifyAffordable(few, makeContext(few), 2, 10)!.text).toMatch(/of 6 levels by Lanczos/);
  });

  it('compare: verify.states = 200 is refused before the comparison, naming its two corrected drives', async () => {
    const c = config(SMALL.replace('points: 256', 'points: 8192').replace('length: 40', 'length: 480') + 'verify: { states: 200 }\n');
    await expectRefused(['compare', c.path], c.out, [/verify\.states = 200/, /2 corrected drives of 200 states/]);
  });

  it('verify.tolerance = 1e-300 is refused by the schema, naming the smallest allowed', async () => {
    const c = config(SMALL + 'verify: { tolerance: 1e-300 }\n');
    await expectRefused(['verify', c.path], c.out, [/verify\.tolerance = 1e-300 is not allowed: must be a number from 1e-14/]);
  });

  it('a design whose dense output would pass the flow\'s 1 GiB budget is refused only when the dense output is kept', () => {
    // N = 8192, L = 60, depth 6, λ_end = 0.25: ≈ 1.7e4 steps of 2731 retained modes × 32 bytes ≈ 1.4 GiB (flow/cost.ts)
    const cfg = parseConfig(SMALL.replace('points: 256', 'points: 8192').replace('length: 40', 'length: 60').replace('lambda_end: 0.1', 'lambda_end: 0.25'), 'c.yaml', tmpdir());
    const g = makeGrid(60, 8192);
    const start = { grid: g, u0: g.x.map((x) => -6 / Math.cosh(x) ** 2) };
    expect(userErrorOf(() => assertDesignAffordable(cfg, start, true))).toMatch(/dense output .* ≈ 1\.\d GiB, over the flow's budget of 1 GiB/);
    expect(() => assertDesignAffordable(cfg, start, false)).not.toThrow();
  });

  it('the limits are lifted by ISOTRAP_LIFT_LIMITS=1, and only by that value', () => {
    const deep = parseConfig(SMALL.replace('depth: 6', 'depth: 1e6'), 'c.yaml', tmpdir());
    const g = makeGrid(40, 256);
    const start = { grid: g, u0: g.x.map((x) => -1e6 / Math.cosh(x) ** 2) };
    expect(userErrorOf(() => assertDesignAffordable(deep, start, false))).toMatch(/initial\.depth = 1000000/);
    vi.stubEnv('ISOTRAP_LIFT_LIMITS', 'yes');
    expect(userErrorOf(() => assertDesignAffordable(deep, start, false))).toMatch(/ISOTRAP_LIFT_LIMITS=1/);
    vi.stubEnv('ISOTRAP_LIFT_LIMITS', '1');
    expect(() => assertDesignAffordable(deep, start, false)).not.toThrow();
  });
});

/** a natural-units check input: the −6 sech² split at λ = 0, 0.025, 0.05 on 128 points (Drazin & Johnson closed form) */
function checkInput(scaleV = 1, scaleLambda = 1, spike?: number): { file: string; out: string } {
  const dir = scratch();
  const n = 128;
  const L = 40;
  const lambda = [0, 0.025, 0.05];
  const x = Array.from({ length: n }, (_, j) => -L / 2 + (j * L) / n);
  const data = new Float64Array(lambda.length * n);
  lambda.forEach((l, k) => x.forEach((xi, j) => (data[k * n + j] = scaleV * twoSolitonFromSech2(xi, l))));
  if (spike !== undefined) data[n + 40] = spike;
  writeFileSync(join(dir, 'seq.npy'), encodeNpy(data, [lambda.length, n]));
  writeFileSync(join(dir, 'seq.json'), JSON.stringify({ x, lambda: lambda.map((l) => l * scaleLambda), length_unit: 'ℓ', energy_unit: 'E₀' }));
  return { file: join(dir, 'seq.npy'), out: join(dir, 'out') };
}

describe('bounded cost: check inputs no grid resolves are refused before the fit', () => {
  it('λ × 1e300 is refused with the λ span and the estimated steps', async () => {
    const c = checkInput(1, 1e300);
    await expectRefused(['check', c.file], c.out, [/lambda in .*seq\.json span 5e\+298/, /grid-point steps/, /units of λ/]);
  });

  it('λ × 1e-300 is refused: the span changes no frame in double precision', async () => {
    const c = checkInput(1, 1e-300);
    await expectRefused(['check', c.file], c.out, [/span only 5e-302/, /double precision/]);
  });

  it('V × 1e300, V × 1e-300 and one −1e6 sample are refused with the amplitude and the bound of the grid', async () => {
    // k_max = πN/L = π·128/40 ≈ 10.05, so the bound 10·k_max² ≈ 1011 E₀ (check/cost.ts); the deepest sample of
    // the split up to λ = 0.05 is 6.72 E₀ on this grid
    for (const [c, pattern] of [
      [checkInput(1e300), /reaches \|V\| = 6\.72e\+300 E₀, beyond what its grid of 128 points resolves: at most 1010 E₀/],
      [checkInput(1e-300), /at most \|V\| = 6\.72e-300 E₀, below/],
      [checkInput(1, 1, -1e6), /reaches \|V\| = 1000000 E₀/],
    ] as const) await expectRefused(['check', c.file], c.out, [pattern]);
  });

  it('--variational-legendre 100000 is refused with the size of the least squares', async () => {
    const c = checkInput();
    await expectRefused(['check', c.file, '--variational-duration', '1', '--variational-legendre', '100000'], c.out, [/--variational-legendre = 100000/, /hold ≈ [\d.]+ [GM]iB and take ≈ [\d.]+ × 10\S+ operations \(≈ [\d.]+ h/, /100003 columns/, /fewer Legendre terms/]);
  });
});

describe('cost estimates against measured runs', () => {
  it('the flow step estimate is within a factor 4 of the accepted steps (common practice bound)', () => {
    for (const [n, L, depth, lambdaEnd] of [[256, 40, 6, 0.1], [128, 40, 6, 0.3], [512, 60, 2, 0.5]] as const) {
      const g = makeGrid(L, n);
      const u0 = g.x.map((x) => -depth / Math.cosh(x) ** 2);
      // at flow.tolerance 1e-9 in the lab frame, which FLOW_STEP_NUMBER describes
      const run = integrateFlow(g, naturalFlowEquation('quantum'), u0, { tolerance: 1e-9, frames: [0, lambdaEnd] });
      const est = estimateFlowSteps({ points: n, length: L, maxAbsU: depth, lambdaEnd });
      const ratio = est / run.stats.accepted;
      expect(ratio, `N = ${n}: ${est} estimated, ${run.stats.accepted} taken`).toBeGreaterThan(1 / 4);
      expect(ratio).toBeLessThan(4);
    }
  });

  it('a design without dense output keeps only the start and the same frames', () => {
    const g = makeGrid(40, 128);
    const u0 = g.x.map((x) => -6 / Math.cosh(x) ** 2);
    const opts = { tolerance: 1e-8, frames: [0, 0.05, 0.1] };
    const kept = integrateFlow(g, naturalFlowEquation('quantum'), u0, opts);
    const lean = integrateFlow(g, naturalFlowEquation('quantum'), u0, { ...opts, keepDense: false });
    expect(kept.dense.lambdas.length).toBe(kept.stats.accepted + 1);
    expect(lean.dense.lambdas.length).toBe(1);
    expect(lean.frames[2]).toEqual(kept.frames[2]);
  });

  it('estimates read as counts, sizes and durations with units', () => {
    expect(approxCount(4.4e9)).toBe('≈ 4.4 × 10⁹');
    expect(approxCount(41000)).toBe('≈ 41000');
    expect(approxBytes(3.1 * 2 ** 30)).toBe('≈ 3.1 GiB');
    expect(approxDuration(5 * 3600)).toBe('≈ 5 h');
    expect(approxDuration(720)).toBe('≈ 12 min');
  });
});

describe('progress counts work', () => {
  it('the global step ladder expects at least three levels and then doublings up to the expected level', () => {
    expect(expectedLadderSteps(0, 0, 64, 0)).toBe(64 + 128 + 256);
    expect(expectedLadderSteps(64 + 128, 2, 256, 1000)).toBe(64 + 128 + 256 + 512 + 1024);
  });

  it('verify reports fractions that never go back, advance through eigen solves and drives, and reach 1', () => {
    const g = makeGrid(30, 128);
    const pot = (tau: number, out: Float64Array): void => {
      for (let j = 0; j < g.n; j++) out[j] = -2 / Math.cosh(g.x[j] - 4 * tau) ** 2;
    };
    const seen: { f: number; stage: string }[] = [];
    verifySequence({ grid: g, potential: pot, lambdaEnd: 0.2, ramp: 'sin2', duration: 1, states: 3, tol: 1e-7, traceSamples: 4, onProgress: (f, stage) => seen.push({ f, stage }) });
    for (let i = 1; i < seen.length; i++) expect(seen[i].f).toBeGreaterThanOrEqual(seen[i - 1].f);
    expect(seen[seen.length - 1].f).toBe(1);
    const stages = new Set(seen.map((s) => s.stage));
    for (const s of ['eigen', 'cd', 'trace eigenstates', 'bare']) expect(stages.has(s)).toBe(true);
    // the interior trace solves move the bar: it is not parked while they run
    const trace = seen.filter((s) => s.stage === 'trace eigenstates').map((s) => s.f);
    expect(trace[trace.length - 1]).toBeGreaterThan(trace[0]);
    expect(new Set(seen.map((s) => s.f)).size).toBeGreaterThan(10);
  });

  it('the propagator under global step control reports a fraction that never goes back; its accepted level is within a factor 4 of the estimate (common practice bound)', () => {
    const g = makeGrid(30, 128);
    const u = new Float64Array(g.n);
    const pot = (tau: number, out: Float64Array): void => {
      for (let j = 0; j < g.n; j++) out[j] = -2 / Math.cosh(g.x[j] - 4 * tau) ** 2;
    };
    pot(0, u);
    const init = lowestEigenpairs(g, u, 1).vectors.map(complexFromReal);
    const seen: number[] = [];
    const tol = 1e-9;
    const expected = estimateSchrodingerSteps({ points: g.n, length: g.length, maxAbsU: 2, lambdaEnd: 0.2, ramp: 'sin2', duration: 1, tol }, true);
    const res = new Propagator(g).propagate(kdvDrive(g, pot, makeRamp('sin2', 1, 0.2), 1), init, 0, 1, { tol, errorControl: 'global', expectedSteps: expected, onProgress: (f) => seen.push(f) });
    for (let i = 1; i < seen.length; i++) expect(seen[i]).toBeGreaterThanOrEqual(seen[i - 1]);
    expect(seen[seen.length - 1]).toBe(1);
    const ratio = expected / res.stats.steps;
    expect(ratio, `${expected} estimated, ${res.stats.steps} accepted`).toBeGreaterThan(1 / 4);
    expect(ratio).toBeLessThan(4);
  });

  it('the check\'s side-by-side drives report a fraction that never goes back and reaches 1', () => {
    const g = makeGrid(30, 64);
    const frame = (tau: number) => Float64Array.from(g.x, (x) => -2 / Math.cosh(x - 4 * tau) ** 2);
    const seen: number[] = [];
    compareCorrections({
      grid: g, lambda: [0, 0.05, 0.1], frames: [frame(0), frame(0.05), frame(0.1)], states: 2, duration: 0.5, tol: 1e-6,
      drives: [{ label: 'none', schedule: null }, { label: 'none again', schedule: null }],
      onProgress: (f) => seen.push(f),
    });
    for (let i = 1; i < seen.length; i++) expect(seen[i]).toBeGreaterThanOrEqual(seen[i - 1]);
    expect(seen[seen.length - 1]).toBe(1);
    expect(seen.some((f) => f > 0.4 && f < 0.6)).toBe(true); // halfway after the first of two equal drives
  });
});
